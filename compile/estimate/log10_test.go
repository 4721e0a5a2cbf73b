package estimate

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestLog10F32 checks log10f32 against float32(math.Log10(x)), bit for
// bit: on random doubles of every exponent, on values near 1 from both
// sides (where log10 cancels), on the table's points and their
// neighbours, on powers of ten (log10 exact), and on the special values.
func TestLog10F32(t *testing.T) {
	check := func(x float64) {
		t.Helper()
		if got, want := log10f32(x), float32(math.Log10(x)); math.Float32bits(got) != math.Float32bits(want) {
			t.Fatalf("log10f32(%v [%#x]) = %v, math.Log10 gives %v", x, math.Float64bits(x), got, want)
		}
	}
	for _, x := range []float64{0, math.Copysign(0, -1), -1, 1, 2, 10, 0.5, 0.1, math.Inf(1), math.Inf(-1), math.NaN(),
		math.SmallestNonzeroFloat64, 0x1p-1022, math.MaxFloat64, math.Nextafter(1, 0), math.Nextafter(1, 2)} {
		check(x)
	}
	for e := -300; e <= 300; e++ {
		check(math.Pow(10, float64(e)))
	}
	for i := range 1 << log10TableBits {
		c := 1 + float64(i)/(1<<log10TableBits)
		for _, x := range []float64{c, math.Nextafter(c, 0), math.Nextafter(c, 3)} {
			check(x)
			check(x / 2)
			check(x * 0x1p-40)
		}
	}
	rng := rand.New(rand.NewPCG(1, 2))
	n := 2_000_000
	if testing.Short() {
		n = 200_000
	}
	for range n {
		// Probabilities and back-off weights: (0, 1] mostly, some above.
		check(rng.Float64())
		check(math.Float64frombits(rng.Uint64() &^ (1 << 63)))
		d := math.Ldexp(rng.Float64(), -rng.IntN(40))
		check(1 - d)
		check(1 + d)
	}
}

func BenchmarkLog10F32(b *testing.B) {
	xs := make([]float64, 1<<12)
	rng := rand.New(rand.NewPCG(1, 2))
	for i := range xs {
		xs[i] = rng.Float64()
	}
	var sink float32
	b.Run("math", func(b *testing.B) {
		for i := range b.N {
			sink += float32(math.Log10(xs[i&(len(xs)-1)]))
		}
	})
	b.Run("table", func(b *testing.B) {
		for i := range b.N {
			sink += log10f32(xs[i&(len(xs)-1)])
		}
	})
	_ = sink
}
