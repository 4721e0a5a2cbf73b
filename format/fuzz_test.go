package format

import (
	"bytes"
	"testing"
)

// FuzzFromBytes opens arbitrary bytes and runs every query path on whatever
// opens: nothing may panic. The seeds are real models, whole and cut.
func FuzzFromBytes(f *testing.F) {
	tiny := mustMarshal(f, tinyModel(f))
	random := mustMarshal(f, randomTables(5, 12, []int{20, 30, 30}))
	f.Add(tiny)
	f.Add(random)
	f.Add(tiny[:len(tiny)/2])
	f.Add(bytes.Repeat([]byte{0xff}, 200))
	f.Fuzz(func(t *testing.T, data []byte) {
		m, err := FromBytes(data)
		if err != nil {
			if m != nil {
				t.Fatal("error with a model")
			}
			return
		}
		exercise(m)
	})
}

// exercise calls every query of m with ids inside and outside the
// vocabulary.
func exercise(m *Model) {
	V := uint32(m.VocabSize())
	ids := []uint32{0, 1, 2, V / 2, V - 1, V, V + 1, noNode, m.StartID(), m.EndID(), m.UnknownID()}
	m.Order()
	m.Info()
	m.Digest()
	m.Sections()
	m.SuffixClosed()
	for _, id := range ids {
		w := m.Word(id)
		m.ID(w)
		m.ID(w + "x")
	}
	s := m.StartState()
	for i, w := range ids {
		m.Next(&s, w)
		m.LogProb(ids[:i], w)
		m.Explain(ids[i:], w)
		m.ContextState(ids[:i])
		m.Find(ids[i:min(i+3, len(ids))])
	}
	for k := -1; k <= m.Order()+1; k++ {
		for _, i := range []int{-1, 0, 1, m.Count(k) - 1, m.Count(k)} {
			m.WordAt(k, i)
			m.LogProbAt(k, i)
			m.LogBackoffAt(k, i)
			m.ChildRange(k, i)
		}
		it := m.Entries(k)
		for n := 0; n < 1000 && it.Next(); n++ {
			m.Find(it.Gram())
		}
		it.Err()
	}
	m.VerifyChecksums()
	m.Verify()
	if t, err := ToTables(m); err == nil {
		Marshal(t)
	}
	m.Close()
	m.LogProb(ids, 0)
}
