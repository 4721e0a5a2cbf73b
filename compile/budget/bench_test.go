package budget

import (
	"fmt"
	"image/color"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"ingot/compile/corpus"
	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/prune"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/quantize"
)

// row is one model of the pruning benchmark.
type row struct {
	method, path string
	divisor      int64
	order        int
	bytes        int64
	perplexity   float64
	problem      string
}

// BenchmarkPruningPaths measures, on the 5-gram models of the full State of
// the Union text (every tenth sentence held out), held-out perplexity at
// budgets of 1/2, 1/4, 1/16 and 1/64 of the unpruned 8-bit Kneser-Ney file,
// 8-bit, for the four methods pruned two ways:
//
//   - "prune": relative-entropy pruning of the finished model (what ingot
//     prune --max-size SIZE --bits 8 does);
//   - "compile": from the counts (what ingot compile --max-size SIZE --bits 8
//     --heldout DEV does): ranked on the default ranking model, Kneser-Ney
//     estimated again on the survivors, the order chosen on DEV.
//
// The held-out sentences are split in two: even ones (DEV) choose the order,
// odd ones (TEST) give every perplexity reported. With INGOT_PRUNING_OUT set
// to a directory it writes pruning.md (the table), pruning.csv and
// pruning.svg (one curve per method) there. Long (on 2 cores shared with
// other work it took 15 minutes to reach the first budget); run it alone:
//
//	INGOT_PRUNING_OUT=/tmp/p go test -run '^$' -bench PruningPaths -benchtime 1x -timeout 3h ./compile/budget
func BenchmarkPruningPaths(b *testing.B) {
	all, err := corpus.SOTU()
	if err != nil {
		b.Fatal(err)
	}
	train, held := corpus.Split(all, 0)
	cn, _ := counts.NewCounter(5)
	for _, s := range train {
		cn.AddSentence(strings.Fields(s))
	}
	c := cn.Counts(1)
	var dev, test [][]string
	for i, s := range held {
		if i%2 == 0 {
			dev = append(dev, strings.Fields(s))
		} else {
			test = append(test, strings.Fields(s))
		}
	}
	q8 := quantize.Options{Bits: 8, Trainer: quantize.LeastSquares}
	divisors := []int64{2, 4, 16, 64}
	for range b.N {
		var rows []row
		var base int64
		for _, method := range []estimate.Method{estimate.KneserNey, estimate.Katz, estimate.Absolute, estimate.WittenBell} {
			opt := estimate.Options{Method: method, Order: 5}
			t, _, err := estimate.Estimate(c, opt)
			if err != nil {
				b.Fatal(err)
			}
			if base == 0 {
				q, _, err := quantize.Model(t, q8)
				if err != nil {
					b.Fatal(err)
				}
				base = sizeOf(b, q)
				rows = append(rows, row{method: string(method), path: "unpruned", divisor: 1, order: 5, bytes: base, perplexity: mustPerplexity(b, q, test)})
				b.Logf("unpruned 8-bit kneser-ney: %d bytes", base)
			}
			scores := prune.EntropyScores(t)
			for _, d := range divisors {
				r := row{method: string(method), path: "prune", divisor: d, order: 5}
				_, keep, _, err := prune.Fit(t, scores, base/d, func(_ float64, kp [][]bool) (int64, error) {
					return format.Size(quantize.Placeholder(prune.Select(t, kp), q8))
				})
				if err != nil {
					r.problem = err.Error()
				} else {
					q, _, err := quantize.Model(prune.Apply(t, keep), q8)
					if err != nil {
						b.Fatal(err)
					}
					r.bytes, r.perplexity = sizeOf(b, q), mustPerplexity(b, q, test)
				}
				b.Logf("%+v", r)
				rows = append(rows, r)
			}
			t, scores = nil, nil
			bld, err := NewBuilder(c, Options{Estimate: opt, Quantize: q8, Heldout: dev})
			if err != nil {
				b.Fatal(err)
			}
			for _, d := range divisors {
				r := row{method: string(method), path: "compile", divisor: d}
				res, err := bld.Fit(base / d)
				if err != nil {
					r.problem = err.Error()
				} else {
					r.order, r.bytes, r.perplexity = res.Chosen.Order, res.Chosen.FileBytes, mustPerplexity(b, res.Model, test)
				}
				b.Logf("%+v", r)
				rows = append(rows, r)
			}
		}
		for _, r := range rows {
			if r.problem == "" && r.path != "unpruned" {
				b.ReportMetric(r.perplexity, fmt.Sprintf("ppl_%s_%s_1/%d", r.method, r.path, r.divisor))
			}
		}
		if dir := os.Getenv("INGOT_PRUNING_OUT"); dir != "" {
			if err := writePruningResults(dir, rows); err != nil {
				b.Fatal(err)
			}
		}
	}
}

func mustPerplexity(b *testing.B, t *tables.Tables, s [][]string) float64 {
	p, err := perplexity(t, s)
	if err != nil {
		b.Fatal(err)
	}
	return p
}

func writePruningResults(dir string, rows []row) error {
	var md, csv strings.Builder
	md.WriteString("| budget | method | path | order | file | held-out perplexity |\n| --- | --- | --- | ---: | ---: | ---: |\n")
	csv.WriteString("method,path,budget_divisor,order,file_bytes,perplexity\n")
	sorted := slices.Clone(rows)
	slices.SortStableFunc(sorted, func(a, b row) int { return int(a.divisor - b.divisor) })
	for _, r := range sorted {
		budget := "unpruned"
		if r.divisor > 1 {
			budget = fmt.Sprintf("1/%d", r.divisor)
		}
		if r.problem != "" {
			fmt.Fprintf(&md, "| %s | %s | %s | - | - | does not fit: %s |\n", budget, r.method, r.path, r.problem)
			continue
		}
		fmt.Fprintf(&md, "| %s | %s | %s | %d | %.2f MB | %.3f |\n", budget, r.method, r.path, r.order, float64(r.bytes)/1e6, r.perplexity)
		fmt.Fprintf(&csv, "%s,%s,%d,%d,%d,%.4f\n", r.method, r.path, r.divisor, r.order, r.bytes, r.perplexity)
	}
	if err := os.WriteFile(filepath.Join(dir, "pruning.md"), []byte(md.String()), 0o644); err != nil {
		return err
	}
	if err := os.WriteFile(filepath.Join(dir, "pruning.csv"), []byte(csv.String()), 0o644); err != nil {
		return err
	}
	f, err := os.Create(filepath.Join(dir, "pruning.svg"))
	if err != nil {
		return err
	}
	defer f.Close()
	return pruningChart(f, rows)
}

// pruningChart draws file size against held-out perplexity, one curve per
// method for the path from the counts (solid) and, dashed, Kneser-Ney
// pruned as a finished model.
func pruningChart(f *os.File, rows []row) error {
	p := plot.New()
	p.Title.Text = "State of the Union, 5-gram, 8-bit: pruned to a budget"
	p.X.Label.Text = "file size (KiB, log scale)"
	p.Y.Label.Text = "held-out perplexity"
	p.X.Scale = plot.LogScale{}
	p.X.Tick.Marker = plot.LogTicks{Prec: -1}
	p.Add(plotter.NewGrid())
	palette := []color.RGBA{{0x1f, 0x77, 0xb4, 0xff}, {0xd6, 0x27, 0x28, 0xff}, {0x2c, 0xa0, 0x2c, 0xff}, {0xff, 0x7f, 0x0e, 0xff}}
	series := []struct{ method, path, name string }{
		{"kneser-ney", "compile", "kneser-ney (compile --max-size)"},
		{"katz", "compile", "katz"},
		{"absolute", "compile", "absolute"},
		{"witten-bell", "compile", "witten-bell"},
		{"kneser-ney", "prune", "kneser-ney (prune a finished model)"},
	}
	for i, s := range series {
		var xys plotter.XYs
		for _, r := range rows {
			if r.method == s.method && (r.path == s.path || r.path == "unpruned") && r.problem == "" {
				xys = append(xys, plotter.XY{X: float64(r.bytes) / 1024, Y: r.perplexity})
			}
		}
		if len(xys) == 0 {
			continue
		}
		slices.SortFunc(xys, func(a, b plotter.XY) int {
			if a.X < b.X {
				return -1
			}
			return 1
		})
		line, pts, err := plotter.NewLinePoints(xys)
		if err != nil {
			return err
		}
		col := palette[i%len(palette)]
		line.Color, pts.Color, pts.Shape = col, col, draw.CircleGlyph{}
		if s.path == "prune" {
			line.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
		}
		p.Add(line, pts)
		p.Legend.Add(s.name, line, pts)
	}
	p.Legend.Top = true
	cv := vgsvg.New(7*vg.Inch, 4.5*vg.Inch)
	p.Draw(draw.New(cv))
	_, err := cv.WriteTo(f)
	return err
}
