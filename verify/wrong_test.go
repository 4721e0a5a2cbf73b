package verify

import (
	"ingot/compile/fixture"
	"math"
	"slices"
	"strings"
	"testing"

	"ingot/compile/estimate"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/quantize"
)

// This file checks that a wrong model fails verify for the right reason,
// naming the context, whatever the file says about itself. The law behind
// every case is that each conditional distribution sums to one
// (Kolmogorov's axioms): S(h) = sum over the vocabulary of P(w|h) = 1.
// Each broken model is written by the project's own writer, so its
// checksums and digest are sound ("re-sealed") and only what the values
// mean can give it away.

// cloneTables copies t deeply enough to change its values and build
// information.
func cloneTables(t *tables.Tables) *tables.Tables {
	c := *t
	c.Levels = slices.Clone(t.Levels)
	for k := range c.Levels {
		lv := &c.Levels[k]
		lv.LogProb = slices.Clone(lv.LogProb)
		lv.LogBackoff = slices.Clone(lv.LogBackoff)
	}
	if t.Info.Quantization != nil {
		q := *t.Info.Quantization
		c.Info.Quantization = &q
	}
	return &c
}

// leftOvers returns, per context of order k, the mass it backs off with:
// 1 - the sum of its stored probabilities (0 for one with no successors).
func leftOvers(t *tables.Tables, k int) []float64 {
	stored := make([]float64, t.Len(k))
	for j := 0; j < t.Len(k+1); j++ {
		stored[t.Find(t.Gram(k+1, j)[:k])] += math.Pow(10, float64(t.Levels[k].LogProb[j]))
	}
	for i, s := range stored {
		if s > 0 {
			stored[i] = 1 - s
		}
	}
	return stored
}

// widestContext returns the context of order k with the largest left-over
// mass, the one a change of its back-off weight moves the most, and that
// mass.
func widestContext(t *tables.Tables, k int) (int, float64) {
	mass := leftOvers(t, k)
	best := 0
	for i, m := range mass {
		if m > mass[best] {
			best = i
		}
	}
	return best, mass[best]
}

// mustFailNaming runs verify and wants the normalisation check, and only
// it, to fail with a problem that names context want.
func mustFailNaming(t *testing.T, data []byte, want string) *Report {
	t.Helper()
	rep := run(t, data, Options{})
	if got := rep.Failed(); !slices.Equal(got, []string{CheckNormalisation}) {
		t.Fatalf("failed %v, want only normalisation:%s", got, problems(rep))
	}
	for _, p := range rep.Check(CheckNormalisation).Problems {
		if strings.Contains(p.Msg, "context \""+want+"\" sums") {
			return rep
		}
	}
	t.Errorf("no problem names context %q:%s", want, problems(rep))
	return rep
}

// A quantized model whose back-off weight is moved by one level of its own
// codebook fails: the level is a legal value, so only the sum shows it. A
// move changes S(h) by (1 - P(h)) (10^(new - old) - 1), P(h) the sum of
// h's stored probabilities; the quantizer widens back-off codebooks until
// every context is within 1e-4, so the test moves the weight whose move
// changes its sum the most.
func TestQuantizedWeightOneLevelOffFails(t *testing.T) {
	tb := fixture.Estimate(t, fixture.Train(t, 2000), 3, estimate.Options{Method: estimate.KneserNey})
	q, _, err := quantize.Model(tb, quantize.Options{Bits: 8, Trainer: quantize.LeastSquares})
	if err != nil {
		t.Fatal(err)
	}
	if rep := run(t, marshal(t, q), Options{}); !rep.OK() {
		t.Fatalf("the quantized model itself fails %v:%s", rep.Failed(), problems(rep))
	}
	bestK, bestI, bestV, bestEffect := 0, 0, float32(0), 0.0
	for k := 1; k < q.Order(); k++ {
		lv := &q.Levels[k-1]
		cb := lv.BackoffCodebook
		mass := leftOvers(q, k)
		for i, old := range lv.LogBackoff {
			j, _ := slices.BinarySearch(cb, old)
			for _, nj := range []int{j - 1, j + 1} {
				if nj < 0 || nj >= len(cb) {
					continue
				}
				if e := mass[i] * math.Abs(math.Pow(10, float64(cb[nj]-old))-1); e > bestEffect {
					bestK, bestI, bestV, bestEffect = k, i, cb[nj], e
				}
			}
		}
	}
	if bestEffect < 2*QuantizedTolerance {
		t.Fatalf("no one-level move changes a sum by more than %g", bestEffect)
	}
	bad := cloneTables(q)
	bad.Levels[bestK-1].LogBackoff[bestI] = bestV
	mustFailNaming(t, marshal(t, bad), bad.Words(bad.Gram(bestK, bestI)))
}

// A float model with one back-off weight moved by 1% fails, naming the
// context; so does one with a stored probability moved by 1%.
func TestFloatWeightOnePercentOffFails(t *testing.T) {
	tb := fixture.Estimate(t, fixture.Train(t, 2000), 3, estimate.Options{Method: estimate.Katz})
	bad := cloneTables(tb)
	i, _ := widestContext(bad, 2)
	bad.Levels[1].LogBackoff[i] += float32(math.Log10(1.01))
	mustFailNaming(t, marshal(t, bad), bad.Words(bad.Gram(2, i)))

	// The largest stored probability of order 3 below one half (so that
	// it stays below one): its context is named.
	bad = cloneTables(tb)
	lv := &bad.Levels[2]
	j, half := 0, float32(math.Log10(0.5))
	for x, p := range lv.LogProb {
		if p < half && p > lv.LogProb[j] {
			j = x
		}
	}
	lv.LogProb[j] += float32(math.Log10(1.01))
	mustFailNaming(t, marshal(t, bad), bad.Words(bad.Gram(3, j)[:2]))
}

// A float model cannot buy a looser check by claiming in its build
// information to be quantized with large residuals: a context 8% off still
// fails at the float tolerance.
func TestBuildInfoClaimsChangeNothing(t *testing.T) {
	tb := fixture.Estimate(t, fixture.Train(t, 2000), 3, estimate.Options{Method: estimate.WittenBell})
	bad := cloneTables(tb)
	i, mass := widestContext(bad, 2)
	if mass < 0.2 {
		t.Fatalf("widest context leaves %g", mass)
	}
	// Scale the weight so that the sum moves by 8%.
	bad.Levels[1].LogBackoff[i] += float32(math.Log10(1 + 0.08/mass))
	bad.Info.Quantization = &tables.Quantization{Trainer: "least-squares", Bits: 8, BackoffBits: 8,
		ProbMaxError: []float64{0, 0.05, 0.05}, BackoffMaxError: []float64{0.05, 0.05, 0},
		Residual: []float64{0.05, 0.05, 0.05}}
	data := marshal(t, bad)
	m, err := format.FromBytes(data)
	if err != nil {
		t.Fatal(err)
	}
	if got := DefaultTolerance(m); got != UnquantizedTolerance {
		t.Errorf("a float model claiming quantization gets tolerance %g, want %g", got, UnquantizedTolerance)
	}
	rep := mustFailNaming(t, data, bad.Words(bad.Gram(2, i)))
	if d := rep.Normalisation.MaxDeviation; math.Abs(d-0.08) > 1e-3 {
		t.Errorf("largest |S-1| %g, want 0.08", d)
	}

	// A quantized model gets QuantizedTolerance whatever it records: none,
	// tiny or huge residuals.
	q, _, err := quantize.Model(tb, quantize.Options{Bits: 4, Trainer: quantize.LeastSquares})
	if err != nil {
		t.Fatal(err)
	}
	for _, claim := range []*tables.Quantization{nil, {Residual: []float64{1e-12, 1e-12, 0}}, {Residual: []float64{1e3, 1e3, 0}}} {
		c := cloneTables(q)
		c.Info.Quantization = claim
		m, err := format.FromBytes(marshal(t, c))
		if err != nil {
			t.Fatal(err)
		}
		if got := DefaultTolerance(m); got != QuantizedTolerance {
			t.Errorf("claim %+v: tolerance %g, want %g", claim, got, QuantizedTolerance)
		}
	}
}
