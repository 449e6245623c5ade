package report

import (
	"fmt"
	"image/color"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// The figure files' text is laid over the image by pixelCanvas.FillString;
// the reference is vgimg's own FillString (gonum/plot v0.17, through
// git.sr.ht/~sbinet/gg v0.7.0 and x/image/draw's BiLinear transform) on a
// canvas of the same size: the same pixels, byte for byte. Texts: the
// report's fonts and sizes, kerning pairs, the axis labels' superscripts and
// symbols, a glyph the font lacks; at positions rounded to no whole pixel,
// partly off every edge; in opaque, translucent (premultiplied) and nil
// colours; upright, rotated a quarter turn (the y axis label, gg's own path)
// and by other angles; aligned left, centre and right.
func TestFillStringAsTheDrawingContext(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	texts := []string{"wavenumber / cm⁻¹", "AVATAR To Wy", "ΔA (absorbance) × 10⁻³", "8×10⁻⁵", "t = 12.5 min", "σ–ρ ✓ Å", "0", ""}
	colours := []color.Color{color.Black, componentColour(1), color.RGBA{R: 40, G: 90, B: 160, A: 200}, color.RGBA{A: 90}, nil, color.Gray{Y: 77}}
	w, h := figW, figH
	for k, rot := range []float64{0, math.Pi / 2, -math.Pi / 2, 0.3} {
		t.Run(fmt.Sprintf("rotation %.2f", rot), func(t *testing.T) {
			want, wantImg := rasterCanvas(w, h, nil)
			got, gotImg := rasterCanvas(w, h, nil)
			wc := draw.New(want.Canvas) // vgimg's own methods
			gc := draw.New(got)
			for i := range 60 {
				sty := draw.TextStyle{
					Color:    colours[(i+k)%len(colours)],
					Font:     font.From(sans, vg.Length(9+i%4)),
					Handler:  plot.DefaultTextHandler,
					Rotation: rot,
					XAlign:   draw.XAlignment(-0.5 * float64(i%3)),
					YAlign:   draw.YAlignment(-0.5 * float64(i%3)),
				}
				if i%5 == 0 {
					sty.Rotation = 0 // upright among the rotated
				}
				pt := vg.Point{X: vg.Length(1.2*rng.Float64()-0.1) * w, Y: vg.Length(1.2*rng.Float64()-0.1) * h}
				s := texts[i%len(texts)]
				wc.FillText(sty, pt, s)
				gc.FillText(sty, pt, s)
			}
			samePixels(t, gotImg, wantImg, "vgimg's FillString")
		})
	}
}
