package tradeoff

import (
	"fmt"
	"image/color"
	"io"
	"path/filepath"
	"slices"
	"sort"
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

// legendWidth is the part of the canvas, on the right, that holds the
// legend.
const legendWidth = 2.1 * vg.Inch

func drawChart(dc draw.Canvas, title string, points []Point, budget int64) error {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = "file size (KiB, log scale)"
	p.Y.Label.Text = "held-out perplexity"
	p.X.Scale = plot.LogScale{}
	p.X.Tick.Marker = plot.LogTicks{Prec: -1}
	p.Add(plotter.NewGrid())
	type key struct {
		model string
		bits  int
	}
	series := map[key]plotter.XYs{}
	labels := map[key][]string{}
	var models []string
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
			if mi == 0 && i == 0 {
				lb, err := plotter.NewLabels(plotter.XYLabels{XYs: sorted, Labels: sortedNames})
				if err != nil {
					return err
				}
				for j := range lb.TextStyle {
					lb.TextStyle[j].XAlign = draw.XLeft
					lb.TextStyle[j].YAlign = draw.YBottom
				}
				lb.Offset = vg.Point{X: vg.Points(4), Y: vg.Points(3)}
				p.Add(lb)
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
		p.Legend.Add(fmt.Sprintf("budget %.0f KiB", x), bl)
	}
	p.Legend.Top = true
	p.Legend.Left = true
	p.Legend.Add("")
	p.Legend.Add("labels: threshold (nats)")
	// The legend is drawn beside the plot area, not inside it.
	legend := p.Legend
	p.Legend = plot.NewLegend()
	p.Draw(draw.Crop(dc, 0, -legendWidth, 0, 0))
	legend.Draw(draw.Crop(dc, dc.Max.X-dc.Min.X-legendWidth+vg.Points(6), 0, 0, -vg.Points(30)))
	return nil
}

func plotColor(i int) color.RGBA {
	palette := []color.RGBA{
		{0x1f, 0x77, 0xb4, 0xff}, {0xd6, 0x27, 0x28, 0xff}, {0x2c, 0xa0, 0x2c, 0xff},
		{0xff, 0x7f, 0x0e, 0xff}, {0x94, 0x67, 0xbd, 0xff}, {0x8c, 0x56, 0x4b, 0xff},
	}
	return palette[i%len(palette)]
}
