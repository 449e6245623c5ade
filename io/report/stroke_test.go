package report

import (
	"bytes"
	"fmt"
	"image"
	"image/color"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// The long lines of the figure files are stroked in bands of pixel columns
// (pixelCanvas.strokeLines); the reference is the drawing context itself
// (git.sr.ht/~sbinet/gg v0.7.0, which gonum/plot's raster canvas draws
// with): draw.Canvas.StrokeLines on a canvas of the same size must give the
// same pixels, byte for byte. Lines: random walks across the whole width
// (ascending x, as spectra and profiles; also turning back in x), steps as
// small as a hundredth of a pixel (the points the context leaves out),
// points beyond the image's edges, solid and with the report's dash
// patterns and offsets, the report's widths, several lines in one call
// drawn over each other.
func TestStrokeLinesAsTheDrawingContext(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	w, h := figW, figH
	walk := func(n int, turning bool) []vg.Point {
		ps := make([]vg.Point, n)
		x, y := vg.Length(rng.Float64())*w/20-w/40, h/2
		for i := range ps {
			dx := w / vg.Length(n) * vg.Length(1+0.3*rng.NormFloat64())
			if turning && rng.IntN(5) == 0 {
				dx = -dx
			}
			if rng.IntN(8) == 0 {
				dx = w / vg.Length(n) / 1000 // a point the context leaves out
			}
			x += dx
			y += vg.Length(rng.NormFloat64()) * h / 30
			if rng.IntN(50) == 0 {
				y = h * vg.Length(1.1*rng.Float64()-0.05) // a spike, at times off the image
			}
			ps[i] = vg.Point{X: x, Y: y}
		}
		return ps
	}
	styles := []draw.LineStyle{
		{Color: componentColour(0), Width: vg.Points(1.4)},
		{Color: componentColour(1), Width: vg.Points(1.4), Dashes: lengths(dashOf(1))},
		{Color: componentColour(2), Width: vg.Points(0.9), Dashes: lengths(dashOf(3)), DashOffs: vg.Points(2.5)},
		{Color: color.RGBA{R: 40, G: 90, B: 160, A: 200}, Width: vg.Points(0.8), Dashes: lengths([]float64{5})},
		{Color: componentColour(4), Width: vg.Points(1.6), Dashes: lengths(dashOf(6)), DashOffs: vg.Points(-7)},
		{Color: nil, Width: vg.Points(0.4)},
	}
	for k, sty := range styles {
		for _, n := range []int{3, 40, 400, 1900} {
			var lines [][]vg.Point
			for range 1 + n%3 {
				lines = append(lines, walk(n, k%2 == 1))
			}
			t.Run(fmt.Sprintf("style %d, %d points", k, n), func(t *testing.T) {
				want, wantImg := rasterCanvas(w, h, nil)
				wc := draw.New(want)
				wc.StrokeLines(sty, lines...)
				got, gotImg := rasterCanvas(w, h, nil)
				got.strokeLines(draw.New(got), sty, lines)
				samePixels(t, gotImg, wantImg, "the drawing context's stroke")
			})
		}
	}
}

// refLine is an edgeLine whose glyph boxes are gonum/plot's own for a line
// (plotter.Line: one per point), the reference for edgeLine's four.
type refLine struct{ edgeLine }

func (l refLine) GlyphBoxes(plt *plot.Plot) []plot.GlyphBox { return l.Line.GlyphBoxes(plt) }

// edgeLine's glyph boxes pad the plot as gonum/plot's boxes for the same
// line do: a plot of lines drawn with each gives the same SVG bytes, drawn
// again (the boxes kept) and after the axes' ranges change (lines then
// partly outside them), on a forward and an inverted x axis.
func TestEdgeLineBoxesPadAsTheLines(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	var lines []*plotter.Line
	for range 3 {
		xy := make(plotter.XYs, 500)
		for i := range xy {
			xy[i] = plotter.XY{X: float64(i) + rng.Float64(), Y: rng.NormFloat64() * 40}
		}
		l, err := plotter.NewLine(xy)
		if err != nil {
			t.Fatal(err)
		}
		l.Width = vg.Points(1 + 5*rng.Float64()) // boxes half the width: wide enough to pad visibly
		lines = append(lines, l)
	}
	build := func(ref, inverted bool) *plot.Plot {
		p := newPlot("x", "y")
		if inverted {
			p.X.Scale = plot.InvertedScale{Normalizer: plot.LinearScale{}}
		}
		for _, l := range lines {
			e := edgeLine{Line: l, boxes: &glyphBoxCache{}}
			if ref {
				p.Add(refLine{e})
			} else {
				p.Add(e)
			}
		}
		return p
	}
	svg := func(p *plot.Plot) string {
		s, _, err := render(p, nil, figW, figH)
		if err != nil {
			t.Fatal(err)
		}
		return s
	}
	for _, inverted := range []bool{false, true} {
		got, want := build(false, inverted), build(true, inverted)
		for step, change := range []func(p *plot.Plot){
			func(*plot.Plot) {},
			func(*plot.Plot) {},
			func(p *plot.Plot) { p.X.Min, p.X.Max = 100, 420 },
			func(p *plot.Plot) { p.Y.Min, p.Y.Max = -30, 25 },
		} {
			change(got)
			change(want)
			if svg(got) != svg(want) {
				t.Errorf("inverted %v, drawing %d: the plot is padded otherwise than with the line's own boxes", inverted, step)
			}
		}
	}
}

// Shaded bands are filled in bands of pixel columns (pixelCanvas.fillRings)
// with the pixels of the drawing context's own fill of the same path
// (gg v0.7.0, the reference as above), byte for byte: bands between two
// random walks across the figure (an upper edge forward, a lower one
// back), several in one path and overlapping, rings turning back in x,
// small and off the image, in opaque and translucent colours.
func TestFillRingsAsTheDrawingContext(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 14))
	w, h := figW, figH
	band := func(n int, turning bool) []vg.Point {
		ring := make([]vg.Point, 2*n)
		x, y := -w/50, h*vg.Length(0.2+0.6*rng.Float64())
		for i := range n {
			dx := w / vg.Length(n) * vg.Length(1+0.5*rng.NormFloat64())
			if turning && rng.IntN(6) == 0 {
				dx = -dx
			}
			x += dx
			y += vg.Length(rng.NormFloat64()) * h / 40
			thick := vg.Length(rng.Float64()) * h / 10
			if rng.IntN(10) == 0 {
				thick = -thick // the edges cross: a twisted ring
			}
			ring[i] = vg.Point{X: x, Y: y + thick}
			ring[2*n-1-i] = vg.Point{X: x, Y: y - thick}
		}
		return ring
	}
	for k, colour := range []color.Color{tint(componentColour(0), 0.72), color.RGBA{R: 90, G: 20, B: 20, A: 120}, nil} {
		for _, n := range []int{2, 30, 900} {
			var rings [][]vg.Point
			for range 1 + n%4 {
				rings = append(rings, band(n, k == 1))
			}
			rings = append(rings, []vg.Point{{X: w / 2, Y: h / 2}, {X: w/2 + 3, Y: h / 2}, {X: w / 2, Y: h/2 + 3}})
			t.Run(fmt.Sprintf("colour %d, %d points", k, n), func(t *testing.T) {
				want, wantImg := rasterCanvas(w, h, nil)
				wc := draw.New(want)
				wc.SetColor(colour)
				wc.Fill(ringsPath(rings))
				got, gotImg := rasterCanvas(w, h, nil)
				got.fillRings(rings, colour)
				samePixels(t, gotImg, wantImg, "the drawing context's fill")
			})
		}
	}
}

// samePixels fails t, saying how many bytes differ, unless got holds the
// same pixels as want, the drawing made by ref; and fails when want is
// all white, where the comparison would show nothing.
func samePixels(t *testing.T, got, want *image.RGBA, ref string) {
	t.Helper()
	if !bytes.Equal(got.Pix, want.Pix) {
		diff := 0
		for i := range got.Pix {
			if got.Pix[i] != want.Pix[i] {
				diff++
			}
		}
		t.Errorf("%d of %d bytes differ from %s", diff, len(want.Pix), ref)
	}
	if bytes.Equal(want.Pix, bytes.Repeat([]byte{255}, len(want.Pix))) {
		t.Errorf("nothing drawn: the comparison would show nothing")
	}
}

// The data ranges of edgeLine and thinPolygon are plotter.Line's and
// plotter.Polygon's own (gonum/plot, the reference) to the bit, on random
// points with signed zeros, infinities and NaN among them.
func TestDataRangeAsPlotter(t *testing.T) {
	rng := rand.New(rand.NewPCG(41, 42))
	special := []float64{0, math.Copysign(0, -1), math.Inf(1), math.Inf(-1), math.NaN()}
	val := func() float64 {
		if rng.IntN(10) == 0 {
			return special[rng.IntN(len(special))]
		}
		return rng.NormFloat64()
	}
	bitsOf := func(v ...float64) (b [4]uint64) {
		for i := range v {
			b[i] = math.Float64bits(v[i])
		}
		return b
	}
	for trial := range 2000 {
		var rings []plotter.XYs
		for range 1 + rng.IntN(3) {
			ring := make(plotter.XYs, rng.IntN(6))
			for i := range ring {
				ring[i] = plotter.XY{X: val(), Y: val()}
			}
			rings = append(rings, ring)
		}
		l := &plotter.Line{XYs: rings[0]}
		if got, want := bitsOf(edgeLine{Line: l}.DataRange()), bitsOf(l.DataRange()); got != want {
			t.Fatalf("trial %d, line %v: %x, plotter %x", trial, rings[0], got, want)
		}
		pg := &plotter.Polygon{XYs: rings}
		if got, want := bitsOf(thinPolygon{pg}.DataRange()), bitsOf(pg.DataRange()); got != want {
			t.Fatalf("trial %d, polygon %v: %x, plotter %x", trial, rings, got, want)
		}
	}
}
