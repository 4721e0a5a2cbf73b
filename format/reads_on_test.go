//go:build ingotreads

package format

import (
	"path/filepath"
	"strings"
	"testing"
)

// TestReadCountNamesTheSectionsAQueryReads scores words of the golden
// 8-bit model in both layouts with the read hooks compiled in: the first
// query reads only lines it has not read before (all cold), every line read
// lies in a section of the file, and a step from a stored context reads
// what the specification says a step reads (spec/FORMAT.md §7): the
// context's child range and its children's last words, then a probability.
// Run with: go test -tags ingotreads ./format -run ReadCount
func TestReadCountNamesTheSectionsAQueryReads(t *testing.T) {
	for _, tc := range []struct {
		file  string
		reads []string // sections the second step must read
	}{
		{"marrowfen.q8.v3.ingot", []string{"contexts of order 1", "child starts of order 1", "last words of order 2"}},
		{"marrowfen.q8.v2.ingot", []string{"child starts of order 1", "last words of order 2"}},
	} {
		m, err := Open(filepath.Join("..", "spec", "golden", tc.file))
		if err != nil {
			t.Fatal(err)
		}
		var ids []uint32
		for _, w := range []string{"the", "</s>"} {
			id, ok := m.ID(w)
			if !ok {
				t.Fatalf("%s: no %q", tc.file, w)
			}
			ids = append(ids, id)
		}
		s := m.StartState()
		r := CountReads(m, 1<<20)
		m.Next(&s, s.node[0]) // <s> after <s>: a context with children
		r.EndQuery()
		lines, cold, by := r.PerQuery()
		if lines == 0 || cold != lines {
			t.Errorf("%s: first query read %v lines, %v cold; want some, all cold", tc.file, lines, cold)
		}
		for _, id := range ids {
			s = m.StartState()
			m.Next(&s, id)
			r.EndQuery()
		}
		r.Stop()
		_, _, by = r.PerQuery()
		for name := range by {
			// A step reads the trie and the values, never the vocabulary
			// or the file's other sections.
			ok := false
			for _, p := range []string{"contexts ", "child starts ", "last words ", "probabilities ", "probability codebook ", "back-offs ", "back-off codebook "} {
				ok = ok || strings.HasPrefix(name, p)
			}
			if !ok {
				t.Errorf("%s: a step read the %s: %v", tc.file, name, by)
			}
		}
		for _, name := range tc.reads {
			if by[name][0] == 0 {
				t.Errorf("%s: no read of the %s; read %v", tc.file, name, by)
			}
		}
		if by["probabilities of order 2"][0] == 0 && by["probabilities of order 1"][0] == 0 {
			t.Errorf("%s: no probability read: %v", tc.file, by)
		}
		m.Close()
	}
}
