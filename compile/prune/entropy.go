package prune

import (
	"fmt"
	"math"
	"slices"

	"ingot/compile/tables"
)

// Scores holds, for every stored n-gram of order >= 2, the weighted relative
// entropy its removal alone would cause (Stolcke 1998, in nats), computed on
// the unpruned model. Scores[k-1][i] belongs to entry i of order k;
// Scores[0] is nil (unigrams are never pruned).
type Scores [][]float64

// EntropyScores computes Stolcke's D for every stored n-gram (h, w) of order
// >= 2:
//
//	bow'(h) = (1 - sum_A P(v|h) + P(w|h)) / (1 - sum_A P(v|h') + P(w|h'))
//	D(h,w)  = -P(h) { P(w|h) [ln P(w|h') + ln bow'(h) - ln P(w|h)]
//	                  + [ln bow'(h) - ln bow(h)] (1 - sum_A P(v|h)) }
//
// with A = A(h) the stored successors of h, P(h) the product of the model's
// conditional probabilities of the words of h, and, for a history starting
// with <s>, P(</s>) as its first factor (sentence starts are exactly as
// frequent as sentence ends).
func EntropyScores(t *tables.Tables) Scores {
	N := t.Order()
	// ctxProb[k-1][i] = P(h) for the order-k entry i used as a history.
	ctxProb := t.JointProbs()
	scores := make(Scores, N)
	g := make([]uint32, N)
	for k := 2; k <= N; k++ {
		lv := &t.Levels[k-1]
		n := t.Len(k)
		scores[k-1] = make([]float64, n)
		for i := 0; i < n; {
			h := t.Gram(k, i)[:k-1]
			hi := t.Find(h)
			// The successors of h are the run of entries sharing the prefix h.
			j := i
			for j < n && tables.Compare(lv.Words[k*j:k*j+k-1], h) == 0 {
				j++
			}
			pw := make([]float64, j-i)  // P(w|h), stored
			plw := make([]float64, j-i) // P(w|h'), full back-off
			var sumP, sumL float64
			for x := i; x < j; x++ {
				pw[x-i] = math.Pow(10, float64(lv.LogProb[x]))
				copy(g, t.Gram(k, x)[1:])
				plw[x-i] = math.Pow(10, t.LogProb(g[:k-1]))
				sumP += pw[x-i]
				sumL += plw[x-i]
			}
			ph := ctxProb[k-2][hi]
			bow := math.Pow(10, float64(t.Levels[k-2].LogBackoff[hi]))
			for x := i; x < j; x++ {
				p, pl := pw[x-i], plw[x-i]
				bowNew := (1 - sumP + p) / (1 - sumL + pl)
				// Explicit conversions keep each product rounded on its own,
				// so no machine fuses a multiply and an add differently.
				d := -ph * (float64(p*(math.Log(pl)+math.Log(bowNew)-math.Log(p))) +
					float64((math.Log(bowNew)-math.Log(bow))*(1-sumP)))
				scores[k-1][x] = d
			}
			i = j
		}
	}
	return scores
}

// Keep decides which n-grams survive threshold: from the highest order
// down, an n-gram is removed when its score is below threshold and it is
// not the context of a surviving longer n-gram. keep[k-1][i] reports entry i
// of order k; unigrams always stay.
func Keep(t *tables.Tables, s Scores, threshold float64) [][]bool {
	N := t.Order()
	keep := make([][]bool, N)
	keep[0] = make([]bool, t.Len(1))
	for i := range keep[0] {
		keep[0][i] = true
	}
	var needed []bool // order k entries that are contexts of kept (k+1)-grams
	for k := N; k >= 2; k-- {
		n := t.Len(k)
		kk := make([]bool, n)
		for i := 0; i < n; i++ {
			kk[i] = s[k-1][i] >= threshold || (needed != nil && needed[i])
		}
		keep[k-1] = kk
		// Mark the contexts (order k-1) of the kept k-grams.
		needed = make([]bool, t.Len(k-1))
		for i := 0; i < n; i++ {
			if kk[i] {
				if p := t.Find(t.Gram(k, i)[:k-1]); p >= 0 {
					needed[p] = true
				}
			}
		}
	}
	return keep
}

// Apply returns a copy of t holding only the kept n-grams, with every
// back-off weight recomputed.
func Apply(t *tables.Tables, keep [][]bool) *tables.Tables {
	out := Select(t, keep)
	Renormalize(out)
	return out
}

// Select returns a copy of t holding only the kept n-grams; back-off
// weights are copied, not recomputed.
func Select(t *tables.Tables, keep [][]bool) *tables.Tables {
	out := &tables.Tables{Vocab: t.Vocab, Info: t.Info, Levels: make([]tables.Level, t.Order())}
	for k := 1; k <= t.Order(); k++ {
		src := &t.Levels[k-1]
		// Columns are never nil, even when nothing of an order is kept: a
		// column present but empty is what an order without entries has.
		n := 0
		for _, ok := range keep[k-1] {
			if ok {
				n++
			}
		}
		dst := tables.Level{Words: make([]uint32, 0, k*n), LogProb: make([]float32, 0, n)}
		if src.LogBackoff != nil {
			dst.LogBackoff = make([]float32, 0, n)
		}
		for i, ok := range keep[k-1] {
			if !ok {
				continue
			}
			dst.Words = append(dst.Words, src.Words[k*i:k*i+k]...)
			dst.LogProb = append(dst.LogProb, src.LogProb[i])
			if src.LogBackoff != nil {
				dst.LogBackoff = append(dst.LogBackoff, src.LogBackoff[i])
			}
		}
		if k == 1 {
			dst.Words = slices.Clone(src.Words)
			dst.LogProb = slices.Clone(src.LogProb)
			dst.LogBackoff = slices.Clone(src.LogBackoff)
		}
		out.Levels[k-1] = dst
	}
	return out
}

// Kept counts the kept entries per order.
func Kept(keep [][]bool) []int {
	n := make([]int, len(keep))
	for k, kk := range keep {
		for _, ok := range kk {
			if ok {
				n[k]++
			}
		}
	}
	return n
}

// Cutoffs marks for removal the n-grams of order K whose raw count is below
// minCount[K] — never a context of a kept longer n-gram. counts[k-1][i] is
// the raw count of entry i of order k (the compiler's counts, in the same
// order as the tables). Order 1 may not be cut (replace rare words by <unk>
// when counting instead).
func Cutoffs(t *tables.Tables, counts [][]uint64, minCount map[int]uint64) ([][]bool, error) {
	s := make(Scores, t.Order())
	for k, m := range minCount {
		if k < 2 || k > t.Order() {
			return nil, fmt.Errorf("count cutoff for order %d: orders 2..%d may be cut", k, t.Order())
		}
		_ = m
	}
	for k := 2; k <= t.Order(); k++ {
		s[k-1] = make([]float64, t.Len(k))
		for i, c := range counts[k-1] {
			if m, ok := minCount[k]; ok && c < m {
				s[k-1][i] = -1
			} else {
				s[k-1][i] = 1
			}
		}
	}
	return Keep(t, s, 0), nil
}
