package report

import (
	"fmt"
	"image"
	"image/color"
	"math/rand/v2"
	"testing"

	ftraster "github.com/golang/freetype/raster"
	"golang.org/x/image/math/fixed"
)

// bandRaster paints a band's pixels with the bytes freetype's own
// rasterizer gives them (github.com/golang/freetype/raster, the library
// the drawing context fills and strokes with: Rasterizer with non-zero
// winding, RGBAPainter over an image cut to the band's columns), for paths
// of lines, quadratics and cubics and for the strokes of polylines (butt
// caps, round joins: the arcs are quadratics) of several widths; paths
// that leave the image on every side, turn back, cross themselves and
// leave rows open, in opaque and translucent colours over a picture that
// is not blank. Every band of the image is compared, one bandRaster used
// for all of them in turn, bands of several widths and images of several
// sizes (the split of curves depends on the size).
func TestBandRasterAsFreetype(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	colours := []color.Color{color.RGBA{R: 200, G: 30, B: 60, A: 255}, color.RGBA{R: 20, G: 60, B: 30, A: 130}, color.Black}
	var r bandRaster
	for trial := range 120 {
		w, h := 20+rng.IntN(300), 20+rng.IntN(200)
		if trial%10 == 0 {
			w, h = 10+rng.IntN(15), 10+rng.IntN(15)
		}
		bw := []int{64, 7, 1, 130}[trial%4]
		if bw < 10 {
			w = min(w, 60)
		}
		pt := func() fixed.Point26_6 {
			return fixed.Point26_6{X: fixed.Int26_6(rng.IntN(64*w*5/4) - 64*w/8), Y: fixed.Int26_6(rng.IntN(64*h*5/4) - 64*h/8)}
		}
		var path ftraster.Path
		stroke := trial%2 == 0
		for range 1 + rng.IntN(4) {
			path.Start(pt())
			for range 1 + rng.IntN(60) {
				switch k := rng.IntN(10); {
				case stroke || k < 6:
					path.Add1(pt())
				case k < 8:
					path.Add2(pt(), pt())
				default:
					path.Add3(pt(), pt(), pt())
				}
			}
		}
		width := fixed.Int26_6(16 + rng.IntN(64*6))
		colour := colours[trial%len(colours)]
		background := image.NewRGBA(image.Rect(0, 0, w, h))
		for i := range background.Pix {
			background.Pix[i] = uint8(rng.IntN(256)) | 0x80
		}
		want := image.NewRGBA(background.Rect)
		copy(want.Pix, background.Pix)
		got := image.NewRGBA(background.Rect)
		copy(got.Pix, background.Pix)
		for x0 := 0; x0 < w; x0 += bw {
			x1 := min(w, x0+bw)
			fr := ftraster.NewRasterizer(w, h)
			fr.UseNonZeroWinding = true
			r.reset(x0, x1, w, h)
			if stroke {
				fr.AddStroke(path, width, ftraster.ButtCapper, ftraster.RoundJoiner)
				ftraster.Stroke(&r, path, width, ftraster.ButtCapper, ftraster.RoundJoiner)
			} else {
				fr.AddPath(path)
				r.addPath(path)
			}
			painter := ftraster.NewRGBAPainter(want.SubImage(image.Rect(x0, 0, x1, h)).(*image.RGBA))
			painter.SetColor(colour)
			fr.Rasterize(painter)
			r.paint(got, colour)
		}
		t.Run(fmt.Sprintf("%d × %d, stroke %v, bands of %d", w, h, stroke, bw), func(t *testing.T) {
			samePixels(t, got, want, "freetype's rasterizer")
			if string(want.Pix) == string(background.Pix) {
				t.Error("nothing painted: the comparison would show nothing")
			}
		})
	}
}
