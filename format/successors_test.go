package format

import (
	"ingot/compile/fixture"
	"math"
	"math/rand/v2"
	"testing"

	"ingot/compile/estimate"
	"ingot/compile/tables"
)

// Successors gives every word of the vocabulary the probability the
// in-memory tables' back-off rule (Tables.LogProb) gives it, after the
// context of every stored n-gram below the top order and after random
// contexts, in both layouts: a listed word its listed value, every other
// word LogRest plus its unigram probability.
func TestSuccessorsMatchTables(t *testing.T) {
	for _, c := range models(t) {
		tb := c.tb
		for _, version := range []int{2, 3} {
			data, err := MarshalVersion(tb, version)
			if err != nil {
				t.Fatal(err)
			}
			m := mustOpen(t, data)
			d := m.NewSuccessors()
			var contexts [][]uint32
			for k := 1; k < m.Order(); k++ {
				it := m.Entries(k)
				for it.Next() {
					contexts = append(contexts, append([]uint32(nil), it.Gram()...))
				}
			}
			r := rand.New(rand.NewPCG(uint64(version), 7))
			for range 50 {
				ctx := make([]uint32, r.IntN(m.Order()+1))
				for i := range ctx {
					ctx[i] = uint32(r.IntN(m.VocabSize()))
				}
				contexts = append(contexts, ctx)
			}
			for _, ctx := range contexts {
				d.Build(m.ContextState(ctx))
				listed := map[uint32]float64{}
				for i, w := range d.Words() {
					if _, twice := listed[w]; twice {
						t.Fatalf("%s v%d: %v: word %d listed twice", c.name, version, ctx, w)
					}
					listed[w] = d.LogProbs()[i]
				}
				keep := ctx[max(0, len(ctx)-(m.Order()-1)):]
				for w := range uint32(m.VocabSize()) {
					got, ok := listed[w]
					if !ok {
						got = d.LogRest() + float64(m.LogProbAt(1, int(w)))
					}
					if ok != d.Listed(w) {
						t.Fatalf("%s v%d: Listed(%d) = %v, Words says %v", c.name, version, w, d.Listed(w), ok)
					}
					want := tb.LogProb(append(append([]uint32(nil), keep...), w))
					if !same(got, want) && math.Abs(got-want) > 1e-9 {
						t.Fatalf("%s v%d: P(%s | %s): Successors %v, tables %v", c.name, version, tb.Words([]uint32{w}), tb.Words(ctx), got, want)
					}
				}
			}
		}
	}
}

// A normalised model's distributions sum to one (Kolmogorov's axioms):
// after every context of a Kneser-Ney model of the bundled State of the
// Union text, the listed probabilities plus 10^LogRest times the unigram
// probabilities of the unlisted words (<s> excluded) add up to 1.
func TestSuccessorsSumToOne(t *testing.T) {
	tb := fixture.Estimate(t, fixture.Train(t, 400), 3, estimate.Options{Method: estimate.KneserNey})
	m := mustOpen(t, mustMarshal(t, tb))
	start, _ := tb.ID(tables.SentenceStart)
	d := m.NewSuccessors()
	rest := 0.0 // unigram mass of every predictable word
	for w := range uint32(m.VocabSize()) {
		if w != start {
			rest += math.Pow(10, float64(m.LogProbAt(1, int(w))))
		}
	}
	checked := 0
	for k := 1; k < m.Order(); k++ {
		it := m.Entries(k)
		for it.Next() {
			d.Build(m.ContextState(it.Gram()))
			sum, unlisted := 0.0, rest
			for i, w := range d.Words() {
				if w == start {
					continue
				}
				sum += math.Pow(10, d.LogProbs()[i])
				unlisted -= math.Pow(10, float64(m.LogProbAt(1, int(w))))
			}
			sum += math.Pow(10, d.LogRest()) * unlisted
			if math.Abs(sum-1) > 1e-5 {
				t.Fatalf("context %s sums to %.9f", tb.Words(it.Gram()), sum)
			}
			checked++
		}
	}
	if checked < 1000 {
		t.Fatalf("only %d contexts checked", checked)
	}
}

// SuffixLink names, for every stored n-gram of order 2 and up, the entry
// that Find finds for its suffix, or none when Find finds none, in both
// layouts; the random models are not suffix-closed, so both answers occur,
// and the estimated one is.
func TestSuffixLinkMatchesFind(t *testing.T) {
	linked, missing := 0, 0
	cases := append(models(t), struct {
		name string
		tb   *tables.Tables
	}{"Kneser-Ney order 4", fixture.Estimate(t, fixture.Train(t, 300), 4, estimate.Options{Method: estimate.KneserNey})})
	for _, c := range cases {
		for _, version := range []int{2, 3} {
			data, err := MarshalVersion(c.tb, version)
			if err != nil {
				t.Fatal(err)
			}
			m := mustOpen(t, data)
			for k := 2; k <= m.Order(); k++ {
				it := m.Entries(k)
				for it.Next() {
					g := it.Gram()
					want, wantOK := m.Find(g[1:])
					got, ok := m.SuffixLink(k, it.Index())
					if ok != wantOK || (ok && got != want) {
						t.Fatalf("%s v%d: suffix of %v: SuffixLink %d %v, Find %d %v", c.name, version, g, got, ok, want, wantOK)
					}
					if ok {
						linked++
					} else {
						missing++
					}
				}
			}
			if _, ok := m.SuffixLink(1, 0); ok {
				t.Fatalf("a unigram has no suffix entry")
			}
		}
	}
	if linked < 1000 || missing == 0 {
		t.Fatalf("%d links found, %d suffixes missing: both kinds must be tested", linked, missing)
	}
}
