package main

import (
	"encoding/json"
	"math"
	"path/filepath"
	"strings"
	"testing"
)

// interpolate --fit writes a model that verifies, and its JSON report holds
// the weights (one per input, summing to 1), the held-out perplexity of
// each input, of the exact mixture and of the written model, and the
// n-grams per order.
func TestInterpolateFitReport(t *testing.T) {
	dir := t.TempDir()
	general := demoModel(t, dir)
	logs := writeFile(t, dir, "logs.txt", strings.Join(strings.Split(demoTraining, "\n")[:600], "\n"))
	p := func(n string) string { return filepath.Join(dir, n) }
	for _, args := range [][]string{
		{"count", "--order", "2", "-o", p("logs.tsv"), logs},
		{"compile", "--method", "witten-bell", "--order", "2", "-o", p("logs.ingot"), p("logs.tsv")},
	} {
		if code, _, e := ingot(t, args...); code != 0 {
			t.Fatalf("%s: %s", args[0], e)
		}
	}
	held := writeFile(t, dir, "held.txt", demoHeldout)
	code, out, e := ingot(t, "interpolate", "--fit", held, "--json", "-o", p("mix.ingot"), general, p("logs.ingot"))
	if code != 0 {
		t.Fatalf("interpolate: exit %d: %s", code, e)
	}
	var rep struct {
		Weights        []float64
		Fitted         bool
		Iterations     int
		Predictions    int
		Inputs         []float64 `json:"input_perplexities"`
		Mixture        float64   `json:"mixture_perplexity"`
		Written        float64   `json:"perplexity"`
		NGramsPerOrder []int     `json:"ngrams"`
		VocabularySize int       `json:"vocabulary_size"`
	}
	if err := json.Unmarshal([]byte(out), &rep); err != nil {
		t.Fatalf("%v:\n%s", err, out)
	}
	if len(rep.Weights) != 2 || math.Abs(rep.Weights[0]+rep.Weights[1]-1) > 1e-9 || !rep.Fitted || rep.Iterations < 1 {
		t.Errorf("weights %v fitted %v in %d steps", rep.Weights, rep.Fitted, rep.Iterations)
	}
	pp := rep
	if len(pp.Inputs) != 2 || pp.Predictions == 0 || !(pp.Mixture > 1) || math.Abs(pp.Written/pp.Mixture-1) > 0.02 {
		t.Errorf("perplexities: inputs %v, mixture %v, written %v, %d predictions", pp.Inputs, pp.Mixture, pp.Written, pp.Predictions)
	}
	// The fitted mixture is about as likely on its fitting text as the better
	// input alone, or more (the maximum is at least each corner; EM stops
	// near it, within its step tolerance).
	if pp.Mixture > pp.Inputs[0]*(1+1e-4) || pp.Mixture > pp.Inputs[1]*(1+1e-4) {
		t.Errorf("fitted mixture %.4f worse than an input %v", pp.Mixture, pp.Inputs)
	}
	if len(rep.NGramsPerOrder) != 3 || rep.NGramsPerOrder[2] == 0 || rep.VocabularySize < 100 {
		t.Errorf("n-grams per order %v, vocabulary %d", rep.NGramsPerOrder, rep.VocabularySize)
	}
	if code, _, e := ingot(t, "verify", p("mix.ingot")); code != 0 {
		t.Errorf("verify: exit %d: %s", code, e)
	}
	// Interpolating a model with itself scores held-out text as the model does.
	if code, _, e := ingot(t, "interpolate", "--weights", "0.25,0.75", "-o", p("self.ingot"), general, general); code != 0 {
		t.Fatalf("interpolate: %s", e)
	}
	_, a, _ := ingot(t, "score", general, held)
	_, b, _ := ingot(t, "score", p("self.ingot"), held)
	if last(a) != last(b) {
		t.Errorf("self-interpolation scores differently:\n%s\n%s", last(a), last(b))
	}
}

func last(s string) string {
	lines := strings.Split(strings.TrimSpace(s), "\n")
	return lines[len(lines)-1]
}
