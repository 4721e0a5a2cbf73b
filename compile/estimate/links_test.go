package estimate

import (
	"bytes"
	"context"
	"testing"

	"github.com/google/go-cmp/cmp"

	"ingot/compile/corpus"
	"ingot/compile/counts"
	"ingot/compile/tables"
	"ingot/format"
)

// The tables carry the links of their orders, taken from the counts (Load
// links a higher order than the model's here) or found by the estimator,
// and a model written with them has the bytes of one written without.
func TestTablesCarryTheirLinks(t *testing.T) {
	var text, bin bytes.Buffer
	if err := corpus.Generate(&text, 3, 400, 300); err != nil {
		t.Fatal(err)
	}
	if _, err := counts.Count(context.Background(), counts.Options{Order: 4}, []counts.Input{{Name: "text", R: &text}}, &bin); err != nil {
		t.Fatal(err)
	}
	loaded, err := counts.Load(4, []counts.Source{{Name: "c", R: &bin}})
	if err != nil {
		t.Fatal(err)
	}
	if loaded.Links == nil {
		t.Fatal("Load found no links")
	}
	unlinked := *loaded
	unlinked.Links = nil
	for name, c := range map[string]*counts.Counts{"loaded": loaded, "unlinked": &unlinked} {
		m, _, err := Estimate(c, Options{Method: KneserNey, Order: 3})
		if err != nil {
			t.Fatal(err)
		}
		words := make([][]uint32, m.Order())
		for k := 2; k <= m.Order(); k++ {
			words[k-1] = m.Levels[k-1].Words
		}
		want, err := tables.Link(len(m.Vocab), words)
		if err != nil {
			t.Fatal(err)
		}
		if d := cmp.Diff(want, m.Links); d != "" {
			t.Fatalf("%s: the tables' links differ from Link's (-want +got):\n%s", name, d)
		}
		with, err := format.Marshal(m)
		if err != nil {
			t.Fatal(err)
		}
		m.Links = nil
		without, err := format.Marshal(m)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(with, without) {
			t.Fatalf("%s: the model written with its links differs from the one written without", name)
		}
	}
}
