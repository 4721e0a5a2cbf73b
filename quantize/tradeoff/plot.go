package tradeoff

import (
	"fmt"
	"image/color"
	"io"
	"sort"

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
func WriteSVG(w io.Writer, title string, points []Point) error {
	c := vgsvg.New(8*vg.Inch, 4.5*vg.Inch)
	if err := drawChart(draw.New(c), title, points); err != nil {
		return err
	}
	_, err := c.WriteTo(w)
	return err
}

// legendWidth is the part of the canvas, on the right, that holds the
// legend.
const legendWidth = 2 * vg.Inch

func drawChart(dc draw.Canvas, title string, points []Point) error {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = "file size (KiB, log scale)"
	p.Y.Label.Text = "held-out perplexity"
	p.X.Scale = plot.LogScale{}
	p.X.Tick.Marker = plot.LogTicks{Prec: -1}
	p.Add(plotter.NewGrid())
	byBits := map[int]plotter.XYs{}
	labels := map[int][]string{}
	for _, pt := range points {
		byBits[pt.Bits] = append(byBits[pt.Bits], plotter.XY{X: float64(pt.FileBytes) / 1024, Y: pt.Perplexity})
		labels[pt.Bits] = append(labels[pt.Bits], fmt.Sprintf("%g", pt.Threshold))
	}
	var bits []int
	for b := range byBits {
		bits = append(bits, b)
	}
	sort.Ints(bits)
	dashes := [][]vg.Length{nil, {vg.Points(6), vg.Points(3)}, {vg.Points(2), vg.Points(2)}, {vg.Points(8), vg.Points(3), vg.Points(2), vg.Points(3)}}
	shapes := []draw.GlyphDrawer{draw.CircleGlyph{}, draw.TriangleGlyph{}, draw.SquareGlyph{}, draw.CrossGlyph{}, draw.PlusGlyph{}, draw.RingGlyph{}}
	for i, b := range bits {
		xys := byBits[b]
		names := labels[b]
		order := make([]int, len(xys))
		for k := range order {
			order[k] = k
		}
		sort.SliceStable(order, func(x, y int) bool { return xys[order[x]].X < xys[order[y]].X })
		sorted, sortedNames := make(plotter.XYs, len(xys)), make([]string, len(xys))
		for k, o := range order {
			sorted[k], sortedNames[k] = xys[o], names[o]
		}
		line, pts, err := plotter.NewLinePoints(sorted)
		if err != nil {
			return err
		}
		line.Color = plotColor(i)
		line.Width = vg.Points(1.5)
		line.Dashes = dashes[i%len(dashes)]
		pts.Color = plotColor(i)
		pts.Shape = shapes[i%len(shapes)]
		pts.Radius = vg.Points(3.5)
		p.Add(line, pts)
		name := "32-bit floats"
		if b > 0 {
			name = fmt.Sprintf("%d-bit codebooks", b)
		}
		p.Legend.Add(name, line, pts)
		if i == 0 {
			lb, err := plotter.NewLabels(plotter.XYLabels{XYs: sorted, Labels: sortedNames})
			if err != nil {
				return err
			}
			for k := range lb.TextStyle {
				lb.TextStyle[k].XAlign = draw.XLeft
				lb.TextStyle[k].YAlign = draw.YBottom
			}
			lb.Offset = vg.Point{X: vg.Points(4), Y: vg.Points(3)}
			p.Add(lb)
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
