package report

import (
	"image"
	"image/color"
	"math"

	"git.sr.ht/~sbinet/gg"
	xfont "golang.org/x/image/font"
	"golang.org/x/image/math/fixed"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
)

// The figure files' text. vgimg draws a string with gg's DrawString, which
// lays each glyph's coverage mask over the image through x/image/draw's
// BiLinear Transform (op Over, the mask as source mask): the general
// resampler, a tenth of the figure files' time, though for upright text the
// transform is a whole-pixel shift. Then each sample falls on a mask pixel's
// centre, the tent kernel's weights are 1 there and 0 at the neighbours, and
// the resampler's arithmetic reduces to Porter–Duff "over" of the colour
// scaled by the mask's coverage, in the same integer steps (overGlyph).
// Rotated text (the y axis label) keeps gg's own path.

// SetColor, Push and Pop are vgimg's, with the current colour kept beside
// the drawing context's (which does not tell it) for FillString.
func (pc *pixelCanvas) SetColor(c color.Color) {
	pc.Canvas.SetColor(c)
	if c == nil {
		c = color.Black // as vgimg
	}
	pc.colours[len(pc.colours)-1] = c
}

func (pc *pixelCanvas) Push() {
	pc.Canvas.Push()
	pc.colours = append(pc.colours, pc.colours[len(pc.colours)-1])
	pc.mats = append(pc.mats, pc.mat)
}

func (pc *pixelCanvas) Pop() {
	pc.Canvas.Pop()
	pc.colours = pc.colours[:len(pc.colours)-1]
	pc.mat, pc.mats = pc.mats[len(pc.mats)-1], pc.mats[:len(pc.mats)-1]
}

// Rotate, Translate and Scale are vgimg's, with the drawing context's
// matrix kept beside it (gg does not tell it) by the same gg.Matrix steps,
// for rotated text.
func (pc *pixelCanvas) Rotate(t float64) {
	pc.Canvas.Rotate(t)
	pc.mat = pc.mat.Rotate(t)
}

func (pc *pixelCanvas) Translate(p vg.Point) {
	pc.Canvas.Translate(p)
	pc.mat = pc.mat.Translate(p.X.Dots(pc.DPI()), p.Y.Dots(pc.DPI()))
}

func (pc *pixelCanvas) Scale(x, y float64) {
	pc.Canvas.Scale(x, y)
	pc.mat = pc.mat.Scale(x, y)
}

// FillString draws str as vgimg.Canvas.FillString does, step for step (a
// new face of the font at the canvas's resolution, the context's y axis
// inverted once more, the string at x, h − y), with upright text's glyphs
// laid over the image by overGlyph. The test draws the report's texts both
// ways and compares the images byte for byte.
func (pc *pixelCanvas) FillString(fnt font.Face, pt vg.Point, str string) {
	if fnt.Font.Size == 0 {
		return
	}
	ctx := pc.ctx
	ctx.Push()
	defer ctx.Pop()
	dpi := pc.DPI()
	face := fnt.FontFace(dpi)
	defer face.Close()
	ctx.SetFontFace(face)
	x, y := pt.X.Dots(dpi), pt.Y.Dots(dpi)
	_, ch := pc.Size()
	h := ch.Dots(dpi)
	ctx.InvertY()
	if !identityMatrix(ctx) {
		// The context's InvertY, on the matrix kept beside it.
		m := pc.mat.Translate(0, float64(pc.img.Rect.Dy())).Scale(1, -1)
		if !sameTransform(ctx, m) { // the matrix kept is not the context's
			ctx.DrawString(str, x, h-y)
			return
		}
		drawGlyphs(pc.img, face, pc.colours[len(pc.colours)-1], str, x, h-y, &m)
		return
	}
	drawGlyphs(pc.img, face, pc.colours[len(pc.colours)-1], str, x, h-y, nil)
}

// sameTransform says whether the context maps (0, 0), (1, 0) and (0, 1)
// where m does.
func sameTransform(ctx *gg.Context, m gg.Matrix) bool {
	for _, p := range [3][2]float64{{0, 0}, {1, 0}, {0, 1}} {
		x0, y0 := ctx.TransformPoint(p[0], p[1])
		x1, y1 := m.TransformPoint(p[0], p[1])
		if x0 != x1 || y0 != y1 {
			return false
		}
	}
	return true
}

// identityMatrix says whether the context's matrix is the identity. Its
// translation is the image of (0, 0), exactly; when that is zero, the
// images of (1, 0) and (0, 1) are the matrix's columns, exactly.
func identityMatrix(ctx *gg.Context) bool {
	x0, y0 := ctx.TransformPoint(0, 0)
	xx, yx := ctx.TransformPoint(1, 0)
	xy, yy := ctx.TransformPoint(0, 1)
	return x0 == 0 && y0 == 0 && xx == 1 && yx == 0 && xy == 0 && yy == 1
}

// drawGlyphs is gg's drawString (DrawString with no anchor): the dot at
// x, y rounded to 1/64 pixel, kerning between glyphs, each glyph's mask
// laid over dst in colour c, under the identity matrix when m is nil
// (overGlyph), else under m moved to the glyph's box, as the context's
// BiLinear transform lays it (overGlyphAlong).
func drawGlyphs(dst *image.RGBA, face xfont.Face, c color.Color, s string, x, y float64, m *gg.Matrix) {
	dot := fixed.Point26_6{X: fixed.Int26_6(math.Round(x * 64)), Y: fixed.Int26_6(math.Round(y * 64))}
	r, g, b, a := c.RGBA()
	prev := rune(-1)
	for _, ch := range s {
		if prev >= 0 {
			dot.X += face.Kern(prev, ch)
		}
		dr, mask, mp, advance, ok := face.Glyph(dot, ch)
		if !ok {
			continue
		}
		if m == nil {
			overGlyph(dst, dr, mask, mp, [4]uint32{r, g, b, a})
		} else {
			gm := m.Translate(float64(dr.Min.X), float64(dr.Min.Y))
			s2d := [6]float64{gm.XX, gm.XY, gm.X0, gm.YX, gm.YY, gm.Y0}
			overGlyphAlong(dst, s2d, dr.Sub(dr.Min), mask, mp, [4]uint32{r, g, b, a})
		}
		dot.X += advance
		prev = ch
	}
}

// overGlyph lays the glyph mask (its pixel mp at dr.Min) over dst in the
// premultiplied 16-bit colour src, as x/image/draw's Kernel.Transform with
// BiLinear, op Over and the mask as SrcMask does for a whole-pixel shift
// (transform_Image_Image_Over): the source colour scaled by the coverage,
// s = src·m/0xffff, then d = d·(0xffff − s_a)/0xffff + s on the 16-bit
// value of each byte, written back as its top byte (image.RGBA.Set).
func overGlyph(dst *image.RGBA, dr image.Rectangle, mask image.Image, mp image.Point, src [4]uint32) {
	r := dr.Intersect(dst.Rect)
	alpha, _ := mask.(*image.Alpha)
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			mx, my := mp.X+x-dr.Min.X, mp.Y+y-dr.Min.Y
			var m uint32
			if alpha != nil {
				m = uint32(alpha.AlphaAt(mx, my).A) * 0x101
			} else {
				_, _, _, m = mask.At(mx, my).RGBA()
			}
			if m == 0 {
				continue // adds nothing: d·0xffff/0xffff + 0 = d
			}
			var s [4]uint32
			for k := range s {
				s[k] = src[k] * m / 0xffff
			}
			for k := range 3 {
				s[k] = min(s[k], s[3]) // the resampler's clamp to alpha
			}
			i := dst.PixOffset(x, y)
			p := dst.Pix[i : i+4 : i+4]
			keep := 0xffff - s[3]
			for k := range p {
				p[k] = uint8(uint16(uint32(p[k])*0x101*keep/0xffff+s[k]) >> 8)
			}
		}
	}
}
