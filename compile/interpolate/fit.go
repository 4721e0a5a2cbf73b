package interpolate

import (
	"fmt"
	"math"
)

// Heldout holds every model's probability of every prediction of held-out
// text, scored as the estimation notes score text: a sentence t1 .. tm is
// the predictions of t1 .. tm and </s>, each from the tokens before it
// starting from <s>; a token outside U (or <s>) is scored as <unk>.
type Heldout struct {
	// Prob[i][t] is P_i of prediction t (not a logarithm).
	Prob [][]float64
	// Unknown[t] tells whether prediction t is of <unk>.
	Unknown []bool
}

// Predictions returns the number of predictions.
func (h *Heldout) Predictions() int { return len(h.Unknown) }

// Score computes every model's probability of every prediction of the
// sentences, each given as its tokens (without markers).
func (m *Mixture) Score(sentences [][]string) *Heldout {
	h := &Heldout{Prob: make([][]float64, len(m.models))}
	out := make([]float64, len(m.models))
	end, _ := m.id("</s>")
	var g []uint32
	for _, toks := range sentences {
		g = append(g[:0], m.uStart)
		if len(toks) == 0 {
			continue
		}
		for j := 0; j <= len(toks); j++ {
			w := end
			if j < len(toks) {
				w = m.TokenID(toks[j])
			}
			g = append(g, w)
			ctx := g
			if len(ctx) > m.order {
				ctx = ctx[len(ctx)-m.order:]
			}
			m.LogProbs(ctx, nil, out)
			for i, lp := range out {
				h.Prob[i] = append(h.Prob[i], math.Pow(10, lp))
			}
			h.Unknown = append(h.Unknown, w == m.uUnk)
		}
	}
	return h
}

// LogLikelihood returns sum_t log10 sum_i w_i P_i(t).
func (h *Heldout) LogLikelihood(weights []float64) float64 {
	var sum float64
	for t := range h.Unknown {
		var p float64
		for i, w := range weights {
			p += w * h.Prob[i][t]
		}
		sum += math.Log10(p)
	}
	return sum
}

// Perplexity returns the exact mixture's perplexity over all predictions,
// 10^(-LogLikelihood / predictions). One model's own perplexity is that of
// the weights (0, .., 1, .., 0).
func (h *Heldout) Perplexity(weights []float64) float64 {
	return math.Pow(10, -h.LogLikelihood(weights)/float64(h.Predictions()))
}

// Unit returns the weights that select model i alone out of n.
func Unit(n, i int) []float64 {
	w := make([]float64, n)
	w[i] = 1
	return w
}

// EM stopping rule of the estimation notes.
const (
	FitTolerance     = 1e-6 // stop when no weight moves by more than this
	FitMaxIterations = 1000
)

// Fit returns the weights that maximise the held-out likelihood of the exact
// mixture, sum_t log sum_i w_i P_i(t), by expectation-maximisation (Dempster,
// Laird & Rubin 1977; for interpolation weights, Jelinek & Mercer 1980):
// starting from equal weights, each step sets
//
//	w_i <- (1/T) sum_t w_i P_i(t) / sum_j w_j P_j(t)
//
// until no weight moves by more than FitTolerance or after
// FitMaxIterations steps. It also returns the number of steps taken.
func (h *Heldout) Fit() ([]float64, int, error) {
	n := len(h.Prob)
	T := h.Predictions()
	if T == 0 {
		return nil, 0, fmt.Errorf("no predictions to fit the weights on")
	}
	w := make([]float64, n)
	for i := range w {
		w[i] = 1 / float64(n)
	}
	next := make([]float64, n)
	for it := 1; it <= FitMaxIterations; it++ {
		clear(next)
		for t := 0; t < T; t++ {
			var p float64
			for i := range w {
				p += w[i] * h.Prob[i][t]
			}
			for i := range w {
				next[i] += w[i] * h.Prob[i][t] / p
			}
		}
		moved := 0.0
		for i := range w {
			next[i] /= float64(T)
			moved = max(moved, math.Abs(next[i]-w[i]))
		}
		copy(w, next)
		if moved <= FitTolerance {
			return w, it, nil
		}
	}
	return w, FitMaxIterations, nil
}
