package tradeoff

import (
	"bytes"
	"strings"
	"testing"

	"ingot/compile/corpus"
	"ingot/compile/counts"
	"ingot/compile/estimate"
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
