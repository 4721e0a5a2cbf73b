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
// one line per bit width, each point a pruning threshold.
func WriteSVG(w io.Writer, title string, points []Point) error {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = "file size (KiB, log scale)"
	p.Y.Label.Text = "held-out perplexity"
	p.X.Scale = plot.LogScale{}
	p.X.Tick.Marker = plot.LogTicks{Prec: -1}
	p.Add(plotter.NewGrid())
	byBits := map[int]plotter.XYs{}
	for _, pt := range points {
		byBits[pt.Bits] = append(byBits[pt.Bits], plotter.XY{X: float64(pt.FileBytes) / 1024, Y: pt.Perplexity})
	}
	var bits []int
	for b := range byBits {
		bits = append(bits, b)
	}
	sort.Ints(bits)
	for i, b := range bits {
		xys := byBits[b]
		sort.Slice(xys, func(x, y int) bool { return xys[x].X < xys[y].X })
		line, pts, err := plotter.NewLinePoints(xys)
		if err != nil {
			return err
		}
		line.Color = plotColor(i)
		pts.Color = plotColor(i)
		pts.Shape = draw.CircleGlyph{}
		p.Add(line, pts)
		name := "32-bit floats"
		if b > 0 {
			name = fmt.Sprintf("%d-bit codebooks", b)
		}
		p.Legend.Add(name, line, pts)
	}
	p.Legend.Left = true // the curve falls from top left to bottom right
	c := vgsvg.New(7*vg.Inch, 4.5*vg.Inch)
	p.Draw(draw.New(c))
	_, err := c.WriteTo(w)
	return err
}

func plotColor(i int) color.RGBA {
	palette := []color.RGBA{
		{0x1f, 0x77, 0xb4, 0xff}, {0xd6, 0x27, 0x28, 0xff}, {0x2c, 0xa0, 0x2c, 0xff},
		{0xff, 0x7f, 0x0e, 0xff}, {0x94, 0x67, 0xbd, 0xff}, {0x8c, 0x56, 0x4b, 0xff},
	}
	return palette[i%len(palette)]
}
