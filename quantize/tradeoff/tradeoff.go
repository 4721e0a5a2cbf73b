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
	"path/filepath"
	"strconv"
	"strings"

	"ingot/compile/prune"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/format/score"
	"ingot/inspect"
	"ingot/quantize"
)

// Point is one model of the grid.
type Point struct {
	// Model names the model the grid was built from (set by the caller;
	// a chart of several models draws each its own lines).
	Model      string         `json:"model"`
	Threshold  inspect.Number `json:"threshold"` // nats
	Bits       int            `json:"bits"`      // 0: not quantized (32-bit floats)
	NGrams     []int          `json:"ngrams"`
	FileBytes  int64          `json:"file_bytes"`
	Perplexity inspect.Number `json:"perplexity"`
}

// Report is the JSON report of a chart: the models, the directory written
// and every point.
type Report struct {
	Models []string `json:"models"`
	Output string   `json:"output"`
	Points []Point  `json:"points"`
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

// Check refuses a grid that cannot be built: a threshold that is not a
// number >= 0, or a bit width other than 0 (floats) or 2 to 16.
func (opt Options) Check() error {
	if len(opt.Thresholds) == 0 || len(opt.Bits) == 0 {
		return fmt.Errorf("no thresholds or no bit widths")
	}
	for _, th := range opt.Thresholds {
		if !(th >= 0) {
			return fmt.Errorf("threshold %v is not a number >= 0", th)
		}
	}
	for _, b := range opt.Bits {
		if b != 0 && (b < 2 || b > 16) {
			return fmt.Errorf("%d bits outside 2..16 (or 0 for floats)", b)
		}
	}
	return nil
}

// Model is one model of a chart and the name it is drawn under.
type Model struct {
	Name   string
	Tables *tables.Tables
}

// RunAll builds the grid of each model and returns every point, each
// carrying its model's name, the models in the order given.
func RunAll(models []Model, heldout [][]string, opt Options) ([]Point, error) {
	if err := opt.Check(); err != nil {
		return nil, err
	}
	var all []Point
	for _, m := range models {
		if m.Tables.Info.Quantization != nil {
			return nil, fmt.Errorf("%s is quantized already; chart the unquantized model", m.Name)
		}
		ps, err := Run(m.Tables, heldout, opt)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", m.Name, err)
		}
		for i := range ps {
			ps[i].Model = m.Name
		}
		all = append(all, ps...)
	}
	return all, nil
}

// Title is the chart's title for the named models.
func Title(models []string) string {
	names := make([]string, len(models))
	for i, m := range models {
		names[i] = filepath.Base(m)
	}
	return strings.Join(names, ", ") + ": size against perplexity"
}

// Run builds every model of the grid from t and scores heldout (sentences
// as token lists) with each.
func Run(t *tables.Tables, heldout [][]string, opt Options) ([]Point, error) {
	if err := opt.Check(); err != nil {
		return nil, err
	}
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
			pt := Point{Threshold: inspect.Number(th), Bits: bits, NGrams: prune.Kept(keep), FileBytes: int64(len(data)), Perplexity: inspect.Number(sum.Perplexity())}
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
			p.Model, strconv.FormatFloat(float64(p.Threshold), 'g', -1, 64), strconv.Itoa(p.Bits), strings.Join(ng, "/"),
			strconv.FormatInt(p.FileBytes, 10), strconv.FormatFloat(float64(p.Perplexity), 'f', 4, 64),
		})
	}
	cw.Flush()
	return cw.Error()
}

// WriteJSON writes the points as one JSON array on one line, in the one
// style of every JSON the tool prints.
func WriteJSON(w io.Writer, points []Point) error {
	return json.NewEncoder(w).Encode(points)
}
