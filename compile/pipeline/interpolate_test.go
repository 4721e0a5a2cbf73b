package pipeline

import (
	"math"
	"os"
	"path/filepath"
	"testing"

	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"ingot/compile/tables"
	"ingot/format"
)

// Interpolate chooses the weights (given, fitted by EM, or equal), records
// its command, and reports the perplexities of the inputs, of the exact
// mixture and of the written file.
func TestInterpolate(t *testing.T) {
	demo := fixture.Demo(t)
	n := len(demo)
	general := fixture.Estimate(t, demo[:n*8/10], 3, estimate.Options{Method: estimate.KneserNey})
	domain := fixture.Estimate(t, demo[n*6/10:n*9/10], 2, estimate.Options{Method: estimate.WittenBell})
	held := fixture.Tokens(demo[n*9/10:])
	models := []*tables.Tables{general, domain}
	names := []string{"general.ingot", "domain.ingot"}

	// Neither weights nor held-out text: equal weights, nothing scored.
	res, err := Interpolate{Names: names, ToolVersion: "9.9"}.Run(models, "out.ingot")
	if err != nil {
		t.Fatal(err)
	}
	r := res.Report
	if r.Weights[0] != 0.5 || r.Weights[1] != 0.5 || r.Fitted || r.Perplexity != nil || r.MixturePerplexity != nil {
		t.Errorf("default: weights %v, fitted %v, perplexities %v %v", r.Weights, r.Fitted, r.Perplexity, r.MixturePerplexity)
	}
	if r.Order != 3 || len(r.NGramsPerOrder) != 3 || r.Model != "out.ingot" || res.Model.Info.ToolVersion != "9.9" {
		t.Errorf("report %+v, tool version %q", r, res.Model.Info.ToolVersion)
	}
	if err := res.ScoreWritten("absent"); err != nil {
		t.Errorf("scored a file without held-out text: %v", err)
	}

	for _, bad := range []Interpolate{
		{Names: names, Weights: []float64{0.5, 0.5}, Fit: held},
		{Names: names, Weights: []float64{0.7, 0.7}},
		{Names: names, Weights: []float64{1}},
	} {
		if _, err := bad.Run(models, "out.ingot"); err == nil {
			t.Errorf("weights %v with fitting text %v accepted", bad.Weights, bad.Fit != nil)
		}
	}

	// Fitted on the held-out text: the EM optimum of a concave likelihood
	// is at least as likely as either input alone (each is a corner of the
	// simplex; Dempster, Laird & Rubin 1977), within EM's stopping step.
	cmd := Record([]string{"ingot", "interpolate"}, "")
	res, err = Interpolate{Names: names, Fit: held, Heldout: held, HeldoutName: "held.txt", Command: cmd}.Run(models, "m.ingot")
	if err != nil {
		t.Fatal(err)
	}
	r = res.Report
	if !r.Fitted || r.Iterations < 1 || math.Abs(r.Weights[0]+r.Weights[1]-1) > 1e-9 || r.Heldout != "held.txt" || r.Predictions == 0 {
		t.Errorf("fitted: %+v", r)
	}
	mix := float64(*r.MixturePerplexity)
	for i, p := range r.InputPerplexities {
		if mix > float64(p)*(1+1e-4) {
			t.Errorf("the fitted mixture (%v) is worse than input %d alone (%v)", mix, i, p)
		}
	}
	if cs := res.Model.Info.Commands; len(cs) == 0 || cs[len(cs)-1].Line != "ingot interpolate" {
		t.Errorf("commands recorded: %+v", cs)
	}
	path := filepath.Join(t.TempDir(), "m.ingot")
	writeTables(t, path, res.Model)
	if err := res.ScoreWritten(path); err != nil || res.Report.Perplexity == nil {
		t.Fatalf("written: %v", err)
	}
	m, err := format.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer m.Close()
	if got, want := float64(*res.Report.Perplexity), Perplexity(m, held); got != want {
		t.Errorf("written model's perplexity %v, scored again %v", got, want)
	}

	// A model interpolated with itself is the model: the same perplexity.
	res, err = Interpolate{Names: names, Weights: []float64{0.25, 0.75}, Heldout: held}.Run([]*tables.Tables{general, general}, "self")
	if err != nil {
		t.Fatal(err)
	}
	in, mixed := float64(res.Report.InputPerplexities[0]), float64(*res.Report.MixturePerplexity)
	if math.Abs(mixed/in-1) > 1e-12 {
		t.Errorf("self-interpolation: %v against %v alone", mixed, in)
	}
}

func writeTables(t *testing.T, path string, m *tables.Tables) {
	t.Helper()
	data, err := format.Marshal(m)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
}
