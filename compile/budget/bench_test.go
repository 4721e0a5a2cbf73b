package budget

import (
	"fmt"
	"image/color"
	"ingot/compile/fixture"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"ingot/compile/estimate"
	"ingot/compile/prune"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/quantize"
	"ingot/verify"
)

// row is one model of the pruning benchmark.
type row struct {
	method, path string
	divisor      int64
	order        int
	bytes        int64
	perplexity   float64
	// known is the held-out perplexity without the predictions of <unk>.
	known    float64
	verified bool
	problem  string
	// quantCost is, for the compile path, the chosen model's DEV perplexity
	// quantized over unquantized, minus one.
	quantCost float64
	seconds   float64
}

// floor is the smallest file a method can give: unigrams only, 8-bit.
type floor struct {
	method   string
	bytes    int64
	sections map[string]int64
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
// odd ones (TEST) give every perplexity reported. Every pruned file is
// checked by verify (ingot verify's checks). Each method's unpruned model,
// its scores and the sizes measured are shared by the budgets and the two
// paths (package prune's Search remembers sizes; Builder keeps each order's
// estimate). With INGOT_PRUNING_OUT set to a directory it writes pruning.md
// (the tables), pruning.csv and pruning.svg (one curve per method) there:
//
//	INGOT_PRUNING_OUT=/tmp/p go test -run '^$' -bench PruningPaths -benchtime 1x -timeout 3h ./compile/budget
func BenchmarkPruningPaths(b *testing.B) {
	// INGOT_PRUNING_SENTENCES=N runs on the first N sentences only (to try
	// the benchmark quickly; the figures reported use the whole text).
	limit, _ := strconv.Atoi(os.Getenv("INGOT_PRUNING_SENTENCES"))
	train, held := fixture.SOTU(b, limit)
	c := fixture.Counts(b, 5, train)
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
		var floors []floor
		var base int64
		finished := func(r *row, m *tables.Tables) {
			data, err := format.Marshal(m)
			if err != nil {
				b.Fatal(err)
			}
			rep, err := verify.Bytes(data, verify.Options{})
			r.verified = err == nil && rep.OK()
			if !r.verified {
				b.Errorf("%s %s 1/%d: verify: %v %v", r.method, r.path, r.divisor, err, rep.Failed())
			}
			r.bytes, r.perplexity = int64(len(data)), mustPerplexity(b, m, test)
			r.known = perplexityWithoutUnknown(b, m, test)
		}
		for _, method := range []estimate.Method{estimate.KneserNey, estimate.Katz, estimate.Absolute, estimate.WittenBell} {
			began := time.Now()
			opt := estimate.Options{Method: method, Order: 5}
			bld, err := NewBuilder(c, Options{Estimate: opt, Quantize: q8, Heldout: dev})
			if err != nil {
				b.Fatal(err)
			}
			pre, err := bld.prepare(5)
			if err != nil {
				b.Fatal(err)
			}
			t := pre.t
			q, _, err := quantize.Model(t, q8)
			if err != nil {
				b.Fatal(err)
			}
			r := row{method: string(method), path: "unpruned", divisor: 1, order: 5}
			finished(&r, q)
			q = nil
			if base == 0 {
				base = r.bytes
				b.Logf("unpruned 8-bit kneser-ney: %d bytes", base)
			}
			r.seconds = time.Since(began).Seconds()
			rows = append(rows, r)
			progress("%+v", r)

			// The finished model pruned as ingot prune --max-size does.
			scores := pre.scores
			if bld.opt.Ranking != method {
				scores = prune.EntropyScores(t)
			}
			pruned := func(th float64, kp [][]bool) *tables.Tables {
				p := prune.Select(t, kp)
				p.Info.History = append(slices.Clip(p.Info.History), fmt.Sprintf(
					"pruned by relative entropy below %.6g nats (kept %s n-grams per order)", th, joinInts(prune.Kept(kp))))
				return p
			}
			search := prune.NewSearch(t, scores, sizer(q8, pruned))
			for _, d := range divisors {
				began := time.Now()
				r := row{method: string(method), path: "prune", divisor: d, order: 5}
				m, _, _, _, err := fitFinished(search, base/d, func(th float64, kp [][]bool) (*tables.Tables, error) {
					return Finish(pruned(th, kp), q8)
				})
				if err != nil {
					r.problem = err.Error()
				} else {
					finished(&r, m)
				}
				r.seconds = time.Since(began).Seconds()
				progress("%+v", r)
				rows = append(rows, r)
			}
			// The floor: unigrams only (every prunable n-gram removed).
			keep := prune.Keep(t, scores, math.Inf(1))
			m, err := Finish(pruned(math.Inf(1), keep), q8)
			if err != nil {
				b.Fatal(err)
			}
			floors = append(floors, floorOf(b, string(method), m))
			scores, search, m = nil, nil, nil

			// From the counts, as ingot compile --max-size does.
			for _, d := range divisors {
				began := time.Now()
				r := row{method: string(method), path: "compile", divisor: d}
				res, err := bld.Fit(base / d)
				if err != nil {
					r.problem = err.Error()
				} else {
					r.order = res.Chosen.Order
					r.quantCost = res.Perplexity/res.Chosen.Perplexity - 1
					finished(&r, res.Model)
					for _, cand := range res.Candidates {
						progress("  1/%d order %d: %+v", d, cand.Order, cand)
					}
				}
				r.seconds = time.Since(began).Seconds()
				progress("%+v", r)
				rows = append(rows, r)
			}
		}
		for _, r := range rows {
			if r.problem == "" && r.path != "unpruned" {
				b.ReportMetric(r.perplexity, fmt.Sprintf("ppl_%s_%s_1/%d", r.method, r.path, r.divisor))
			}
		}
		if dir := os.Getenv("INGOT_PRUNING_OUT"); dir != "" {
			if err := writePruningResults(dir, rows, floors); err != nil {
				b.Fatal(err)
			}
		}
	}
}

// floorOf lists what the smallest file of a method holds, section by
// section (directory and header under "header").
func floorOf(b *testing.B, method string, m *tables.Tables) floor {
	data, err := format.Marshal(m)
	if err != nil {
		b.Fatal(err)
	}
	f, err := format.FromBytes(data)
	if err != nil {
		b.Fatal(err)
	}
	fl := floor{method: method, bytes: int64(len(data)), sections: map[string]int64{}}
	var inSections int64
	for _, s := range f.Sections() {
		name := s.Kind.String()
		fl.sections[name] += s.Length
		inSections += s.Length
	}
	fl.sections["header, directory and padding"] = fl.bytes - inSections
	return fl
}

// progress prints a line as soon as a model is measured (a benchmark's own
// log appears only at its end, and this one is long).
func progress(format string, a ...any) {
	fmt.Fprintf(os.Stderr, "%s "+format+"\n", append([]any{time.Now().UTC().Format("15:04:05")}, a...)...)
}

func mustPerplexity(b *testing.B, t *tables.Tables, s [][]string) float64 {
	p, err := perplexity(t, s)
	if err != nil {
		b.Fatal(err)
	}
	return p
}

func writePruningResults(dir string, rows []row, floors []floor) error {
	var md, csv strings.Builder
	budgets := []int64{1, 2, 4, 16, 64}
	label := func(d int64) string {
		if d == 1 {
			return "unpruned"
		}
		return fmt.Sprintf("1/%d", d)
	}
	find := func(method, path string, d int64) (row, bool) {
		for _, r := range rows {
			if r.method == method && r.divisor == d && (r.path == path || d == 1 && r.path == "unpruned") {
				return r, true
			}
		}
		return row{}, false
	}
	// The summary: perplexity per method and path, budgets across; the
	// lowest of each budget in bold.
	md.WriteString("| method | path |")
	for _, d := range budgets {
		fmt.Fprintf(&md, " %s |", label(d))
	}
	md.WriteString("\n| --- | --- |" + strings.Repeat(" ---: |", len(budgets)) + "\n")
	best := map[int64]float64{}
	for _, r := range rows {
		if r.problem == "" && (best[r.divisor] == 0 || r.perplexity < best[r.divisor]) {
			best[r.divisor] = r.perplexity
		}
	}
	var methods []string
	for _, r := range rows {
		if !slices.Contains(methods, r.method) {
			methods = append(methods, r.method)
		}
	}
	for _, m := range methods {
		for _, path := range []string{"compile", "prune"} {
			fmt.Fprintf(&md, "| %s | %s |", m, path)
			for _, d := range budgets {
				r, ok := find(m, path, d)
				switch {
				case !ok || r.problem != "":
					md.WriteString(" does not fit |")
				case r.perplexity == best[d]:
					fmt.Fprintf(&md, " **%.2f** |", r.perplexity)
				default:
					fmt.Fprintf(&md, " %.2f |", r.perplexity)
				}
			}
			md.WriteString("\n")
		}
	}
	md.WriteString("\nEvery model, budget by budget (\"order\" is the order written; seconds are this run's wall time for the model):\n\n")
	md.WriteString("| budget | method | path | order | file bytes | held-out perplexity | without <unk> | cost of 8 bits (DEV) | verify | seconds |\n| --- | --- | --- | ---: | ---: | ---: | ---: | ---: | --- | ---: |\n")
	csv.WriteString("method,path,budget_divisor,order,file_bytes,perplexity,verified\n")
	sorted := slices.Clone(rows)
	slices.SortStableFunc(sorted, func(a, b row) int { return int(a.divisor - b.divisor) })
	for _, r := range sorted {
		if r.problem != "" {
			fmt.Fprintf(&md, "| %s | %s | %s | - | - | does not fit: %s | - | - | - | %.0f |\n", label(r.divisor), r.method, r.path, r.problem, r.seconds)
			continue
		}
		v := "pass"
		if !r.verified {
			v = "FAIL"
		}
		cost := "-"
		if r.path == "compile" {
			cost = fmt.Sprintf("%+.2f%%", 100*r.quantCost)
		}
		fmt.Fprintf(&md, "| %s | %s | %s | %d | %d | %.3f | %.3f | %s | %s | %.0f |\n", label(r.divisor), r.method, r.path, r.order, r.bytes, r.perplexity, r.known, cost, v, r.seconds)
		fmt.Fprintf(&csv, "%s,%s,%d,%d,%d,%.4f,%v\n", r.method, r.path, r.divisor, r.order, r.bytes, r.perplexity, r.verified)
	}
	if len(floors) > 0 {
		md.WriteString("\nThe smallest file of each method (unigrams only, 8-bit), section by section, in bytes:\n\n")
		var names []string
		for n := range floors[0].sections {
			names = append(names, n)
		}
		slices.SortFunc(names, func(a, b string) int { return int(floors[0].sections[b] - floors[0].sections[a]) })
		md.WriteString("| method | file |")
		for _, n := range names {
			fmt.Fprintf(&md, " %s |", n)
		}
		md.WriteString("\n| --- | ---: |" + strings.Repeat(" ---: |", len(names)) + "\n")
		for _, f := range floors {
			fmt.Fprintf(&md, "| %s | %d |", f.method, f.bytes)
			for _, n := range names {
				fmt.Fprintf(&md, " %d |", f.sections[n])
			}
			md.WriteString("\n")
		}
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
	if err := pruningChart(f, rows); err != nil {
		f.Close()
		return err
	}
	return f.Close()
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
	// Margins: a fifth of the span more on each side of the log axis and
	// a tenth of the range above and below, so no point sits on an edge.
	p.X.Min /= 1.25
	p.X.Max *= 1.25
	pad := (p.Y.Max - p.Y.Min) / 10
	p.Y.Min -= pad
	p.Y.Max += pad
	// The legend beside the plot area, as wide as its longest entry with
	// room for a third more (a viewer may substitute a wider font).
	legend := p.Legend
	legend.Top, legend.Left = true, true
	var width vg.Length
	for _, s := range series {
		width = max(width, legend.TextStyle.Width(s.name))
	}
	width = width*4/3 + legend.ThumbnailWidth + legend.XOffs + vg.Points(12)
	p.Legend = plot.NewLegend()
	cv := vgsvg.New(9*vg.Inch, 4.5*vg.Inch)
	dc := draw.New(cv)
	p.Draw(draw.Crop(dc, 0, -width, 0, 0))
	legend.Draw(draw.Crop(dc, dc.Max.X-dc.Min.X-width+vg.Points(6), 0, 0, -vg.Points(30)))
	_, err := cv.WriteTo(f)
	return err
}
