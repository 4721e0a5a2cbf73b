package verify

import (
	"encoding/json"
	"math"
	"strings"
	"testing"

	"ingot/verify/gate"
)

// The JSON report writes every number that is not finite as null (the
// deviation of a model whose normalisation did not run, the last bucket's
// open end, a divergence without predictions), keeps its arrays present
// when empty, and gives the release gate the candidate's figures under the
// unprefixed keys and the baseline's under baseline_.
func TestJSONReport(t *testing.T) {
	rep := &Report{Checks: []Check{{Name: "header", Status: Fail, Detail: "bad magic", Problems: []Problem{{Section: "header", Offset: 0, Msg: "bad magic"}}, Count: 1}}}
	b, err := json.Marshal(NewJSONReport("m.ingot", rep, 0, nil, GateSettings{}))
	if err != nil {
		t.Fatal(err)
	}
	s := string(b)
	for _, want := range []string{`"ok":false`, `"failed":["header"]`, `"max_abs_deviation":null`, `"tolerance":null`,
		`"ngrams":[]`, `"worst_contexts":[]`, `"deviation_histogram":[]`, `"section":"header","offset":0`} {
		if !strings.Contains(s, want) {
			t.Errorf("no %s in %s", want, s)
		}
	}
	if strings.Contains(s, "release_gate") {
		t.Errorf("a release gate without one: %s", s)
	}

	rep = &Report{Checks: []Check{{Name: "normalisation", Status: Pass}}, Normalisation: &Normalisation{Tolerance: 1e-5, Contexts: 3, MaxDeviation: 2e-7, Worst: []ContextSum{{Context: nil, Sum: 1 + 2e-7}}}}
	rep.Normalisation.Histogram[Buckets-1] = 1
	res := &gate.Result{Sentences: 2, Predictions: 9, Candidate: gate.Side{Perplexity: 12, PerplexityWithoutUnknown: 10, UnknownPredictions: 1},
		Baseline: gate.Side{Perplexity: 11, PerplexityWithoutUnknown: 9}, IncreasePercent: 100.0 / 11, MeanKL: math.NaN(),
		Orders: []gate.OrderDiff{{Order: 1, Added: 1}}, Added: 1}
	v := NewJSONReport("m.ingot", rep, 0, res, GateSettings{Baseline: "old.ingot", Heldout: "dev.txt", MaxIncreasePercent: 1})
	b, err = json.Marshal(v)
	if err != nil {
		t.Fatal(err)
	}
	s = string(b)
	for _, want := range []string{`"ok":true`, `"tolerance":0.00001`, `"to":null,"contexts":1`, `"context":[]`,
		`"perplexity":12,"perplexity_without_unk":10,"unk_predictions":1,"baseline_perplexity":11`,
		`"passed":false`, `"mean_kl_nats":null`, `"ngrams_by_order":[{"order":1,"added":1,"removed":0,"changed":0}]`} {
		if !strings.Contains(s, want) {
			t.Errorf("no %s in %s", want, s)
		}
	}
	if v.ReleaseGate.Passed != res.Passes(1) {
		t.Error("passed differs from the gate's verdict")
	}
}
