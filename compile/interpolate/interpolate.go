// Package interpolate merges several back-off models into one: the linear
// interpolation of F. Jelinek and R. L. Mercer (1980), "Interpolated
// estimation of Markov source parameters from sparse data", Proc. Workshop
// on Pattern Recognition in Practice, with weights fitted on held-out text by
// expectation-maximisation (A. P. Dempster, N. M. Laird and D. B. Rubin
// (1977), "Maximum likelihood from incomplete data via the EM algorithm",
// J. Royal Statistical Society B 39(1)).
//
// Models M_1..M_n with weights w_i (each > 0, summing to 1) define the exact
// mixture
//
//	P(w|h) = sum_i w_i P_i(w|h)
//
// each P_i the model's full back-off answer for the last N_i - 1 words of h.
// The vocabulary U of the mixture is the union of the models'. Model i gives
// a word of U it does not know (the set K_i) its <unk> probability divided
// by |K_i| + 1, and its <unk> keeps the same share, so each model still sums
// to one over U. A context word model i does not know is, for model i, <unk>
// (the rule for scoring text).
//
// Build writes the mixture as one back-off model of order max N_i: its stored
// n-grams are the union of the inputs' stored n-grams, each storing the
// mixture's exact value, and every back-off weight is recomputed, lowest
// order first, by the rule package prune applies after any removal. The
// written model equals the mixture on every stored n-gram and approximates
// it elsewhere.
package interpolate

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"ingot/compile/prune"
	"ingot/compile/tables"
)

// Mixture is a set of models over their union vocabulary.
type Mixture struct {
	models []*tables.Tables
	vocab  []string   // U, sorted bytewise
	fromU  [][]int32  // per model: U id -> model id, or -1 when unknown to it
	toU    [][]uint32 // per model: model id -> U id
	unk    []uint32   // per model: its id of <unk>
	share  []float64  // per model: log10(|K_i| + 1)
	order  int
	uStart uint32 // U ids of the markers
	uUnk   uint32
}

// New prepares the mixture of the given models (at least one), each of
// which must follow the conventions of package tables (as format.ToTables
// and the estimators return them). The models are read, never changed.
func New(models []*tables.Tables) (*Mixture, error) {
	if len(models) == 0 {
		return nil, fmt.Errorf("no models to interpolate")
	}
	m := &Mixture{models: models}
	seen := map[string]bool{}
	for _, t := range models {
		for _, w := range t.Vocab {
			if !seen[w] {
				seen[w] = true
				m.vocab = append(m.vocab, w)
			}
		}
		m.order = max(m.order, t.Order())
	}
	slices.Sort(m.vocab)
	m.uStart, _ = m.id(tables.SentenceStart)
	m.uUnk, _ = m.id(tables.Unknown)
	for _, t := range models {
		from := make([]int32, len(m.vocab))
		to := make([]uint32, len(t.Vocab))
		j := 0
		for u, w := range m.vocab {
			if j < len(t.Vocab) && t.Vocab[j] == w {
				from[u] = int32(j)
				to[j] = uint32(u)
				j++
			} else {
				from[u] = -1
			}
		}
		unk, _ := t.ID(tables.Unknown)
		m.fromU = append(m.fromU, from)
		m.toU = append(m.toU, to)
		m.unk = append(m.unk, unk)
		m.share = append(m.share, math.Log10(float64(len(m.vocab)-len(t.Vocab)+1)))
	}
	return m, nil
}

// Vocab returns the union vocabulary U, sorted bytewise (shared: do not
// change it).
func (m *Mixture) Vocab() []string { return m.vocab }

// Order returns the order of the written model, the largest input order.
func (m *Mixture) Order() int { return m.order }

// Len returns the number of models.
func (m *Mixture) Len() int { return len(m.models) }

func (m *Mixture) id(w string) (uint32, bool) {
	i, ok := slices.BinarySearch(m.vocab, w)
	return uint32(i), ok
}

// TokenID returns the U id a token of text is scored as: its own, or <unk>
// for a token outside U and for <s>.
func (m *Mixture) TokenID(tok string) uint32 {
	id, ok := m.id(tok)
	if !ok || id == m.uStart {
		return m.uUnk
	}
	return id
}

// answer returns log10 P_i(w|h) for g = h w in U ids, by model i's back-off
// answer over U (the rule of the package comment).
func (m *Mixture) answer(i int, g []uint32, buf []uint32) float64 {
	t := m.models[i]
	if n := t.Order(); len(g) > n {
		g = g[len(g)-n:]
	}
	buf = buf[:0]
	from := m.fromU[i]
	for _, u := range g {
		id := from[u]
		if id < 0 {
			buf = append(buf, m.unk[i])
		} else {
			buf = append(buf, uint32(id))
		}
	}
	lp := t.LogProb(buf)
	if buf[len(buf)-1] == m.unk[i] {
		lp -= m.share[i]
	}
	return lp
}

// LogProbs sets out[i] to log10 P_i(w|h) of every model i for g = h w
// (U ids) and returns log10 of the mixture sum_i w_i P_i(w|h).
func (m *Mixture) LogProbs(g []uint32, weights []float64, out []float64) float64 {
	buf := make([]uint32, 0, len(g))
	var p float64
	for i := range m.models {
		out[i] = m.answer(i, g, buf)
		if weights != nil {
			p += weights[i] * math.Pow(10, out[i])
		}
	}
	return math.Log10(p)
}

// CheckWeights reports weights that are not one positive number per model
// summing to 1 (within 1e-6).
func (m *Mixture) CheckWeights(weights []float64) error {
	if len(weights) != len(m.models) {
		return fmt.Errorf("%d weights for %d models", len(weights), len(m.models))
	}
	var sum float64
	for i, w := range weights {
		if !(w > 0 && w <= 1) {
			return fmt.Errorf("weight %d is %v: each weight must lie in (0, 1]", i+1, w)
		}
		sum += w
	}
	if math.Abs(sum-1) > 1e-6 {
		return fmt.Errorf("weights sum to %v, not 1", sum)
	}
	return nil
}

// Build writes the mixture with the given weights as one back-off model (see
// the package comment). The result passes tables.Check; its Info records
// the inputs and weights.
func (m *Mixture) Build(weights []float64, names []string) (*tables.Tables, error) {
	if err := m.CheckWeights(weights); err != nil {
		return nil, err
	}
	N := m.order
	out := &tables.Tables{Vocab: m.vocab, Levels: make([]tables.Level, N)}
	// at[k-1][i][e]: index in model i of union entry e of order k, or -1.
	at := make([][][]int32, N)
	for k := 1; k <= N; k++ {
		words, idx := m.union(k)
		out.Levels[k-1].Words = words
		at[k-1] = idx
	}
	n := len(m.models)
	// lp[i][e]: log10 P_i of union entry e of the current order; prev: of
	// the order below.
	var prev [][]float64
	// prevSuffix[e]: for union entry e of order k-1, the index at order k-2
	// of its suffix (without its first word), or -1 when the union lacks it.
	var prevSuffix []int32
	buf := make([]uint32, 0, N)
	for k := 1; k <= N; k++ {
		lv := &out.Levels[k-1]
		cnt := len(lv.Words) / k
		lp := make([][]float64, n)
		for i := range lp {
			lp[i] = make([]float64, cnt)
		}
		suffix := make([]int32, cnt)
		var children []int32 // per order k-2 entry: where its children start at order k-1
		if k >= 3 {
			children = childStarts(out, k-1)
		}
		prefix := 0
		for e := 0; e < cnt; e++ {
			g := out.Gram(k, e)
			s := -1
			switch {
			case k == 1:
			case k == 2:
				s = int(g[1]) // order 1 is dense over U
				for tables.Compare(out.Gram(1, prefix), g[:1]) < 0 {
					prefix++
				}
			default:
				for tables.Compare(out.Gram(k-1, prefix), g[:k-1]) < 0 {
					prefix++
				}
				// The suffix g[1:] is the child, with last word g[k-1], of
				// the prefix's suffix g[1:k-1].
				if sp := prevSuffix[prefix]; sp >= 0 {
					s = findChild(out, k-1, children[sp], children[sp+1], g[k-1])
				}
			}
			suffix[e] = int32(s)
			for i, t := range m.models {
				lp[i][e] = m.entry(i, t, k, e, g, prefix, s, at, prev, buf)
			}
		}
		lv.LogProb = make([]float32, cnt)
		for e := range lv.LogProb {
			var p float64
			for i := range lp {
				p += weights[i] * math.Pow(10, lp[i][e])
			}
			lv.LogProb[e] = float32(math.Log10(p))
		}
		if k < N {
			lv.LogBackoff = make([]float32, cnt)
		}
		prev, prevSuffix = lp, suffix
	}
	out.Levels[0].LogProb[m.uStart] = tables.NoProb
	prune.Renormalize(out)
	var parts []string
	for i, t := range m.models {
		name := fmt.Sprintf("model %d", i+1)
		if i < len(names) {
			name = names[i]
		}
		parts = append(parts, fmt.Sprintf("%s (%s, order %d) weight %.6g", name, t.Info.Method, t.Order(), weights[i]))
	}
	out.Info = tables.Info{
		Method:  "interpolated",
		Options: map[string]string{"weights": formatWeights(weights)},
		History: []string{"linear interpolation of " + strings.Join(parts, ", ")},
	}
	return out, nil
}

func formatWeights(w []float64) string {
	s := make([]string, len(w))
	for i, x := range w {
		s[i] = fmt.Sprintf("%.6g", x)
	}
	return strings.Join(s, ",")
}

// childStarts returns, for each entry of order k-1 of t, where its
// children start among the entries of order k (one more value at the end).
// Entries are sorted, so one pass finds them.
func childStarts(t *tables.Tables, k int) []int32 {
	n := t.Len(k - 1)
	starts := make([]int32, n+1)
	j := 0
	for p := 0; p < n; p++ {
		starts[p] = int32(j)
		for j < t.Len(k) && tables.Compare(t.Gram(k, j)[:k-1], t.Gram(k-1, p)) == 0 {
			j++
		}
	}
	starts[n] = int32(j)
	return starts
}

// findChild returns the index among entries [lo, hi) of order k (children
// of one context, sorted by last word) of the one whose last word is w, or
// -1.
func findChild(t *tables.Tables, k int, lo, hi int32, w uint32) int {
	words := t.Levels[k-1].Words
	i, j := int(lo), int(hi)
	for i < j {
		m := int(uint(i+j) >> 1)
		if words[k*m+k-1] < w {
			i = m + 1
		} else {
			j = m
		}
	}
	if i < int(hi) && words[k*i+k-1] == w {
		return i
	}
	return -1
}

// entry returns log10 P_i(w|h) of union entry e = g of order k, from the
// answers of the order below where the union holds them.
func (m *Mixture) entry(i int, t *tables.Tables, k, e int, g []uint32, prefix, suffix int, at [][][]int32, prev [][]float64, buf []uint32) float64 {
	from := m.fromU[i]
	for _, u := range g {
		if from[u] < 0 {
			// A word model i does not know: its context reads <unk>, so
			// the union's entries say nothing about model i's answer.
			return m.answer(i, g, buf)
		}
	}
	share := 0.0
	if g[k-1] == m.uUnk {
		share = m.share[i]
	}
	if k <= t.Order() {
		if j := at[k-1][i][e]; j >= 0 {
			return float64(t.Levels[k-1].LogProb[j]) - share
		}
	}
	if k == 1 {
		return m.answer(i, g, buf) // unreachable: every known word is a unigram
	}
	lower := 0.0
	if suffix >= 0 {
		lower = prev[i][suffix]
	} else {
		lower = m.answer(i, g[1:], buf)
	}
	if k <= t.Order() {
		if j := at[k-2][i][prefix]; j >= 0 {
			lower += float64(t.Levels[k-2].LogBackoff[j])
		}
	}
	return lower
}

// union returns the union of the models' stored k-grams in U ids, sorted,
// and for each model the index of every union entry in it (-1 if absent).
func (m *Mixture) union(k int) ([]uint32, [][]int32) {
	n := len(m.models)
	pos := make([]int, n)
	idx := make([][]int32, n)
	var words []uint32
	cur := make([][]uint32, n) // current head of each model, in U ids
	head := func(i int) []uint32 {
		t := m.models[i]
		if k > t.Order() || pos[i] >= t.Len(k) {
			return nil
		}
		if cur[i] == nil {
			cur[i] = make([]uint32, k)
		}
		for j, id := range t.Gram(k, pos[i]) {
			cur[i][j] = m.toU[i][id]
		}
		return cur[i]
	}
	heads := make([][]uint32, n)
	for i := range heads {
		heads[i] = head(i)
	}
	for {
		var least []uint32
		for _, h := range heads {
			if h != nil && (least == nil || tables.Compare(h, least) < 0) {
				least = h
			}
		}
		if least == nil {
			break
		}
		words = append(words, least...)
		least = words[len(words)-k:]
		for i, h := range heads {
			if h != nil && tables.Compare(h, least) == 0 {
				idx[i] = append(idx[i], int32(pos[i]))
				pos[i]++
				heads[i] = head(i)
			} else {
				idx[i] = append(idx[i], -1)
			}
		}
	}
	return words, idx
}
