// overGlyphAlong and its helpers follow golang.org/x/image/draw's
// bilinear Kernel.Transform (scale.go and impl.go), Copyright 2015 The Go
// Authors, under its BSD-style licence (LICENSE-x-image in this folder).
// Changed from the original: specialised to a uniform source colour, an
// alpha mask and op Over, with the pixels read directly.

package report

import (
	"image"
	"math"
)

// overGlyphAlong lays the glyph mask (its pixel mp at the source
// rectangle sr's origin) over dst through the affine map s2d (source to
// destination: x' = s2d[0]·x + s2d[1]·y + s2d[2], y' likewise) in the
// premultiplied 16-bit colour src, as x/image/draw's BiLinear kernel does
// in Kernel.Transform with op Over, a uniform source and the mask as
// SrcMask (its transform_Image_Image_Over): the same floating-point steps
// in the same order, with the colour and the mask's and the image's pixels
// read directly instead of through image.Image. The drawing context lays
// rotated text so, a tenth of the figures' text time in the general code.
func overGlyphAlong(dst *image.RGBA, s2d [6]float64, sr image.Rectangle, mask image.Image, mp image.Point, src [4]uint32) {
	k, ok := newBilinearFrame(dst, &s2d, sr)
	if !ok {
		return
	}
	dr, adr, d2s, bias := k.dr, k.adr, k.d2s, k.bias
	xw := make([]float64, 1+2*int(math.Ceil(k.xHalf)))
	yw := make([]float64, 1+2*int(math.Ceil(k.yHalf)))
	alpha, _ := mask.(*image.Alpha)
	for dy := int32(adr.Min.Y); dy < int32(adr.Max.Y); dy++ {
		dyf := float64(dr.Min.Y+int(dy)) + 0.5
		for dx := int32(adr.Min.X); dx < int32(adr.Max.X); dx++ {
			dxf := float64(dr.Min.X+int(dx)) + 0.5
			sx := float64(d2s[0]*dxf) + float64(d2s[1]*dyf) + d2s[2]
			sy := float64(d2s[3]*dxf) + float64(d2s[4]*dyf) + d2s[5]
			if !(image.Point{int(sx) + bias.X, int(sy) + bias.Y}).In(sr) {
				continue
			}
			ix, jx := k.weights(xw, sx+float64(bias.X), k.xHalf, k.xArg, sr.Min.X, sr.Max.X)
			iy, jy := k.weights(yw, sy+float64(bias.Y), k.yHalf, k.yArg, sr.Min.Y, sr.Max.Y)
			var pr, pg, pb, pa float64
			for ky := iy; ky < jy; ky++ {
				yWeight := yw[ky-iy]
				if yWeight == 0 {
					continue
				}
				for kx := ix; kx < jx; kx++ {
					w := xw[kx-ix] * yWeight
					if w == 0 {
						continue
					}
					var ma uint32
					if alpha != nil {
						ma = uint32(alpha.AlphaAt(mp.X+kx, mp.Y+ky).A) * 0x101
					} else {
						_, _, _, ma = mask.At(mp.X+kx, mp.Y+ky).RGBA()
					}
					pr += float64(float64(src[0]*ma/0xffff) * w)
					pg += float64(float64(src[1]*ma/0xffff) * w)
					pb += float64(float64(src[2]*ma/0xffff) * w)
					pa += float64(float64(src[3]*ma/0xffff) * w)
				}
			}
			pr, pg, pb = min(pr, pa), min(pg, pa), min(pb, pa)
			i := dst.PixOffset(dr.Min.X+int(dx), dr.Min.Y+int(dy))
			p := dst.Pix[i : i+4 : i+4]
			pa1 := 0xffff - uint32(fffftou(pa))
			for c, v := range [4]float64{pr, pg, pb, pa} {
				q := uint32(p[c]) * 0x101
				p[c] = uint8(uint16(q*pa1/0xffff+uint32(fffftou(v))) >> 8)
			}
		}
	}
}

// bilinearFrame is what the kernel's loop keeps for one mask: the source
// rectangle sr, its destination pixels dr and the part adr of them inside
// dst (relative to dr.Min), the map d2s back to the source shifted by
// bias, and, each way, the kernel's half width and argument scale
// (broadened when the map shrinks).
type bilinearFrame struct {
	sr, dr, adr              image.Rectangle
	d2s                      [6]float64
	bias                     image.Point
	xHalf, xArg, yHalf, yArg float64
}

// newBilinearFrame sets up Kernel.Transform's loop for the mask's source
// rectangle sr laid over dst through s2d, in its steps; ok is false when
// nothing of it falls on dst.
func newBilinearFrame(dst *image.RGBA, s2d *[6]float64, sr image.Rectangle) (k bilinearFrame, ok bool) {
	dr := transformRect(s2d, &sr)
	adr := dst.Bounds().Intersect(dr)
	if adr.Empty() || sr.Empty() {
		return k, false
	}
	d2s := invertAffine(s2d)
	// A shift that keeps the source coordinates non-negative, so that
	// int(f) rounds down; one pixel more because the kernel takes half a
	// pixel off them (weights' s −= 0.5).
	bias := transformRect(&d2s, &adr).Min
	bias.X--
	bias.Y--
	d2s[2] -= float64(bias.X)
	d2s[5] -= float64(bias.Y)
	adr = adr.Sub(dr.Min)
	xscale := max(absf(d2s[0]), absf(d2s[1]))
	yscale := max(absf(d2s[3]), absf(d2s[4]))
	k = bilinearFrame{sr: sr, dr: dr, adr: adr, d2s: d2s, bias: bias, xHalf: 1, xArg: 1, yHalf: 1, yArg: 1}
	if xscale > 1 {
		k.xHalf, k.xArg = xscale, 1/xscale
	}
	if yscale > 1 {
		k.yHalf, k.yArg = yscale, 1/yscale
	}
	return k, true
}

// weights fills w with the tent kernel's weights, normalized to sum 1, of
// the source pixels [i, j) about s (a source coordinate, half a pixel
// added back), as transform_Image_Image_Over forms them.
func (bilinearFrame) weights(w []float64, s, half, arg float64, lo, hi int) (i, j int) {
	s -= 0.5
	i = max(int(math.Floor(s-half)), lo)
	j = min(int(math.Ceil(s+half)), hi)
	total := 0.0
	for k := i; k < j; k++ {
		weight := 0.0
		if t := absf((s - float64(k)) * arg); t < 1 {
			weight = 1 - t
		}
		w[k-i] = weight
		total += weight
	}
	for k := range w[:j-i] {
		w[k] /= total
	}
	return i, j
}

// transformRect is x/image/draw's: the destination pixels the source
// rectangle sr's corners fall in under s2d, as a rectangle.
func transformRect(s2d *[6]float64, sr *image.Rectangle) (dr image.Rectangle) {
	ps := [...]image.Point{
		{sr.Min.X, sr.Min.Y},
		{sr.Max.X, sr.Min.Y},
		{sr.Min.X, sr.Max.Y},
		{sr.Max.X, sr.Max.Y},
	}
	for i, p := range ps {
		sxf, syf := float64(p.X), float64(p.Y)
		dx := int(math.Floor(float64(s2d[0]*sxf) + float64(s2d[1]*syf) + s2d[2]))
		dy := int(math.Floor(float64(s2d[3]*sxf) + float64(s2d[4]*syf) + s2d[5]))
		if i == 0 {
			dr = image.Rect(dx, dy, dx+1, dy+1)
			continue
		}
		dr.Min.X, dr.Max.X = min(dr.Min.X, dx), max(dr.Max.X, dx+1)
		dr.Min.Y, dr.Max.Y = min(dr.Min.Y, dy), max(dr.Max.Y, dy+1)
	}
	return dr
}

// invertAffine is x/image/draw's invert of an affine map.
func invertAffine(m *[6]float64) [6]float64 {
	m00 := +m[3*1+1]
	m01 := -m[3*0+1]
	m02 := +float64(m[3*1+2]*m[3*0+1]) - float64(m[3*1+1]*m[3*0+2])
	m10 := -m[3*1+0]
	m11 := +m[3*0+0]
	m12 := +float64(m[3*1+0]*m[3*0+2]) - float64(m[3*1+2]*m[3*0+0])
	det := float64(m00*m11) - float64(m10*m01)
	return [6]float64{m00 / det, m01 / det, m02 / det, m10 / det, m11 / det, m12 / det}
}

func absf(f float64) float64 {
	if f < 0 {
		return -f
	}
	return f
}

// fffftou is x/image/draw's: [0, 65535] rounded to a 16-bit value.
func fffftou(f float64) uint16 {
	i := int32(f + 0.5)
	if i > 0xffff {
		return 0xffff
	}
	if i > 0 {
		return uint16(i)
	}
	return 0
}
