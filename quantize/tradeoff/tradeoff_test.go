package tradeoff

import (
	"bytes"
	"encoding/json"
	"math"
	"strings"
	"testing"

	"ingot/compile/corpus"
	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"ingot/inspect"
	"ingot/quantize"
)

// More pruning never makes the file larger, and quantizing makes it
// smaller (checked on State of the Union text); the table and chart are
// written.
func TestGridIsMonotoneInSize(t *testing.T) {
	all, err := corpus.SOTU()
	if err != nil {
		t.Fatal(err)
	}
	train, held := corpus.Split(all, 1500)
	c, _ := counts.NewCounter(3)
	for _, s := range train {
		c.AddSentence(strings.Fields(s))
	}
	m, _, err := estimate.Estimate(c.Counts(1), estimate.Options{Method: estimate.KneserNey, Order: 3})
	if err != nil {
		t.Fatal(err)
	}
	var heldout [][]string
	for _, s := range held {
		heldout = append(heldout, strings.Fields(s))
	}
	points, err := Run(m, heldout, Options{Thresholds: []float64{0, 1e-6, 1e-5}, Bits: []int{0, 8}, Trainer: quantize.LeastSquares})
	if err != nil {
		t.Fatal(err)
	}
	if len(points) != 6 {
		t.Fatalf("%d points", len(points))
	}
	for i := 2; i < len(points); i++ {
		if points[i].FileBytes > points[i-2].FileBytes {
			t.Errorf("threshold %g gives %d bytes, more than %d at %g", points[i].Threshold, points[i].FileBytes, points[i-2].FileBytes, points[i-2].Threshold)
		}
	}
	if points[1].FileBytes >= points[0].FileBytes {
		t.Errorf("8-bit model (%d bytes) not smaller than floats (%d)", points[1].FileBytes, points[0].FileBytes)
	}
	var csvOut, svgOut bytes.Buffer
	if err := WriteCSV(&csvOut, points); err != nil || strings.Count(csvOut.String(), "\n") != 7 {
		t.Errorf("csv: %v\n%s", err, csvOut.String())
	}
	if err := WriteSVG(&svgOut, "test", points, 0); err != nil || !strings.Contains(svgOut.String(), "<svg") {
		t.Errorf("svg: %v", err)
	}
}

// A grid with a bad threshold or bit width is refused before any work; a
// chart of several models names each point's model; a quantized model is
// refused; a threshold of infinity (every n-gram above unigrams dropped)
// writes null in JSON, not an error.
func TestRunAllAndCheck(t *testing.T) {
	for _, bad := range []Options{
		{Thresholds: []float64{-1}, Bits: []int{0}},
		{Thresholds: []float64{math.NaN()}, Bits: []int{0}},
		{Thresholds: []float64{0}, Bits: []int{1}},
		{Thresholds: []float64{0}, Bits: []int{17}},
		{Thresholds: nil, Bits: []int{8}},
	} {
		if err := bad.Check(); err == nil {
			t.Errorf("%+v accepted", bad)
		}
		if _, err := RunAll(nil, nil, bad); err == nil {
			t.Errorf("RunAll with %+v accepted", bad)
		}
	}
	if err := (Options{Thresholds: []float64{0, math.Inf(1)}, Bits: []int{0, 2, 16}}).Check(); err != nil {
		t.Errorf("a good grid refused: %v", err)
	}
	demo := fixture.Demo(t)
	a := fixture.Estimate(t, demo[:300], 2, estimate.Options{Method: estimate.KneserNey})
	b := fixture.Estimate(t, demo[:300], 2, estimate.Options{Method: estimate.Katz})
	held := fixture.Tokens(demo[300:340])
	opt := Options{Thresholds: []float64{0, math.Inf(1)}, Bits: []int{0, 8}, Trainer: quantize.LeastSquares}
	points, err := RunAll([]Model{{"dir/a.ingot", a}, {"b.ingot", b}}, held, opt)
	if err != nil {
		t.Fatal(err)
	}
	if len(points) != 8 || points[0].Model != "dir/a.ingot" || points[3].Model != "dir/a.ingot" || points[4].Model != "b.ingot" {
		t.Fatalf("points %+v", points)
	}
	if got := Title([]string{"dir/a.ingot", "b.ingot"}); got != "a.ingot, b.ingot: size against perplexity" {
		t.Errorf("title %q", got)
	}
	var js bytes.Buffer
	if err := json.NewEncoder(&js).Encode(Report{Models: []string{"a"}, Output: "o", Points: points}); err != nil || !strings.Contains(js.String(), `"threshold":null`) {
		t.Errorf("JSON of an infinite threshold: %v %s", err, js.String())
	}
	q, _, err := quantize.Model(a, quantize.Options{Bits: 8, Trainer: quantize.LeastSquares})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := RunAll([]Model{{"q.ingot", q}}, held, opt); err == nil || !strings.Contains(err.Error(), "q.ingot is quantized") {
		t.Errorf("a quantized model: %v", err)
	}
}

// TestWriteJSONOneLine checks tradeoff.json is written as the reports are
// printed: one line (README, JSON keys), non-finite numbers as null.
func TestWriteJSONOneLine(t *testing.T) {
	var b bytes.Buffer
	pts := []Point{{Model: "a.ingot", Threshold: 1e-8, Bits: 8, NGrams: []int{3, 2}, FileBytes: 100, Perplexity: inspect.Number(math.Inf(1))}}
	if err := WriteJSON(&b, pts); err != nil {
		t.Fatal(err)
	}
	got := b.String()
	if strings.Count(got, "\n") != 1 || !strings.HasSuffix(got, "\n") {
		t.Fatalf("tradeoff.json is not one line: %q", got)
	}
	if !strings.Contains(got, `"perplexity":null`) || !strings.Contains(got, `"ngrams":[3,2]`) {
		t.Fatalf("tradeoff.json = %q, want ngrams [3,2] and perplexity null", got)
	}
}
