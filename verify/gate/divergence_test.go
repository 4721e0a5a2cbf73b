package gate

import (
	"ingot/compile/fixture"
	"math"
	"strings"
	"testing"

	"ingot/compile/estimate"
	"ingot/format"
)

// referenceKL is KL(p || q) summed over the predictions of one sentence,
// taken straight from its definition (Cover and Thomas, eq. 2.26, recalled
// from memory): every word of both vocabularies is asked of each model
// through its query path, one LogProb per word, and grouped into the
// events Divergence documents. It costs time linear in the vocabularies
// and shares no code with Divergence.
func referenceKL(p, q *format.Model, tokens []string) float64 {
	type side struct {
		m       *format.Model
		history []uint32
	}
	sides := []*side{{m: p}, {m: q}}
	for _, s := range sides {
		s.history = []uint32{s.m.StartID()}
	}
	word := func(m *format.Model, id uint32) string { return m.Word(id) }
	total := 0.0
	for t := 0; t <= len(tokens); t++ {
		dist := [2]map[string]float64{{}, {}}
		for i, s := range sides {
			for id := uint32(0); id < uint32(s.m.VocabSize()); id++ {
				if id == s.m.StartID() {
					continue
				}
				w := word(s.m, id)
				other := sides[1-i].m
				event := w
				if oid, ok := other.ID(w); !ok || id == s.m.UnknownID() || oid == other.UnknownID() || oid == other.StartID() {
					event = "\x00other"
				}
				dist[i][event] += math.Pow(10, s.m.LogProb(s.history, id))
			}
		}
		z := [2]float64{}
		for i := range dist {
			for _, v := range dist[i] {
				z[i] += v
			}
		}
		for e, pe := range dist[0] {
			if x := pe / z[0]; x > 0 {
				total += x * math.Log(x/(dist[1][e]/z[1]))
			}
		}
		if t < len(tokens) {
			for _, s := range sides {
				id, ok := s.m.ID(tokens[t])
				if !ok || id == s.m.StartID() {
					id = s.m.UnknownID()
				}
				s.history = append(s.history, id)
			}
		}
	}
	return total
}

// The divergence computed from the stored n-grams touched equals the one
// taken over the whole vocabularies, word by word, for models of different
// methods, orders and vocabularies (trained on different parts of the
// bundled State of the Union text), in both directions.
func TestDivergenceMatchesWholeVocabularySum(t *testing.T) {
	train, held := fixture.SOTU(t, 600)
	a := model(t, train[:300], 3, estimate.Options{Method: estimate.KneserNey})
	b := model(t, train[250:], 2, estimate.Options{Method: estimate.Katz})
	c := model(t, train[:300], 3, estimate.Options{Method: estimate.WittenBell})
	pairs := []struct {
		name string
		p, q *format.Model
	}{{"kneser-ney 3 vs katz 2", a, b}, {"katz 2 vs kneser-ney 3", b, a}, {"kneser-ney vs witten-bell, one vocabulary", a, c}, {"identical", a, a}}
	for _, pair := range pairs {
		d := NewDivergence(pair.p, pair.q)
		for _, s := range held[:8] {
			tokens := strings.Fields(s)
			got, want := d.Sentence(tokens), referenceKL(pair.p, pair.q, tokens)
			if math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
				t.Fatalf("%s: %q: KL %.12g, whole-vocabulary sum %.12g", pair.name, s, got, want)
			}
			if pair.p == pair.q && got != 0 {
				t.Fatalf("identical models: KL %v, want exactly 0", got)
			}
		}
	}
}
