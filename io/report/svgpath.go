package report

import (
	"bytes"
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/plot/vg"
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
	held [][]byte // the data of the paths held back, in the order drawn
}

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
	var ph vg.Path
	ph.Move(vg.Point{X: heldPoint, Y: heldPoint})
	return ph
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
		b = strconv.AppendFloat(b, comp.Pos.X.Points(), 'g', 5, 64)
		b = append(b, ',')
		b = strconv.AppendFloat(b, comp.Pos.Y.Points(), 'g', 5, 64)
	}
	return b
}

// fill puts the held paths' data in the placeholders' places of the
// written drawing s. ok is false when the placeholders do not match the
// paths held one to one (a path vgsvg did not write, a placeholder a path
// of the figure's own wrote): the figure is then drawn by vgsvg alone.
func (c *svgCanvas) fill(s string) (string, bool) {
	if strings.Count(s, heldData) != len(c.held) {
		return "", false
	}
	if len(c.held) == 0 {
		return s, true
	}
	n := len(s)
	for _, d := range c.held {
		n += len(d) + len(`d=""`) - len(heldData)
	}
	var b bytes.Buffer
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
