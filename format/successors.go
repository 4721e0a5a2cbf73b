package format

// Successors is the whole next-word distribution after a context, as the
// back-off rule gives it, held sparsely: the words stored after some
// suffix of the context with their log10 probabilities, and one log10
// weight that every other word's unigram probability is multiplied by.
// Tools that compare or sum whole distributions (the release gate's
// divergence) read it instead of applying the rule themselves; it costs
// time linear in the stored n-grams the context reaches, not in the
// vocabulary. A Successors is reused from context to context and is not
// safe for concurrent use.
type Successors struct {
	m        *Model
	stamp    []uint32 // stamp[w] == gen: w is listed
	gen      uint32
	words    []uint32
	logProbs []float64
	logRest  float64
}

// NewSuccessors prepares a Successors for m; it holds a word-indexed
// table of the vocabulary's size.
func (m *Model) NewSuccessors() *Successors {
	return &Successors{m: m, stamp: make([]uint32, m.vocabSize)}
}

// Build lists the distribution after the context of s. By the back-off
// rule (spec §7), a word stored after a suffix of the context gets the
// probability stored for the longest such suffix times the back-off
// weights of the longer stored suffixes; every other word gets its unigram
// probability times the weights of all the stored suffixes. <s> may be
// listed, with its stored probability.
func (d *Successors) Build(s State) {
	m := d.m
	if d.gen++; d.gen == 0 {
		clear(d.stamp)
		d.gen = 1
	}
	d.words, d.logProbs = d.words[:0], d.logProbs[:0]
	bow := 0.0
	for j := min(max(s.n, 0), max(m.order-1, 0)); j >= 1; j-- {
		h := s.node[j-1]
		if h == noNode {
			continue
		}
		a, b := m.ChildRange(j, int(h))
		for c := a; c < b; c++ {
			w := m.WordAt(j+1, c)
			if uint64(w) >= uint64(len(d.stamp)) || d.stamp[w] == d.gen {
				continue
			}
			d.stamp[w] = d.gen
			d.words = append(d.words, w)
			d.logProbs = append(d.logProbs, bow+float64(m.LogProbAt(j+1, c)))
		}
		bow += float64(m.LogBackoffAt(j, int(h)))
	}
	d.logRest = bow
}

// Words returns the words stored after some suffix of the context, each
// once, longest suffix first. The slice is reused by the next Build.
func (d *Successors) Words() []uint32 { return d.words }

// LogProbs returns log10 P(w | context) of each word of Words, in the same
// order. The slice is reused by the next Build.
func (d *Successors) LogProbs() []float64 { return d.logProbs }

// LogRest returns the log10 weight of every word not in Words: its
// log10 P(w | context) is LogRest plus its unigram log10 probability.
func (d *Successors) LogRest() float64 { return d.logRest }

// Listed reports whether w is one of Words.
func (d *Successors) Listed(w uint32) bool {
	return uint64(w) < uint64(len(d.stamp)) && d.stamp[w] == d.gen
}
