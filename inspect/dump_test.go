package inspect

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"math"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"

	"ingot/compile/tables"
	"ingot/format"
)

// line is one parsed line of a dump; pointers tell absent keys from zeros.
type line struct {
	NGram        string   `json:"ngram"`
	Order        int      `json:"order"`
	Log10Prob    *float64 `json:"log10_prob"`
	Log10Backoff *float64 `json:"log10_backoff"`
	ProbIndex    *int     `json:"prob_index"`
	BackoffIndex *int     `json:"backoff_index"`
}

func parseDump(t *testing.T, out []byte) []line {
	t.Helper()
	var lines []line
	sc := bufio.NewScanner(bytes.NewReader(out))
	for sc.Scan() {
		var l line
		dec := json.NewDecoder(strings.NewReader(sc.Text()))
		dec.DisallowUnknownFields()
		if err := dec.Decode(&l); err != nil {
			t.Fatalf("line %d %q: %v", len(lines)+1, sc.Text(), err)
		}
		lines = append(lines, l)
	}
	return lines
}

// expected lists the entries of tb (read back by format.ToTables) as a dump
// should show them, keeping those whose words start with prefix.
func expected(tb *tables.Tables, prefix []string, order int) []line {
	var want []line
	for k := 1; k <= tb.Order(); k++ {
		if order != 0 && k != order {
			continue
		}
		lv := &tb.Levels[k-1]
		for i := range tb.Len(k) {
			words := strings.Fields(tb.Words(tb.Gram(k, i)))
			if len(words) < len(prefix) || !slicesEqual(words[:len(prefix)], prefix) {
				continue
			}
			l := line{NGram: strings.Join(words, " "), Order: k}
			if p := float64(lv.LogProb[i]); !math.IsInf(p, -1) {
				l.Log10Prob = &p
			}
			if lv.LogBackoff != nil {
				b := float64(lv.LogBackoff[i])
				l.Log10Backoff = &b
			}
			want = append(want, l)
		}
	}
	return want
}

func slicesEqual(a, b []string) bool { return strings.Join(a, "\x00") == strings.Join(b, "\x00") }

// values maps a dump back to float32, as stored, checking that each index
// names the level that holds the value.
func values(t *testing.T, m *format.Model, lines []line) []line {
	t.Helper()
	out := make([]line, len(lines))
	for n, l := range lines {
		round := func(p *float64) *float64 {
			if p == nil {
				return nil
			}
			v := float64(float32(*p))
			return &v
		}
		if l.ProbIndex != nil {
			cb := m.Codebook(l.Order, false)
			// A null probability is -Inf (the unigram <s>): its level must be -Inf.
			if *l.ProbIndex >= len(cb) || (l.Log10Prob == nil && !math.IsInf(float64(cb[*l.ProbIndex]), -1)) ||
				(l.Log10Prob != nil && float64(cb[*l.ProbIndex]) != float64(float32(*l.Log10Prob))) {
				t.Errorf("%q: probability index %d does not name %v", l.NGram, *l.ProbIndex, l.Log10Prob)
			}
		}
		if l.BackoffIndex != nil {
			cb := m.Codebook(l.Order, true)
			if *l.BackoffIndex >= len(cb) || l.Log10Backoff == nil || float64(cb[*l.BackoffIndex]) != float64(float32(*l.Log10Backoff)) {
				t.Errorf("%q: back-off index %d does not name %v", l.NGram, *l.BackoffIndex, l.Log10Backoff)
			}
		}
		out[n] = line{NGram: l.NGram, Order: l.Order, Log10Prob: round(l.Log10Prob), Log10Backoff: round(l.Log10Backoff)}
	}
	return out
}

func TestDumpRoundTripsEveryEntry(t *testing.T) {
	plain, quantized := demoModels(t)
	for _, tc := range []struct {
		name      string
		m         *format.Model
		quantized bool
	}{{"golden", openGolden(t), false}, {"plain", plain, false}, {"quantized", quantized, true}} {
		t.Run(tc.name, func(t *testing.T) {
			var out bytes.Buffer
			n, err := Dump(&out, tc.m, Selection{})
			if err != nil {
				t.Fatal(err)
			}
			lines := parseDump(t, out.Bytes())
			tb, err := format.ToTables(tc.m)
			if err != nil {
				t.Fatal(err)
			}
			want := expected(tb, nil, 0)
			if n != len(lines) || n != len(want) {
				t.Fatalf("%d entries reported, %d lines, %d stored", n, len(lines), len(want))
			}
			if d := cmp.Diff(want, values(t, tc.m, lines)); d != "" {
				t.Errorf("dump differs from the tables (-tables +dump):\n%s", d)
			}
			// <s> has no probability: null, as documented.
			if !strings.Contains(out.String(), `{"ngram":"<s>","order":1,"log10_prob":null,`) {
				t.Errorf("unigram <s> not dumped with a null probability")
			}
			indexes := 0
			for _, l := range lines {
				if l.ProbIndex != nil || l.BackoffIndex != nil {
					indexes++
				}
				if (l.Log10Backoff == nil) != (l.Order == tb.Order()) {
					t.Errorf("%q: back-off present %v at order %d of %d", l.NGram, l.Log10Backoff != nil, l.Order, tb.Order())
				}
			}
			if (indexes > 0) != tc.quantized {
				t.Errorf("%d entries with codebook indexes in a model quantized=%v", indexes, tc.quantized)
			}
		})
	}
}

func TestDumpSelection(t *testing.T) {
	m, q := demoModels(t)
	tb, err := format.ToTables(m)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		prefix string
		order  int
		min    int // at least this many entries, so that the case tests something
	}{
		{"", 2, 100},
		{"turn", 0, 10},
		{"turn", 3, 5},
		{"turn the", 0, 5},
		{"<s> turn", 0, 2},
		{"<s> turn the", 0, 1},
		{"<s>", 1, 1},
		{"turn the", 1, 0}, // shorter than the prefix: nothing
		{"the turn", 0, 0}, // not stored
		{"</s> </s> </s> </s>", 0, 0},
	} {
		prefix := strings.Fields(tc.prefix)
		want := expected(tb, prefix, tc.order)
		if len(want) < tc.min {
			t.Fatalf("prefix %q order %d: only %d entries stored; the case is too weak", tc.prefix, tc.order, len(want))
		}
		for _, model := range []*format.Model{m, q} {
			var out bytes.Buffer
			n, err := Dump(&out, model, Selection{Order: tc.order, Prefix: prefix})
			if err != nil {
				t.Fatalf("prefix %q: %v", tc.prefix, err)
			}
			got := values(t, model, parseDump(t, out.Bytes()))
			if model == q { // values differ; compare the n-grams
				for i := range got {
					got[i].Log10Prob, got[i].Log10Backoff = nil, nil
				}
				w := append([]line(nil), want...)
				for i := range w {
					w[i].Log10Prob, w[i].Log10Backoff = nil, nil
				}
				if d := cmp.Diff(w, got, cmpopts.EquateEmpty()); d != "" {
					t.Errorf("quantized, prefix %q order %d (-want +got):\n%s", tc.prefix, tc.order, d)
				}
				continue
			}
			if n != len(want) {
				t.Errorf("prefix %q order %d: %d entries, want %d", tc.prefix, tc.order, n, len(want))
			}
			if d := cmp.Diff(want, got, cmpopts.EquateEmpty()); d != "" {
				t.Errorf("prefix %q order %d (-want +got):\n%s", tc.prefix, tc.order, d)
			}
		}
	}
	var ue *UnknownWordError
	if _, err := Dump(&bytes.Buffer{}, m, Selection{Prefix: []string{"turn", "zebra"}}); !errors.As(err, &ue) || ue.Word != "zebra" {
		t.Errorf("unknown prefix word: %v", err)
	}
	if _, err := Dump(&bytes.Buffer{}, m, Selection{Order: 4}); err == nil {
		t.Error("order 4 of an order-3 model accepted")
	}
}

// The walk under a prefix visits the subtree only: the callback sees no
// entry outside it (checked above) and stops early when asked.
func TestWalkStopsOnError(t *testing.T) {
	m := openGolden(t)
	stop := errors.New("enough")
	n := 0
	err := Walk(m, Selection{}, func(Entry) error {
		n++
		if n == 3 {
			return stop
		}
		return nil
	})
	if !errors.Is(err, stop) || n != 3 {
		t.Errorf("walk went on after an error: %v after %d entries", err, n)
	}
}
