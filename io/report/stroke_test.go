package report

import (
	"bytes"
	"fmt"
	"image/color"
	"math/rand/v2"
	"testing"

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
				want, wantImg := rasterCanvas(w, h)
				wc := draw.New(want)
				wc.StrokeLines(sty, lines...)
				got, gotImg := rasterCanvas(w, h)
				got.strokeLines(draw.New(got), sty, lines)
				if !bytes.Equal(gotImg.Pix, wantImg.Pix) {
					diff := 0
					for i := range gotImg.Pix {
						if gotImg.Pix[i] != wantImg.Pix[i] {
							diff++
						}
					}
					t.Errorf("%d of %d bytes differ from the drawing context's stroke", diff, len(wantImg.Pix))
				}
				if bytes.Equal(wantImg.Pix, bytes.Repeat([]byte{255}, len(wantImg.Pix))) {
					t.Errorf("nothing drawn: the comparison would show nothing")
				}
			})
		}
	}
}
