package report

import (
	"image/color"
	"math"
)

// Colours. Components take the Okabe–Ito colours (Okabe & Ito, "Color
// Universal Design", 2008; hex values from memory), chosen to stay distinct
// under the common colour-vision deficiencies; yellow is left out of lines
// because it vanishes on white. Each component also gets its own dash
// pattern, so the figures survive a grey-scale print.
var (
	okabeBlack     = rgb(0x00, 0x00, 0x00)
	okabeOrange    = rgb(0xE6, 0x9F, 0x00)
	okabeSky       = rgb(0x56, 0xB4, 0xE9)
	okabeGreen     = rgb(0x00, 0x9E, 0x73)
	okabeBlue      = rgb(0x00, 0x72, 0xB2)
	okabeVermilion = rgb(0xD5, 0x5E, 0x00)
	okabePurple    = rgb(0xCC, 0x79, 0xA7)

	componentColours = []color.RGBA{okabeBlue, okabeVermilion, okabeGreen, okabePurple, okabeOrange, okabeSky, okabeBlack}

	grey      = rgb(0x80, 0x80, 0x80)
	lightGrey = rgb(0xD9, 0xD9, 0xD9)
	gapGrey   = rgb(0xEE, 0xEE, 0xEE)
)

func rgb(r, g, b uint8) color.RGBA { return color.RGBA{R: r, G: g, B: b, A: 255} }

// componentColour is the colour of the k-th component (0-based).
func componentColour(k int) color.RGBA { return componentColours[k%len(componentColours)] }

// tint mixes c with white: f = 0 gives c, f = 1 white. Used for envelopes.
func tint(c color.RGBA, f float64) color.RGBA {
	mix := func(v uint8) uint8 { return uint8(math.Round(float64(v) + f*(255-float64(v)))) }
	return color.RGBA{R: mix(c.R), G: mix(c.G), B: mix(c.B), A: 255}
}

// timeRamp is the sequential scale for "early → late": dark indigo through
// Okabe–Ito blue, bluish green and orange to yellow. The anchors rise
// steadily in lightness, so order in time reads as dark → light for every
// reader, whatever their colour vision, and in grey print.
var timeRamp = []color.RGBA{rgb(0x26, 0x1C, 0x4F), okabeBlue, okabeGreen, okabeOrange, rgb(0xE8, 0xD8, 0x3A)}

// divergingRamp is the signed scale of the maps: blue for negative (bands
// lost), white at zero, vermilion for positive (bands gained). Blue against
// orange-red is the pair that stays apart under red–green deficiencies.
var divergingRamp = []color.RGBA{rgb(0x08, 0x3D, 0x77), okabeBlue, rgb(0x9C, 0xC9, 0xE6), rgb(0xFF, 0xFF, 0xFF), rgb(0xF4, 0xB9, 0x8A), okabeVermilion, rgb(0x7A, 0x2E, 0x00)}

// ramp interpolates the anchors at f in [0, 1] (clamped).
func ramp(anchors []color.RGBA, f float64) color.RGBA {
	if math.IsNaN(f) {
		return gapGrey
	}
	f = math.Max(0, math.Min(1, f))
	x := f * float64(len(anchors)-1)
	i := int(x)
	if i >= len(anchors)-1 {
		return anchors[len(anchors)-1]
	}
	t := x - float64(i)
	a, b := anchors[i], anchors[i+1]
	lerp := func(p, q uint8) uint8 { return uint8(math.Round(float64(p) + t*(float64(q)-float64(p)))) }
	return color.RGBA{R: lerp(a.R, b.R), G: lerp(a.G, b.G), B: lerp(a.B, b.B), A: 255}
}
