package prune

import (
	"ingot/compile/fixture"
	"math"
	"slices"
	"strings"
	"testing"

	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/tables"
)

func model(t testing.TB, order int, sentences []string, method estimate.Method) (*tables.Tables, *counts.Counts) {
	t.Helper()
	cnt := fixture.Counts(t, order, sentences)
	m, _, err := estimate.Estimate(cnt, estimate.Options{Method: method, Order: order})
	if err != nil {
		t.Fatal(err)
	}
	return m, cnt
}

func checkSums(t *testing.T, m *tables.Tables, tol float64) int {
	t.Helper()
	n := 0
	m.Sums(func(s tables.ContextSum) {
		n++
		if d := math.Abs(s.Sum - 1); !(d <= tol) {
			t.Errorf("context %q sums to %.9f", m.Words(s.Context), s.Sum)
		}
	})
	return n
}

// Stolcke (1998): D(h,w) is P(h) times the relative entropy between the
// distributions P(.|h) before and after removing (h, w) alone, with bow(h)
// renormalised. Checked against that relative entropy computed by brute
// force over the whole vocabulary (the new weight found by summing the
// backed-off mass word by word), for n-grams of the highest order, whose
// contexts no longer context backs off to, so only P(.|h) changes.
func TestEntropyScoreEqualsBruteForceRelativeEntropy(t *testing.T) {
	for _, method := range estimate.Methods {
		m, _ := model(t, 3, fixture.Train(t, 300), method)
		scores := EntropyScores(m)
		start, _ := m.ID(tables.SentenceStart)
		end, _ := m.ID(tables.SentenceEnd)
		checked, worst := 0, 0.0
		for i := 0; i < m.Len(3) && checked < 40; i += 97 {
			g := append([]uint32{}, m.Gram(3, i)...)
			h, w := g[:2], g[2]
			first := h[0]
			if first == start {
				first = end // the pinned rule for P(h) of a sentence start
			}
			ph := math.Pow(10, m.LogProb([]uint32{first})) * math.Pow(10, m.LogProb(h))
			V := len(m.Vocab)
			p, pl := make([]float64, V), make([]float64, V)
			stored := make([]bool, V)
			for v := 0; v < V; v++ {
				if uint32(v) == start {
					continue
				}
				p[v] = math.Pow(10, m.LogProb([]uint32{h[0], h[1], uint32(v)}))
				pl[v] = math.Pow(10, m.LogProb([]uint32{h[1], uint32(v)}))
				stored[v] = m.Find([]uint32{h[0], h[1], uint32(v)}) >= 0 && uint32(v) != w
			}
			var keptMass, backedOff float64
			for v := 0; v < V; v++ {
				if stored[v] {
					keptMass += p[v]
				} else {
					backedOff += pl[v]
				}
			}
			bowNew := (1 - keptMass) / backedOff
			var kl float64
			for v := 0; v < V; v++ {
				if p[v] == 0 {
					continue
				}
				q := p[v]
				if !stored[v] {
					q = bowNew * pl[v]
				}
				kl += p[v] * math.Log(p[v]/q)
			}
			want := ph * kl
			// Float tolerance: stored values are float32, so each distribution
			// sums to one only within about 1e-7; D weighs that by P(h).
			if got := scores[2][i]; math.Abs(got-want) > 1e-6*math.Abs(want)+1e-6*ph {
				t.Errorf("%s: D(%q) = %.10g, brute force %.10g (P(h) = %.3g)", method, m.Words(g), got, want, ph)
			}
			worst = max(worst, math.Abs(scores[2][i]-want)/ph)
			checked++
		}
		t.Logf("%s: largest |D - brute force| / P(h) = %.3g", method, worst)
		if checked < 10 {
			t.Errorf("%s: only %d n-grams checked", method, checked)
		}
	}
}

// Law of probability: after entropy pruning and after count cutoffs, every
// context of models of the State of the Union text still sums to one.
func TestPrunedModelsNormalise(t *testing.T) {
	train := fixture.Train(t, 3000)
	for _, method := range estimate.Methods {
		m, cnt := model(t, 4, train, method)
		s := EntropyScores(m)
		keep := Keep(m, s, 1e-7)
		kept := Kept(keep)
		if kept[3] >= m.Len(4) || kept[3] == 0 {
			t.Errorf("%s: threshold kept %d of %d 4-grams", method, kept[3], m.Len(4))
		}
		p := Apply(m, keep)
		if err := p.Check(); err != nil {
			t.Fatal(err)
		}
		checkSums(t, p, 1e-5)

		cnts := make([][]uint64, 4)
		for k := 1; k <= 4; k++ {
			cnts[k-1] = cnt.Levels[k-1].Counts
		}
		keep, err := Cutoffs(m, cnts, map[int]uint64{3: 2, 4: 3})
		if err != nil {
			t.Fatal(err)
		}
		c := Apply(m, keep)
		if err := c.Check(); err != nil {
			t.Fatal(err)
		}
		checkSums(t, c, 1e-5)
		// Every kept 4-gram has count >= 3; every removed 3-gram had count < 2.
		for i, ok := range keep[3] {
			if ok && cnts[3][i] < 3 {
				t.Fatalf("%s: 4-gram with count %d kept", method, cnts[3][i])
			}
		}
		for i, ok := range keep[2] {
			if !ok && cnts[2][i] >= 2 {
				t.Fatalf("%s: 3-gram with count %d removed", method, cnts[2][i])
			}
		}
	}
}

func TestCutoffOfUnigramsRefused(t *testing.T) {
	m, cnt := model(t, 2, []string{"a b", "b a"}, estimate.WittenBell)
	_, err := Cutoffs(m, [][]uint64{cnt.Levels[0].Counts, cnt.Levels[1].Counts}, map[int]uint64{1: 2})
	if err == nil {
		t.Error("a unigram cutoff was accepted")
	}
}

// A Search answers every budget with the least pruning that fits, exactly
// as the definition says (the smallest candidate threshold whose model
// fits; the one just below it does not), whichever budgets it answered
// before: checked against Least's bisection on the same sizes, with the
// budgets asked in increasing, decreasing and mixed order on one Search.
func TestSearchFindsTheLeastPruningWhateverItMeasuredBefore(t *testing.T) {
	m, _ := model(t, 3, fixture.Train(t, 400), estimate.Katz)
	s := EntropyScores(m)
	size := func(_ float64, kp [][]bool) (int64, error) {
		var n int64
		for k, c := range Kept(kp) {
			n += int64((k + 1) * c) // a size that grows with the order, like a file's
		}
		return n, nil
	}
	full, _ := size(0, Keep(m, s, math.Inf(-1)))
	smallest, _ := size(0, Keep(m, s, math.Inf(1)))
	var budgets []int64
	for i := int64(1); i < 40; i++ {
		budgets = append(budgets, smallest+(full-smallest)*i*i/1600)
	}
	want := map[int64]float64{}
	for _, b := range budgets {
		th, _, err := Least(m, s, func(th float64, kp [][]bool) (bool, error) {
			n, _ := size(th, kp)
			return n <= b, nil
		})
		if err != nil {
			t.Fatal(err)
		}
		want[b] = th
	}
	orders := [][]int64{budgets, reversed(budgets), mixed(budgets)}
	for o, bs := range orders {
		x := NewSearch(m, s, size)
		for _, b := range bs {
			th, kp, n, err := x.Fit(b)
			if err != nil {
				t.Fatal(err)
			}
			if got, _ := size(th, kp); th != want[b] || n != got || n > b {
				t.Fatalf("order %d, budget %d: threshold %v (size %d, reported %d), least is %v", o, b, th, got, n, want[b])
			}
		}
		t.Logf("asked order %d: %d budgets, %d sizes measured", o, len(bs), x.Measured)
	}
	if _, _, _, err := NewSearch(m, s, size).Fit(smallest - 1); err == nil || !strings.Contains(err.Error(), "smallest model") {
		t.Errorf("budget below the smallest model: got %v", err)
	}
}

func reversed(xs []int64) []int64 {
	out := slices.Clone(xs)
	slices.Reverse(out)
	return out
}

func mixed(xs []int64) []int64 {
	var out []int64
	for i := range xs {
		out = append(out, xs[(i*17)%len(xs)])
	}
	return out
}
