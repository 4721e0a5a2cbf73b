package tables

import "math"

// ContextSum is the total probability one context gives the predictable
// vocabulary.
type ContextSum struct {
	Context []uint32 // nil for the empty context
	Sum     float64
}

// Sums calls fn with S(h) = sum over the predictable vocabulary of P(w|h) for
// the empty context and every stored n-gram h of orders 1..N-1, lowest order
// first. It costs time linear in the number of stored n-grams (times a binary
// search), using
//
//	S(h) = sum_{w in A(h)} P(w|h) + bow(h) (S(h') - sum_{w in A(h)} P(w|h'))
//
// with S(h') itself computed the same way, so it assumes neither that the
// weights are right nor that lower orders sum to one. The Context slice
// passed to fn is reused.
func (t *Tables) Sums(fn func(ContextSum)) {
	start, _ := t.ID(SentenceStart)
	var empty float64
	for w, lp := range t.Levels[0].LogProb {
		if uint32(w) != start {
			empty += math.Pow(10, float64(lp))
		}
	}
	fn(ContextSum{Sum: empty})
	N := len(t.Levels)
	sums := make([][]float64, N) // sums[k-1][i]: S of entry i at order k
	for k := 1; k < N; k++ {
		n := t.Len(k)
		sums[k-1] = make([]float64, n)
		// Successors of each order-k context, gathered from order k+1.
		above := t.Levels[k]
		j := 0
		g := make([]uint32, k+1)
		for i := 0; i < n; i++ {
			h := t.Gram(k, i)
			var stored, lower float64
			for j < t.Len(k+1) && Compare(above.Words[(k+1)*j:(k+1)*j+k], h) == 0 {
				w := above.Words[(k+1)*j+k]
				stored += math.Pow(10, float64(above.LogProb[j]))
				copy(g, h)
				g[k] = w
				lower += math.Pow(10, t.LogProb(g[1:]))
				j++
			}
			sh := t.suffixSum(sums, empty, h[1:])
			bow := math.Pow(10, float64(t.Levels[k-1].LogBackoff[i]))
			s := stored + bow*(sh-lower)
			sums[k-1][i] = s
			fn(ContextSum{Context: h, Sum: s})
		}
	}
}

// suffixSum returns S of the longest stored suffix of h (S of an unstored
// context equals S of its own suffix, since it backs off with weight 1).
func (t *Tables) suffixSum(sums [][]float64, empty float64, h []uint32) float64 {
	for len(h) > 0 {
		if i := t.Find(h); i >= 0 {
			return sums[len(h)-1][i]
		}
		h = h[1:]
	}
	return empty
}

// JointProbs returns, per order and entry, the probability of the whole
// n-gram g = g_1 .. g_k as the product of the model's conditional
// probabilities, P(g_1) P(g_2 | g_1) ... P(g_k | g_1 .. g_(k-1)), each factor
// the stored value (every prefix of a stored n-gram is stored). For an
// n-gram starting with <s>, which is never predicted, the first factor is
// P(</s>): sentence starts are exactly as frequent as sentence ends.
func (t *Tables) JointProbs() [][]float64 {
	N := t.Order()
	start, _ := t.ID(SentenceStart)
	end, _ := t.ID(SentenceEnd)
	joint := make([][]float64, N)
	joint[0] = make([]float64, t.Len(1))
	for w, lp := range t.Levels[0].LogProb {
		joint[0][w] = math.Pow(10, float64(lp))
	}
	joint[0][start] = math.Pow(10, float64(t.Levels[0].LogProb[end]))
	for k := 2; k <= N; k++ {
		lv := &t.Levels[k-1]
		joint[k-1] = make([]float64, t.Len(k))
		prefix := 0 // entries are sorted, so their prefixes come in order
		for i := range joint[k-1] {
			g := t.Gram(k, i)
			for Compare(t.Gram(k-1, prefix), g[:k-1]) < 0 {
				prefix++
			}
			joint[k-1][i] = joint[k-2][prefix] * math.Pow(10, float64(lv.LogProb[i]))
		}
	}
	return joint
}
