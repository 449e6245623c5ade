package report

import (
	"bytes"
	"encoding/base64"
	"image"
	"image/color"
	"image/png"
	"math"
	"strings"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"
)

// svgCanvas is a vgsvg canvas that formats the data of long paths itself:
// vgsvg writes every coordinate with fmt ("%.*g" at 5 digits), a tenth of
// a figure's time for its long lines and shaded bands. Such a path is
// handed to vgsvg as a placeholder, a lone move to a point no figure
// reaches (heldPoint), and its data, formatted by appendPathData with the
// same bytes, take the placeholders' places in order once the drawing is
// written (fill). Everything else, the element and its style included, is
// vgsvg's own.
type svgCanvas struct {
	*vgsvg.Canvas
	held    [][]byte // the data of the paths held back, in the order drawn
	scratch lineScratch
	// images are the data of the raster images held back (drawImage), in
	// the order drawn, and enc their encoder.
	images [][]byte
	enc    *pngEncoder
}

// drawImage draws a paletted image into rect as vgsvg's DrawImage does (an
// <image> element with the PNG file as base64 data), with the file from
// pngEncoder.encodePaletted rather than image/png at its default level:
// vgsvg is handed a placeholder image, whose data fill puts the held
// image's in place of. An image encodePaletted leaves alone goes to vgsvg.
func (c *svgCanvas) drawImage(rect vg.Rectangle, img *image.Paletted) {
	if c.enc == nil {
		c.enc = new(pngEncoder)
	}
	b, err := c.enc.encodePaletted(img)
	if err != nil || b == nil {
		c.Canvas.DrawImage(rect, img)
		return
	}
	c.images = append(c.images, base64.StdEncoding.AppendEncode(nil, b))
	c.Canvas.DrawImage(rect, heldImage)
}

// heldImage is the image handed to vgsvg in place of one held back, and
// heldImageData the base64 data vgsvg writes for it: a single pixel of a
// colour no figure uses.
var (
	heldImage     = image.NewPaletted(image.Rect(0, 0, 1, 1), color.Palette{color.RGBA{1, 2, 3, 255}})
	heldImageData = func() string {
		var b bytes.Buffer
		if err := png.Encode(&b, heldImage); err != nil {
			panic(err)
		}
		return "base64," + base64.StdEncoding.EncodeToString(b.Bytes()) + `"`
	}()
)

// heldPoint is the placeholder's point and heldData the data vgsvg writes
// for it.
const (
	heldPoint = 1.2345e-300
	heldData  = `d="M1.2345e-300,1.2345e-300"`
)

// heldMin is the least number of components of a path whose data is
// formatted here.
const heldMin = 16

func (c *svgCanvas) Stroke(p vg.Path) { c.Canvas.Stroke(c.hold(p)) }
func (c *svgCanvas) Fill(p vg.Path)   { c.Canvas.Fill(c.hold(p)) }

// hold returns the placeholder in place of a long path of moves, lines and
// closes with finite coordinates, whose data it keeps; any other path as
// it is.
func (c *svgCanvas) hold(p vg.Path) vg.Path {
	if len(p) < heldMin {
		return p
	}
	for _, comp := range p {
		switch comp.Type {
		case vg.MoveComp, vg.LineComp:
			if x, y := float64(comp.Pos.X), float64(comp.Pos.Y); math.IsNaN(x-x) || math.IsNaN(y-y) {
				return p // ±Inf or NaN
			}
		case vg.CloseComp:
		default:
			return p
		}
	}
	c.held = append(c.held, appendPathData(make([]byte, 0, 16*len(p)), p))
	return placeholder()
}

// placeholder is the path handed to vgsvg in place of one held back.
func placeholder() vg.Path {
	var ph vg.Path
	ph.Move(vg.Point{X: heldPoint, Y: heldPoint})
	return ph
}

// strokeLines strokes lines with sty as draw.Canvas.StrokeLines does on c,
// whose base canvas is sc: the data of a line hold would keep are
// formatted from its points, rather than from a path made of them first
// (a path's component is five times a point's size).
func (sc *svgCanvas) strokeLines(c draw.Canvas, sty draw.LineStyle, lines [][]vg.Point) {
	if len(lines) == 0 {
		return
	}
	c.SetLineStyle(sty)
	for _, l := range lines {
		if len(l) == 0 {
			continue
		}
		if len(l) < heldMin || !finitePoints(l) {
			p := make(vg.Path, 0, len(l))
			p.Move(l[0])
			for _, pt := range l[1:] {
				p.Line(pt)
			}
			c.Stroke(p)
			continue
		}
		sc.held = append(sc.held, appendPolyline(make([]byte, 0, 16*len(l)), l, false))
		sc.Canvas.Stroke(placeholder())
	}
}

// fillRings fills the closed polygons rings as c.Fill(ringsPath(rings))
// does on c, whose base canvas is sc, with their data formatted from their
// points when hold would keep them.
func (sc *svgCanvas) fillRings(c draw.Canvas, rings [][]vg.Point) {
	n := 0 // the path's components: a move, the lines, a close per ring
	for _, ps := range rings {
		n += len(ps) + 1
		if !finitePoints(ps) {
			n = -1
			break
		}
	}
	if n < heldMin {
		c.Fill(ringsPath(rings))
		return
	}
	b := make([]byte, 0, 16*n)
	for _, ps := range rings {
		b = appendPolyline(b, ps, true)
	}
	sc.held = append(sc.held, b)
	sc.Canvas.Fill(placeholder())
}

// finitePoints says whether every coordinate of ps is finite.
func finitePoints(ps []vg.Point) bool {
	for _, p := range ps {
		if x, y := float64(p.X), float64(p.Y); math.IsNaN(x-x) || math.IsNaN(y-y) {
			return false
		}
	}
	return true
}

// appendPolyline appends the path data appendPathData gives for a move to
// ps[0] and lines to the rest, closed with close.
func appendPolyline(b []byte, ps []vg.Point, close bool) []byte {
	for i, p := range ps {
		if i == 0 {
			b = append(b, 'M')
		} else {
			b = append(b, 'L')
		}
		b = appendPoint(b, p)
	}
	if close {
		b = append(b, 'Z')
	}
	return b
}

// appendPoint appends a point's coordinates as appendPathData does
// (appendG5: strconv's %.5g, faster).
func appendPoint(b []byte, p vg.Point) []byte {
	b = appendG5(b, p.X.Points())
	b = append(b, ',')
	return appendG5(b, p.Y.Points())
}

// appendPathData appends the SVG path data of a path of moves, lines and
// closes as vgsvg writes it: "M" or "L" and the coordinates in points,
// each as fmt's %.5g ("Z" for a close). For a finite number %.5g is
// strconv.AppendFloat(v, 'g', 5, 64), which fmt calls and writes as it is
// when no flag is given.
func appendPathData(b []byte, p vg.Path) []byte {
	for _, comp := range p {
		switch comp.Type {
		case vg.MoveComp:
			b = append(b, 'M')
		case vg.LineComp:
			b = append(b, 'L')
		case vg.CloseComp:
			b = append(b, 'Z')
			continue
		}
		b = appendPoint(b, comp.Pos)
	}
	return b
}

// fill puts the held paths' data in the placeholders' places of the
// written drawing s. ok is false when the placeholders do not match the
// paths held one to one (a path vgsvg did not write, a placeholder a path
// of the figure's own wrote): the figure is then drawn by vgsvg alone.
func (c *svgCanvas) fill(s string) (string, bool) {
	if strings.Count(s, heldData) != len(c.held) || strings.Count(s, heldImageData) != len(c.images) {
		return "", false
	}
	if len(c.images) > 0 {
		var b strings.Builder
		for _, d := range c.images {
			i := strings.Index(s, heldImageData)
			b.WriteString(s[:i])
			b.WriteString("base64,")
			b.Write(d)
			b.WriteByte('"')
			s = s[i+len(heldImageData):]
		}
		b.WriteString(s)
		s = b.String()
	}
	if len(c.held) == 0 {
		return s, true
	}
	n := len(s)
	for _, d := range c.held {
		n += len(d) + len(`d=""`) - len(heldData)
	}
	var b strings.Builder // its String is not a copy
	b.Grow(n)
	for _, d := range c.held {
		i := strings.Index(s, heldData)
		b.WriteString(s[:i])
		b.WriteString(`d="`)
		b.Write(d)
		b.WriteByte('"')
		s = s[i+len(heldData):]
	}
	b.WriteString(s)
	return b.String(), true
}
