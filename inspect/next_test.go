package inspect

import (
	"math"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"

	"ingot/format"
)

// The conditional probabilities of every word but <s> after any context sum
// to one (law of total probability; the model is normalised by
// construction, as spec/FORMAT.md §2 and the verifier require).
func TestNextSumsToOneOverTheVocabulary(t *testing.T) {
	plain, quantized := demoModels(t)
	for _, tc := range []struct {
		name string
		m    *format.Model
		tol  float64
	}{
		{"golden", openGolden(t), 1e-5},
		{"plain", plain, 1e-5},
		// The quantizer compensates rounding; its recorded residuals are
		// below 1e-5 for this model.
		{"quantized", quantized, 1e-5},
	} {
		for _, context := range []string{"", "<s>", "turn", "turn the", "<s> turn the", "the fog", "zebra crossing", "navigate to the fen"} {
			m := tc.m
			all := m.VocabSize() - 1
			nw, err := Next(m, strings.Fields(context), m.VocabSize())
			if err != nil {
				t.Fatal(err)
			}
			if len(nw.Predictions) != all || nw.Candidates != all {
				t.Fatalf("%s %q: %d predictions of %d candidates, want %d", tc.name, context, len(nw.Predictions), nw.Candidates, all)
			}
			sum := 0.0
			ids := lookupIDs(m, strings.Fields(context))
			for i, p := range nw.Predictions {
				sum += float64(p.Probability)
				if p.Word == "<s>" {
					t.Errorf("%s %q: <s> predicted", tc.name, context)
				}
				if i > 0 && p.Log10 > nw.Predictions[i-1].Log10 {
					t.Errorf("%s %q: %q ranked below a less probable word", tc.name, context, p.Word)
				}
				id, _ := m.ID(p.Word)
				if want := m.LogProb(ids, id); float64(p.Log10) != want {
					t.Errorf("%s %q: log10 P(%s) = %v, query path gives %v", tc.name, context, p.Word, p.Log10, want)
				}
				if want := m.Explain(ids, id).MatchedOrder; p.MatchedOrder != want || p.Stored != (want == len(nw.Context)+1) {
					t.Errorf("%s %q %s: matched order %d stored %v, explain says %d", tc.name, context, p.Word, p.MatchedOrder, p.Stored, want)
				}
			}
			if math.Abs(sum-1) > tc.tol || math.Abs(float64(nw.TotalProbability)-sum) > 1e-12 {
				t.Errorf("%s %q: probabilities sum to %v (reported %v), want 1 within %g", tc.name, context, sum, nw.TotalProbability, tc.tol)
			}
		}
	}
}

func TestNextTopAndContext(t *testing.T) {
	m, _ := demoModels(t)
	full, err := Next(m, []string{"<s>", "turn"}, m.VocabSize())
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		context     string
		top         int
		wantContext []string
		wantUnknown []string
	}{
		{"<s> turn", 3, []string{"<s>", "turn"}, nil},
		{"navigate the turn", 1, []string{"the", "turn"}, nil}, // N-1 = 2 words count
		{"to zebra", 5, []string{"to", "<unk>"}, []string{"zebra"}},
		{"", 2, []string{}, nil},
	} {
		nw, err := Next(m, strings.Fields(tc.context), tc.top)
		if err != nil {
			t.Fatal(err)
		}
		if len(nw.Predictions) != tc.top {
			t.Errorf("%q: %d predictions, want %d", tc.context, len(nw.Predictions), tc.top)
		}
		if d := cmp.Diff(tc.wantContext, nw.Context); d != "" {
			t.Errorf("%q: context (-want +got):\n%s", tc.context, d)
		}
		if d := cmp.Diff(tc.wantUnknown, nw.Unknown, cmpopts.EquateEmpty()); d != "" {
			t.Errorf("%q: unknown words (-want +got):\n%s", tc.context, d)
		}
		if tc.context == "<s> turn" {
			if d := cmp.Diff(full.Predictions[:tc.top], nw.Predictions); d != "" {
				t.Errorf("top %d is not the head of the full ranking:\n%s", tc.top, d)
			}
			if !nw.Predictions[0].Stored {
				t.Errorf("most probable word after <s> turn backed off: %+v", nw.Predictions[0])
			}
		}
	}
	if _, err := Next(m, nil, 0); err == nil {
		t.Error("top 0 accepted")
	}
	// Markers as count reads them: <s> only first, </s> never in a context.
	for context, want := range map[string]string{
		"<unk> <s>":       "context word 2 is <s>, which only begins a sentence",
		"navigate <s> to": "context word 2 is <s>",
		"turn </s>":       "context word 2 is </s>, which ends a sentence",
		"</s>":            "context word 1 is </s>",
	} {
		if _, err := Next(m, strings.Fields(context), 3); err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("%q: %v, want %q", context, err, want)
		}
	}
}

func lookupIDs(m *format.Model, words []string) []uint32 {
	var ids []uint32
	for i, w := range words {
		id, ok := m.ID(w)
		if !ok || (id == m.StartID() && i > 0) {
			id = m.UnknownID()
		}
		ids = append(ids, id)
	}
	return ids
}
