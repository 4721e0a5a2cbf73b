package quantize

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
)

// newRand returns a generator with a fixed seed, so that every test and
// benchmark sees the same data on every run.
func newRand(seed uint64) *rand.Rand {
	return rand.New(rand.NewPCG(seed, 0x1d60))
}

// normalSample draws n standard normal values.
func normalSample(n int, seed uint64) []float64 {
	r := newRand(seed)
	out := make([]float64, n)
	for i := range out {
		out[i] = r.NormFloat64()
	}
	return out
}

// uniformSample draws n values uniform on [0, 1).
func uniformSample(n int, seed uint64) []float64 {
	r := newRand(seed)
	out := make([]float64, n)
	for i := range out {
		out[i] = r.Float64()
	}
	return out
}

// logProbLikeSample draws n values shaped like the log10 probabilities of a
// language model: log10(u^3) for u uniform on (0, 1], which is 0 at most and
// has a long tail towards large negative values. Invented data.
func logProbLikeSample(n int, seed uint64) []float64 {
	r := newRand(seed)
	out := make([]float64, n)
	for i := range out {
		out[i] = 3 * math.Log10(1-r.Float64())
	}
	return out
}

// squaredError returns the total squared error of values about their mean.
func squaredError(values []float64) float64 {
	if len(values) == 0 {
		return 0
	}
	m := mean(values)
	sum := 0.0
	for _, v := range values {
		sum += (v - m) * (v - m)
	}
	return sum
}

// sortedCopy returns the values sorted ascending, leaving them as they are.
func sortedCopy(values []float64) []float64 {
	out := slices.Clone(values)
	slices.Sort(out)
	return out
}

// levelsName names a sub-benchmark or subtest by its number of levels.
func levelsName(levels int) string { return fmt.Sprintf("levels=%d", levels) }

// nan returns a NaN.
func nan() float64 { return math.NaN() }
