package jcamp

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// lineWidth is the longest line Write produces; the standard asks for 80.
const lineWidth = 80

// written lists the labels Write produces itself, or that only make sense in
// the file they came from; other labels of the block are carried over.
var written = map[string]bool{
	"TITLE": true, "JCAMPDX": true, "DATATYPE": true, "DATACLASS": true,
	"XUNITS": true, "YUNITS": true, "XFACTOR": true, "YFACTOR": true,
	"FIRSTX": true, "LASTX": true, "DELTAX": true, "NPOINTS": true,
	"FIRSTY": true, "LASTY": true, "MINX": true, "MAXX": true, "MINY": true, "MAXY": true,
	"XYDATA": true, "XYPOINTS": true, "PEAKTABLE": true, "PEAKASSIGNMENTS": true,
	"NTUPLES": true, "ENDNTUPLES": true, "END": true, "BLOCKS": true, "BLOCKID": true,
	"CROSSREFERENCE": true, "ORIGIN": true, "OWNER": true,
}

// Write writes b as a JCAMP-DX 5.01 block. Equally spaced abscissae give
// ##XYDATA=(X++(Y..Y)) in AFFN with integer ordinates scaled by YFACTOR
// (nine significant digits of the largest |Y|, so the integers fit 32 bits as
// older readers expect; common practice); otherwise ##XYPOINTS=(XY..XY)
// with exact decimal pairs. Labels of b other than those Write derives from
// X, Y and the fields are carried over, after the required TITLE,
// JCAMP-DX, DATA TYPE, DATA CLASS, ORIGIN and OWNER. An empty DataType is written as
// INFRARED SPECTRUM and empty units as ARBITRARY UNITS.
func Write(w io.Writer, b Block) error {
	n := len(b.X)
	if n == 0 || len(b.Y) != n {
		return fmt.Errorf("jcamp: write %q: %d abscissae and %d ordinates; need the same non-zero number", b.Title, n, len(b.Y))
	}
	if n > MaxPoints {
		return fmt.Errorf("jcamp: write %q: %d points exceed the limit of %d", b.Title, n, MaxPoints)
	}
	minY, maxY := math.Inf(1), math.Inf(-1)
	minX, maxX := math.Inf(1), math.Inf(-1)
	for i := range n {
		x, y := b.X[i], b.Y[i]
		if math.IsNaN(x) || math.IsInf(x, 0) || math.IsNaN(y) || math.IsInf(y, 0) {
			return fmt.Errorf("jcamp: write %q: point %d is not finite (X=%v, Y=%v)", b.Title, i+1, x, y)
		}
		minX, maxX = math.Min(minX, x), math.Max(maxX, x)
		minY, maxY = math.Min(minY, y), math.Max(maxY, y)
	}
	dx, even := spacing(b.X)
	lw := &lineWriter{w: bufio.NewWriter(w)}
	orDefault := func(s, d string) string {
		if strings.TrimSpace(s) == "" {
			return d
		}
		return s
	}
	lw.label("TITLE", b.Title)
	lw.label("JCAMP-DX", "5.01")
	lw.label("DATA TYPE", orDefault(b.DataType, "INFRARED SPECTRUM"))
	if even {
		lw.label("DATA CLASS", "XYDATA")
	} else {
		lw.label("DATA CLASS", "XYPOINTS")
	}
	// Version 5.01 asks for ORIGIN and OWNER in every block (from memory);
	// empty values are written when the block has none.
	for _, name := range []string{"ORIGIN", "OWNER"} {
		v, _ := b.Value(name)
		lw.label(name, v)
	}
	for _, l := range b.Labels {
		if !written[l.Name] {
			lw.label(l.Name, l.Value)
		}
	}
	lw.label("XUNITS", orDefault(b.XUnits, "ARBITRARY UNITS"))
	lw.label("YUNITS", orDefault(b.YUnits, "ARBITRARY UNITS"))
	if even {
		writeXYData(lw, b, dx, minY, maxY)
	} else {
		writeXYPoints(lw, b, minX, maxX, minY, maxY)
	}
	lw.line("##END=")
	if lw.err != nil {
		return fmt.Errorf("jcamp: write %q: %w", b.Title, lw.err)
	}
	if err := lw.w.Flush(); err != nil {
		return fmt.Errorf("jcamp: write %q: %w", b.Title, err)
	}
	return nil
}

// spacing returns the step of x and whether x is equally spaced to within a
// millionth of the step, which keeps every point far inside the half-step
// the line check allows.
func spacing(x []float64) (float64, bool) {
	n := len(x)
	if n == 1 {
		return 0, true
	}
	dx := (x[n-1] - x[0]) / float64(n-1)
	if dx == 0 || math.IsInf(dx, 0) || math.IsNaN(dx) {
		return 0, false
	}
	for i, v := range x {
		if math.Abs(v-(x[0]+float64(i)*dx)) > 1e-6*math.Abs(dx) {
			return 0, false
		}
	}
	return dx, true
}

func writeXYData(lw *lineWriter, b Block, dx, minY, maxY float64) {
	n := len(b.X)
	// YFACTOR = 10^k with k chosen so the largest |Y| needs nine digits.
	maxAbs := math.Max(math.Abs(minY), math.Abs(maxY))
	k := 0
	if maxAbs > 0 {
		k = int(math.Ceil(math.Log10(maxAbs))) - 9
		k = max(k, -300) // keeps 10^k a normal number
	}
	// A signed exponent, as in data lines (see the package doc).
	yfText := "1"
	if k > 0 {
		yfText = "1E+" + strconv.Itoa(k)
	} else if k < 0 {
		yfText = "1E" + strconv.Itoa(k)
	}
	// Parsing the text gives the very factor a reader will multiply by.
	yf, _ := strconv.ParseFloat(yfText, 64)
	iy := make([]int64, n)
	imin, imax := int64(math.MaxInt64), int64(math.MinInt64)
	for i, y := range b.Y {
		iy[i] = int64(math.Round(y / yf))
		imin, imax = min(imin, iy[i]), max(imax, iy[i])
	}
	firstX, lastX := b.X[0], b.X[n-1]
	lw.label("XFACTOR", "1")
	lw.label("YFACTOR", yfText)
	lw.label("FIRSTX", formatFloat(firstX))
	lw.label("LASTX", formatFloat(lastX))
	lw.label("DELTAX", formatFloat(dx))
	lw.label("MINX", formatFloat(math.Min(firstX, lastX)))
	lw.label("MAXX", formatFloat(math.Max(firstX, lastX)))
	lw.label("NPOINTS", strconv.Itoa(n))
	// Ten significant digits print integer*10^k exactly, without the
	// binary noise of the product.
	scaled := func(i int64) string { return strconv.FormatFloat(float64(i)*yf, 'g', 10, 64) }
	lw.label("FIRSTY", scaled(iy[0]))
	lw.label("MINY", scaled(imin))
	lw.label("MAXY", scaled(imax))
	lw.line("##XYDATA=(X++(Y..Y))")
	if n > 1 {
		dx = (lastX - firstX) / float64(n-1) // as a reader will compute it
	}
	// Print line abscissae to a tenth of the step: enough for the reader's
	// half-step check, short enough to leave room for ordinates.
	dec := 0
	if dx != 0 {
		dec = max(0, int(math.Ceil(-math.Log10(math.Abs(dx)/10))))
	}
	var sb strings.Builder
	for i := 0; i < n; {
		xv := firstX + float64(i)*dx
		xs := strconv.FormatFloat(xv, 'f', dec, 64)
		if dx == 0 || len(xs) > 24 {
			xs = formatFloat(xv)
		}
		sb.Reset()
		sb.WriteString(xs)
		start := i
		for i < n {
			ys := strconv.FormatInt(iy[i], 10)
			if sb.Len()+1+len(ys) > lineWidth && i > start {
				break
			}
			sb.WriteByte(' ')
			sb.WriteString(ys)
			i++
		}
		lw.line(sb.String())
	}
}

func writeXYPoints(lw *lineWriter, b Block, minX, maxX, minY, maxY float64) {
	n := len(b.X)
	lw.label("XFACTOR", "1")
	lw.label("YFACTOR", "1")
	lw.label("FIRSTX", formatFloat(b.X[0]))
	lw.label("LASTX", formatFloat(b.X[n-1]))
	lw.label("MINX", formatFloat(minX))
	lw.label("MAXX", formatFloat(maxX))
	lw.label("NPOINTS", strconv.Itoa(n))
	lw.label("FIRSTY", formatFloat(b.Y[0]))
	lw.label("MINY", formatFloat(minY))
	lw.label("MAXY", formatFloat(maxY))
	lw.line("##XYPOINTS=(XY..XY)")
	var sb strings.Builder
	for i := 0; i < n; {
		sb.Reset()
		start := i
		for i < n {
			pair := formatFloat(b.X[i]) + "," + formatFloat(b.Y[i])
			if i > start && sb.Len()+2+len(pair) > lineWidth {
				break
			}
			if i > start {
				sb.WriteString("; ")
			}
			sb.WriteString(pair)
			i++
		}
		lw.line(sb.String())
	}
}

// lineWriter keeps the first error so that the write sequence stays linear.
type lineWriter struct {
	w   *bufio.Writer
	err error
}

func (lw *lineWriter) line(s string) {
	if lw.err != nil {
		return
	}
	_, lw.err = lw.w.WriteString(s + "\n")
}

// label writes ##NAME=value, breaking long values onto continuation lines
// (which a reader joins with "\n"). A continuation line may not start with
// "##", and no part may hold the comment marker "$$".
func (lw *lineWriter) label(name, value string) {
	if lw.err != nil {
		return
	}
	if strings.Contains(value, "$$") || strings.ContainsAny(value, "\r") {
		lw.err = fmt.Errorf("label %s: value %q holds \"$$\" or a carriage return, which JCAMP-DX cannot carry", name, clip(value))
		return
	}
	if strings.ContainsAny(name, "=\n") || strings.Contains(name, "$$") {
		lw.err = fmt.Errorf("label name %q holds '=', a newline or \"$$\"", clip(name))
		return
	}
	first := true
	for part := range strings.SplitSeq(value, "\n") {
		prefix := ""
		if first {
			prefix = "##" + name + "="
			first = false
		} else if part == "" || startsLabel(part) {
			lw.err = errors.New("label " + name + ": a value line is empty or starts with \"##\"")
			return
		}
		lw.wrapped(prefix, part)
	}
}

func startsLabel(s string) bool { return strings.HasPrefix(strings.TrimLeft(s, " \t\x1a"), "##") }

// wrapped writes prefix+s, broken into lines of at most lineWidth bytes,
// preferring breaks at spaces, never leaving a piece that a reader would
// take for a label or that loses meaning to trimming.
func (lw *lineWriter) wrapped(prefix, s string) {
	cur := prefix + s
	for len(cur) > lineWidth && lw.err == nil {
		cut := -1
		for i := lineWidth; i > len(prefix) && cut < 0; i-- {
			if cur[i-1] == ' ' && cur[i] != ' ' && okPiece(cur[:i], cur[i:]) {
				cut = i
			}
		}
		for i := lineWidth; i > len(prefix) && cut < 0; i-- {
			if cur[i-1] != ' ' && cur[i] != ' ' && okPiece(cur[:i], cur[i:]) {
				cut = i
			}
		}
		if cut < 0 {
			break // cannot break safely: keep the long line
		}
		lw.line(strings.TrimRight(cur[:cut], " "))
		cur = cur[cut:]
		prefix = ""
	}
	lw.line(cur)
}

// okPiece reports whether a value may be split between head and tail: a
// reader trims each line, so neither side may start or end in blanks that
// matter, and the tail must not look like a label.
func okPiece(head, tail string) bool {
	blank := func(c byte) bool { return c == ' ' || c == '\t' || c == '\x1a' }
	return tail != "" && !blank(tail[0]) && !blank(tail[len(tail)-1]) &&
		strings.Trim(head, " \t\x1a") != "" && !strings.HasPrefix(tail, "##")
}
