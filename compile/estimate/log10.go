package estimate

import "math"

// log10f32 returns float32(math.Log10(x)), the same bits, faster: the
// model stores each probability and back-off weight as a float32 log10,
// and writing a model on disk computed one math.Log10 per value (about a
// fifth of the writer's time, measured 2026-12-03). It evaluates log10(x)
// in float64 from a table (x = 2^e * m, m = c_i * (1+r) with c_i the
// table's point below m, log1p(r) by its Taylor series), with an error
// far below float32's resolution; where the float32 nearest that value is
// not certain (the exact log10 and math.Log10's could round to two
// float32s), and for 1, zero, negative, subnormal, infinite and NaN x, it
// calls math.Log10. So the result never differs from
// float32(math.Log10(x)) (TestLog10F32).
func log10f32(x float64) float32 {
	if x == 1 {
		return 0 // every context without successors
	}
	b := math.Float64bits(x)
	exp := int(b>>52) & 0x7ff
	if exp == 0 || exp == 0x7ff || b>>63 != 0 {
		return float32(math.Log10(x))
	}
	i := (b >> (52 - log10TableBits)) & (1<<log10TableBits - 1)
	// m in [1, 2), and m * inv[i] - 1 in [0, 2^-log10TableBits), about.
	m := math.Float64frombits(b&(1<<52-1) | 1023<<52)
	r := m*log10Inv[i] - 1
	// ln(1+r) for 0 <= r < 2^-10: the terms up to r^5 leave an error
	// below r^6/6 < 2e-19.
	r2 := r * r
	p := r - r2*(1.0/2) + r2*r*(1.0/3-r*(1.0/4)+r2*(1.0/5))
	y := float64(exp-1023)*log10Of2 + (log10Log[i] + p*math.Log10E)
	// y is within a few units in the last place of the largest term
	// (the exponent's, or the table's, about 0.3) of log10(x), as is
	// math.Log10(x) of log10(x) (math.Log and one product): eps bounds
	// both with a factor of 10 and more to spare.
	eps := 1e-14 + math.Abs(y)*1e-14
	lo, hi := float32(y-eps), float32(y+eps)
	if lo != hi {
		return float32(math.Log10(x))
	}
	return lo
}

const log10Of2 = math.Ln2 / math.Ln10

// log10TableBits is the number of mantissa bits that index the tables.
const log10TableBits = 10

var (
	// log10Inv[i] is 1/c_i, c_i = 1 + i/1024, rounded to float64.
	log10Inv [1 << log10TableBits]float64
	// log10Log[i] is -log10(log10Inv[i]), the log10 of the point the
	// rounded inverse stands for, so that log10(m) = log10Log[i] +
	// log10(m * log10Inv[i]) whatever the rounding of the inverse.
	log10Log [1 << log10TableBits]float64
)

func init() {
	for i := range log10Inv {
		c := 1 + float64(i)/(1<<log10TableBits)
		log10Inv[i] = 1 / c
		log10Log[i] = -math.Log10(log10Inv[i])
	}
}
