package inspect

import (
	"math"
	"testing"
)

// An explanation adds up: the result is the stored log10 of the matched
// n-gram plus every back-off weight applied (the back-off rule), and equals
// what the model's query path gives; a quantized value names the codebook
// level it is stored as.
func TestExplainAddsUp(t *testing.T) {
	plain, quantized := demoModels(t)
	for _, m := range []struct {
		name string
		q    bool
	}{{"plain", false}, {"quantized", true}} {
		model := plain
		if m.q {
			model = quantized
		}
		for _, words := range [][]string{
			{"<s>", "turn", "the", "beacon"}, {"the", "beacon", "on"}, {"zzz-not-a-word", "the"}, {"beacon", "zzz-not-a-word"}, {"the"},
		} {
			e := Explain(model, words)
			if len(words) > 1 && words[1] == "turn" && (e.MatchedOrder < 2 || len(e.Unknown) > 0) {
				t.Fatalf("%v: matched order %d, unknown %v: the demo model should know it", words, e.MatchedOrder, e.Unknown)
			}
			if words[0] == "beacon" && len(e.Backoffs) == 0 {
				t.Errorf("%v: no back-off to reach <unk>", words)
			}
			sum := float64(e.StoredLog10)
			for _, b := range e.Backoffs {
				sum += float64(b.Log10Backoff)
				if m.q && len(b.Context) > 0 && b.Quantization != nil && float64(b.Quantization.QuantizedLog10) != float64(b.Log10Backoff) {
					t.Errorf("%s %v: back-off %v stored as level %v", m.name, words, b.Log10Backoff, b.Quantization.QuantizedLog10)
				}
			}
			ids, unknown := Lookup(model, words)
			want := model.LogProb(ids[:len(ids)-1], ids[len(ids)-1])
			if e.MatchedOrder > 0 && math.Abs(sum-float64(e.Log10)) > 1e-5 {
				t.Errorf("%s %v: stored %v plus back-offs gives %v, result %v", m.name, words, e.StoredLog10, sum, e.Log10)
			}
			if math.Abs(float64(e.Log10)-want) > 1e-6 && !(math.IsInf(want, -1) && math.IsInf(float64(e.Log10), -1)) {
				t.Errorf("%s %v: explained %v, query path %v", m.name, words, e.Log10, want)
			}
			if len(unknown) != len(e.Unknown) || e.AnyQuantized != m.q {
				t.Errorf("%s %v: unknown %v, quantized %v", m.name, words, e.Unknown, e.AnyQuantized)
			}
			if m.q && e.MatchedOrder >= 2 && (e.Quantization == nil || float64(e.Quantization.QuantizedLog10) != float64(e.StoredLog10)) {
				t.Errorf("%s %v: matched order %d stored %v, quantization %+v", m.name, words, e.MatchedOrder, e.StoredLog10, e.Quantization)
			}
		}
	}
}
