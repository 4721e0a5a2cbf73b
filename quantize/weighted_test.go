package quantize

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// With unit weights, weighted training is plain training.
func TestTrainWeightedUnitWeightsEqualsTrain(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	for trial := 0; trial < 20; trial++ {
		n := 50 + r.IntN(500)
		v := make([]float64, n)
		w := make([]float64, n)
		for i := range v {
			v[i] = math.Round(r.NormFloat64()*100) / 10
			w[i] = 1
		}
		k := 2 + r.IntN(12)
		a, err1 := Train(v, k, LeastSquares)
		b, err2 := TrainWeighted(v, w, k, LeastSquares)
		if err1 != nil || err2 != nil {
			t.Fatal(err1, err2)
		}
		if !slices.Equal(a.Values, b.Values) {
			t.Fatalf("k=%d: %v vs %v", k, a.Values, b.Values)
		}
	}
}

// Weighted k-means is exact: on small inputs the weighted squared error of
// the optimal codebook equals the best over every partition into contiguous
// groups (each group's level its weighted mean), found by brute force.
func TestTrainWeightedIsOptimal(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 6))
	for trial := 0; trial < 300; trial++ {
		n := 3 + r.IntN(9)
		v := make([]float64, n)
		w := make([]float64, n)
		for i := range v {
			v[i] = float64(i) + r.Float64()*0.9 // distinct and sorted
			w[i] = r.ExpFloat64()
		}
		k := 2 + r.IntN(min(3, n-2))
		cb, err := TrainWeighted(v, w, k, LeastSquares)
		if err != nil {
			t.Fatal(err)
		}
		got := weightedError(v, w, cb)
		want := bruteWeighted(v, w, k)
		if got > want*(1+1e-6)+1e-9 {
			t.Fatalf("n=%d k=%d: weighted error %v, brute force %v", n, k, got, want)
		}
	}
}

func weightedError(v, w []float64, cb Codebook) float64 {
	var e float64
	for i, x := range v {
		d := float64(cb.Values[cb.Index(float32(x))]) - x
		e += w[i] * d * d
	}
	return e
}

func bruteWeighted(v, w []float64, k int) float64 {
	n := len(v)
	best := math.Inf(1)
	var rec func(start, groups int, acc float64)
	rec = func(start, groups int, acc float64) {
		if groups == 1 {
			best = min(best, acc+groupCost(v[start:], w[start:]))
			return
		}
		for end := start + 1; end <= n-groups+1; end++ {
			rec(end, groups-1, acc+groupCost(v[start:end], w[start:end]))
		}
	}
	rec(0, k, 0)
	return best
}

func groupCost(v, w []float64) float64 {
	var sw, sv float64
	for i := range v {
		sw += w[i]
		sv += w[i] * v[i]
	}
	m := sv / sw
	var c float64
	for i := range v {
		c += w[i] * (v[i] - m) * (v[i] - m)
	}
	return c
}
