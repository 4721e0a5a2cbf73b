// Package prune shrinks a back-off model: count cutoffs at compile time and
// relative-entropy pruning after A. Stolcke (1998), "Entropy-based pruning
// of backoff language models", Proc. DARPA Broadcast News Transcription and
// Understanding Workshop. After any removal every back-off weight is
// recomputed, lowest order first, so that every context normalises again.
package prune

import (
	"math"

	"ingot/compile/tables"
)

// fullCoverage: a context whose successors take all the lower-order mass
// keeps weight 1 (the same rule as the estimators').
const fullCoverage = 1e-12

// Renormalize recomputes every back-off weight of t, lowest order first:
//
//	bow(h) = (1 - sum_{w in A(h)} P(w|h)) / (1 - sum_{w in A(h)} P(w|h'))
//
// where P(w|h) is the stored probability and P(w|h') the full back-off
// probability of the (already recomputed) lower orders. A context without
// successors, or whose successors take all the lower-order mass, gets 1.
func Renormalize(t *tables.Tables) {
	renormalize(t, nil)
}

// renormalize is Renormalize; it passes each weight, before float32
// storage, to record when record is not nil (tests compare it with a
// reference).
func renormalize(t *tables.Tables, record func(k, i int, bow float64)) {
	N := t.Order()
	g := make([]uint32, N)
	for k := 1; k < N; k++ {
		ctx := &t.Levels[k-1]
		above := &t.Levels[k]
		j := 0
		for i := 0; i < t.Len(k); i++ {
			h := t.Gram(k, i)
			var stored, lower float64
			n := 0
			for j < t.Len(k+1) && tables.Compare(above.Words[(k+1)*j:(k+1)*j+k], h) == 0 {
				stored += math.Pow(10, float64(above.LogProb[j]))
				copy(g, h[1:])
				g[k-1] = above.Words[(k+1)*j+k]
				lower += math.Pow(10, t.LogProb(g[:k]))
				j++
				n++
			}
			bow := 1.0
			if n > 0 && lower < 1-fullCoverage {
				bow = (1 - stored) / (1 - lower)
			}
			if record != nil {
				record(k, i, bow)
			}
			ctx.LogBackoff[i] = float32(math.Log10(bow))
		}
	}
}

// Advice returns a warning for pruning a finished model of the given
// method by relative entropy, or "" when that suits it. Kneser-Ney's lower
// orders hold continuation counts that fit only the n-grams its higher
// orders lacked when it was estimated; pruning removes more, and the
// criterion itself is computed with those lower orders, so the pruned model
// falls behind the other methods (C. Chelba, T. Brants, W. Neveitt and
// P. Xu (2010), "Study on interaction between entropy pruning and
// Kneser-Ney smoothing", Interspeech). Pruning from the counts (package
// budget, ingot compile --max-size) avoids both.
func Advice(method string) string {
	if method != "kneser-ney" {
		return ""
	}
	return "relative-entropy pruning of a finished kneser-ney model keeps lower orders estimated for the unpruned model, " +
		"so it loses to the other methods once much is removed; " +
		"to prune from the counts instead, which ranks n-grams on a katz model and estimates kneser-ney again on the survivors: " +
		"ingot compile --method kneser-ney --max-size SIZE"
}
