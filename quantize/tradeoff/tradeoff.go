// Package tradeoff measures what shrinking a model costs: for a grid of
// relative-entropy pruning thresholds and quantization bit widths it builds
// each model in memory and reports its file size and held-out perplexity,
// as a table (CSV, JSON) and a plot of size against perplexity.
package tradeoff

import (
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"strconv"
	"strings"

	"ingot/compile/prune"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/format/score"
	"ingot/quantize"
)

// Point is one model of the grid.
type Point struct {
	// Model names the model the grid was built from (set by the caller;
	// a chart of several models draws each its own lines).
	Model      string  `json:"model"`
	Threshold  float64 `json:"threshold"`
	Bits       int     `json:"bits"` // 0: not quantized (32-bit floats)
	NGrams     []int   `json:"ngrams_per_order"`
	FileBytes  int64   `json:"file_bytes"`
	Perplexity float64 `json:"perplexity"`
}

// Options is the grid. A threshold of 0 means no pruning; a bit width of 0
// means no quantization.
type Options struct {
	Thresholds []float64
	Bits       []int
	Trainer    quantize.Trainer
	// Progress, when set, is called after each point.
	Progress func(done, total int, p Point)
}

// Run builds every model of the grid from t and scores heldout (sentences
// as token lists) with each.
func Run(t *tables.Tables, heldout [][]string, opt Options) ([]Point, error) {
	scores := prune.EntropyScores(t)
	var out []Point
	total := len(opt.Thresholds) * len(opt.Bits)
	for _, th := range opt.Thresholds {
		keep := prune.Keep(t, scores, th)
		p := prune.Apply(t, keep)
		for _, bits := range opt.Bits {
			m := p
			if bits > 0 {
				var err error
				if m, _, err = quantize.Model(p, quantize.Options{Bits: bits, Trainer: opt.Trainer}); err != nil {
					return nil, fmt.Errorf("threshold %g, %d bits: %w", th, bits, err)
				}
			}
			data, err := format.Marshal(m)
			if err != nil {
				return nil, err
			}
			model, err := format.FromBytes(data)
			if err != nil {
				return nil, err
			}
			sc := score.NewScorer(model)
			var sum score.Summary
			for _, s := range heldout {
				sum.Add(sc.Score(s))
			}
			pt := Point{Threshold: th, Bits: bits, NGrams: prune.Kept(keep), FileBytes: int64(len(data)), Perplexity: sum.Perplexity()}
			out = append(out, pt)
			if opt.Progress != nil {
				opt.Progress(len(out), total, pt)
			}
		}
	}
	return out, nil
}

// WriteCSV writes the points as CSV with a header row.
func WriteCSV(w io.Writer, points []Point) error {
	cw := csv.NewWriter(w)
	cw.Write([]string{"model", "threshold", "bits", "ngrams", "file_bytes", "perplexity"})
	for _, p := range points {
		ng := make([]string, len(p.NGrams))
		for i, n := range p.NGrams {
			ng[i] = strconv.Itoa(n)
		}
		cw.Write([]string{
			p.Model, strconv.FormatFloat(p.Threshold, 'g', -1, 64), strconv.Itoa(p.Bits), strings.Join(ng, "/"),
			strconv.FormatInt(p.FileBytes, 10), strconv.FormatFloat(p.Perplexity, 'f', 4, 64),
		})
	}
	cw.Flush()
	return cw.Error()
}

// WriteJSON writes the points as one JSON array.
func WriteJSON(w io.Writer, points []Point) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(points)
}
