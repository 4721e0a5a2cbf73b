package tradeoff

import (
	"fmt"
	"image/color"
	"io"
	"math"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"
)

// WriteSVG draws file size (KiB, logarithmic) against held-out perplexity,
// one line per bit width, each in its own colour, dash pattern and point
// shape; the points of the first line carry their pruning threshold; the
// legend sits to the right of the plot area, and the axes leave a margin
// around every point.
//
// Points of several models (told apart by Point.Model) are drawn in one
// chart: each model in its own colour, each bit width in its own dash
// pattern and point shape. A budget above 0 (bytes) is drawn as a vertical
// line: the points left of it fit.
func WriteSVG(w io.Writer, title string, points []Point, budget int64) error {
	c := vgsvg.New(8*vg.Inch, 4.5*vg.Inch)
	if err := drawChart(draw.New(c), title, points, budget); err != nil {
		return err
	}
	_, err := c.WriteTo(w)
	return err
}

func drawChart(dc draw.Canvas, title string, points []Point, budget int64) error {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = "file size (KiB, log scale)"
	p.Y.Label.Text = "held-out perplexity"
	p.X.Scale = plot.LogScale{}
	p.X.Tick.Marker = sizeTicks{}
	p.Add(plotter.NewGrid())
	type key struct {
		model string
		bits  int
	}
	series := map[key]plotter.XYs{}
	labels := map[key][]string{}
	var models, entries []string
	for _, pt := range points {
		k := key{pt.Model, pt.Bits}
		if !slices.Contains(models, pt.Model) {
			models = append(models, pt.Model)
		}
		series[k] = append(series[k], plotter.XY{X: float64(pt.FileBytes) / 1024, Y: float64(pt.Perplexity)})
		labels[k] = append(labels[k], fmt.Sprintf("%g", float64(pt.Threshold)))
	}
	var bits []int
	for k := range series {
		if !slices.Contains(bits, k.bits) {
			bits = append(bits, k.bits)
		}
	}
	sort.Ints(bits)
	dashes := [][]vg.Length{nil, {vg.Points(6), vg.Points(3)}, {vg.Points(2), vg.Points(2)}, {vg.Points(8), vg.Points(3), vg.Points(2), vg.Points(3)}}
	shapes := []draw.GlyphDrawer{draw.CircleGlyph{}, draw.TriangleGlyph{}, draw.SquareGlyph{}, draw.CrossGlyph{}, draw.PlusGlyph{}, draw.RingGlyph{}}
	for mi, model := range models {
		for i, b := range bits {
			k := key{model, b}
			xys, ok := series[k]
			if !ok {
				continue
			}
			names := labels[k]
			order := make([]int, len(xys))
			for j := range order {
				order[j] = j
			}
			sort.SliceStable(order, func(x, y int) bool { return xys[order[x]].X < xys[order[y]].X })
			sorted, sortedNames := make(plotter.XYs, len(xys)), make([]string, len(xys))
			for j, o := range order {
				sorted[j], sortedNames[j] = xys[o], names[o]
			}
			line, pts, err := plotter.NewLinePoints(sorted)
			if err != nil {
				return err
			}
			col := plotColor(i)
			if len(models) > 1 {
				col = plotColor(mi)
			}
			line.Color, pts.Color = col, col
			line.Width = vg.Points(1.5)
			line.Dashes = dashes[i%len(dashes)]
			pts.Shape = shapes[i%len(shapes)]
			pts.Radius = vg.Points(3.5)
			p.Add(line, pts)
			name := "32-bit floats"
			if b > 0 {
				name = fmt.Sprintf("%d-bit codebooks", b)
			}
			if len(models) > 1 {
				short := "floats"
				if b > 0 {
					short = fmt.Sprintf("%d-bit", b)
				}
				name = strings.TrimSuffix(filepath.Base(model), ".ingot") + ", " + short
			}
			p.Legend.Add(name, line, pts)
			entries = append(entries, name)
			if mi == 0 && i == 0 {
				// Alternately above and below their points, so that
				// the labels of neighbouring points do not meet.
				at, names := mergeLabels(sorted, sortedNames)
				for side := 0; side < 2; side++ {
					var xys plotter.XYs
					var texts []string
					for j := side; j < len(at); j += 2 {
						xys, texts = append(xys, at[j]), append(texts, names[j])
					}
					if len(xys) == 0 {
						continue
					}
					lb, err := plotter.NewLabels(plotter.XYLabels{XYs: xys, Labels: texts})
					if err != nil {
						return err
					}
					for j := range lb.TextStyle {
						lb.TextStyle[j].XAlign = draw.XLeft
						lb.TextStyle[j].YAlign = draw.YBottom
						lb.Offset = vg.Point{X: vg.Points(4), Y: vg.Points(3)}
						if side == 1 {
							lb.TextStyle[j].YAlign = draw.YTop
							lb.Offset.Y = -vg.Points(4)
						}
					}
					p.Add(lb)
				}
			}
		}
	}
	// Margins: a sixth of a decade left and right of the points on the
	// log axis (room for the labels too), a tenth of the range above and
	// below.
	p.X.Min /= 1.5
	p.X.Max *= 1.5
	pad := (p.Y.Max - p.Y.Min) / 10
	if pad == 0 {
		pad = 1
	}
	p.Y.Min -= pad
	p.Y.Max += pad
	if budget > 0 {
		x := float64(budget) / 1024
		p.X.Min, p.X.Max = min(p.X.Min, x/1.5), max(p.X.Max, x*1.5)
		bl, err := plotter.NewLine(plotter.XYs{{X: x, Y: p.Y.Min}, {X: x, Y: p.Y.Max}})
		if err != nil {
			return err
		}
		bl.Color = color.RGBA{0x55, 0x55, 0x55, 0xff}
		bl.Dashes = []vg.Length{vg.Points(1), vg.Points(3)}
		p.Add(bl)
		name := fmt.Sprintf("budget %.0f KiB", x)
		p.Legend.Add(name, bl)
		entries = append(entries, name)
	}
	p.Legend.Top = true
	p.Legend.Left = true
	p.Legend.Add("")
	p.Legend.Add("labels: threshold (nats)")
	entries = append(entries, "labels: threshold (nats)")
	// The legend is drawn beside the plot area, not inside it, as wide as
	// its longest entry: measured in the font the file names, with room
	// for a third more, as a viewer without that font substitutes a wider
	// one (DejaVu Serif for Liberation Serif: about 25% wider).
	legend := p.Legend
	var width vg.Length
	for _, e := range entries {
		width = max(width, legend.TextStyle.Width(e))
	}
	width = width*4/3 + legend.ThumbnailWidth + legend.XOffs + vg.Points(12)
	p.Legend = plot.NewLegend()
	p.Draw(draw.Crop(dc, 0, -width, 0, 0))
	legend.Draw(draw.Crop(dc, dc.Max.X-dc.Min.X-width+vg.Points(6), 0, 0, -vg.Points(30)))
	return nil
}

// mergeLabels gives points drawn at one place (sizes and perplexities
// equal to 4 digits: thresholds too small to remove anything) one label,
// "smallest to largest" threshold, so that labels never print over each other.
// The points are sorted by size.
func mergeLabels(xys plotter.XYs, names []string) (plotter.XYs, []string) {
	var at plotter.XYs
	var out []string
	same := func(a, b plotter.XY) bool {
		return math.Abs(a.X-b.X) <= 1e-4*math.Abs(a.X) && math.Abs(a.Y-b.Y) <= 1e-4*math.Abs(a.Y)
	}
	for i := 0; i < len(xys); {
		j := i + 1
		for j < len(xys) && same(xys[i], xys[j]) {
			j++
		}
		label := names[i]
		if j-i > 1 {
			lo, hi := names[i], names[i]
			for _, n := range names[i+1 : j] {
				if less(n, lo) {
					lo = n
				}
				if less(hi, n) {
					hi = n
				}
			}
			label = lo + " to " + hi
		}
		at = append(at, xys[i])
		out = append(out, label)
		i = j
	}
	return at, out
}

// less orders two thresholds written with %g.
func less(a, b string) bool {
	x, _ := strconv.ParseFloat(a, 64)
	y, _ := strconv.ParseFloat(b, 64)
	return x < y
}

// sizeTicks marks a logarithmic size axis at 1, 2 and 5 times each power
// of ten, labelled, with unlabelled minor ticks between, so that a range
// narrower than a decade still carries numbers.
type sizeTicks struct{}

// Ticks implements plot.Ticker.
func (sizeTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(lo > 0) || !(hi > lo) {
		return nil
	}
	var ticks []plot.Tick
	for e := math.Floor(math.Log10(lo)); math.Pow(10, e) <= hi; e++ {
		base := math.Pow(10, e)
		for m := 1; m <= 9; m++ {
			v := float64(m) * base
			if v < lo || v > hi {
				continue
			}
			t := plot.Tick{Value: v}
			if m == 1 || m == 2 || m == 5 {
				t.Label = strconv.FormatFloat(v, 'g', -1, 64)
			}
			ticks = append(ticks, t)
		}
	}
	return ticks
}

func plotColor(i int) color.RGBA {
	palette := []color.RGBA{
		{0x1f, 0x77, 0xb4, 0xff}, {0xd6, 0x27, 0x28, 0xff}, {0x2c, 0xa0, 0x2c, 0xff},
		{0xff, 0x7f, 0x0e, 0xff}, {0x94, 0x67, 0xbd, 0xff}, {0x8c, 0x56, 0x4b, 0xff},
	}
	return palette[i%len(palette)]
}
