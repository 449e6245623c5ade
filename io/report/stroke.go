package report

import (
	"image/color"
	"math"

	"git.sr.ht/~sbinet/gg"
	ftraster "github.com/golang/freetype/raster"
	"golang.org/x/image/math/fixed"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// The figure files' long lines (spectra, profiles) are stroked here rather
// than by the drawing context, with the same path, the same stroker and the
// rasterizer's arithmetic, so that every pixel is the one the context would
// paint (checked against it in a test). What differs is the order of the
// work. The rasterizer keeps each pixel row's cells in a list sorted by
// column and walks it from the left for every cell a path's outline adds,
// so a line across the whole figure costs the square of its width in every
// row it stays in; this took a seventh of the report's time. Here each
// band of bandColumns pixel columns is stroked alone, and bandRaster keeps
// a band's cells in an array, a cell's place found at once.
//
// Why a band's pixels are the same: the rasterizer gives a pixel the area
// under the outline in the pixel's own cell plus the cover (the signed
// height crossed) of every cell to its left in the row. A band is stroked
// with the runs of segments that come within half the line width and two
// pixels of it; what the whole line has beyond a run's ends is a chain of
// outline lying wholly to the left (or right) of the band, and in place of
// it the band's stroke has the run's butt cap, a chain between the same
// two points. Two chains
// between the same points cross every row by the same height, and cells
// wholly to the left of the band add only their cover to the band's pixels,
// so the band's pixels get the same sums; cells to the right never reach
// them. Each band is painted only over its own columns.

// bandColumns is the width, in pixels, of the bands a long line is stroked
// and a polygon filled in. It was chosen when the rasterizer kept a sorted
// list of cells per row (a row's list then held a few dozen cells rather
// than up to a figure's 945; 32 and 128 made no difference); bandRaster's
// cells are found by index, so the width now only sets how often a band's
// fixed costs (a pass over its rows, the path's runs near it) are paid and
// how many cells one band holds (bandColumns × the image's height).
const bandColumns = 64

// strokeLines strokes lines with sty as draw.Canvas.StrokeLines does on the
// figure files' raster canvas c (whose base canvas is pc): each line is one
// stroke, drawn over what is already there.
func (pc *pixelCanvas) strokeLines(c draw.Canvas, sty draw.LineStyle, lines [][]vg.Point) {
	// The context's state as StrokeLines would leave it.
	c.SetLineStyle(sty)
	if len(lines) == 0 || sty.Width <= 0 {
		return
	}
	dpi := pc.DPI()
	var dashes []float64
	for _, d := range sty.Dashes {
		dashes = append(dashes, d.Dots(dpi))
	}
	st := strokeStyle{width: fix(sty.Width.Dots(dpi)), dashes: dashes, offset: sty.DashOffs.Dots(dpi)}
	var colour color.Color = color.Black // what the canvas takes for none
	if sty.Color != nil {
		colour = sty.Color
	}
	s := pc.lineScratch()
	for _, l := range lines {
		if len(l) == 0 {
			continue
		}
		s.fixed = pc.appendFixed(s.fixed[:0], l, dpi)
		pc.strokeBands(st.subpaths(s.fixed), st.width, colour)
	}
}

// lineScratch is the canvas's scratch memory, made on first use when it
// was lent none.
func (pc *pixelCanvas) lineScratch() *lineScratch {
	if pc.scratch == nil {
		pc.scratch = &lineScratch{}
	}
	return pc.scratch
}

// strokeStyle is a stroke's width (26.6 pixels) and dash pattern (pixels).
type strokeStyle struct {
	width  fixed.Int26_6
	dashes []float64
	offset float64
}

// fix is the drawing context's conversion of a length in pixels.
func fix(x float64) fixed.Int26_6 { return fixed.Int26_6(math.Round(x * 64)) }

// subpaths is the path the drawing context strokes for the polyline pts
// (device pixels, 26.6): cut into dashes when the style has some, and with
// every point within 4/64 pixel (in |dx| + |dy|) of the last kept one left
// out, as the context leaves them out. Without dashes the one subpath is
// pts itself, the points left out taken away in place.
func (st strokeStyle) subpaths(pts []fixed.Point26_6) [][]fixed.Point26_6 {
	if len(st.dashes) == 0 {
		return [][]fixed.Point26_6{keepApart(pts)}
	}
	fl := make([]gg.Point, len(pts))
	for i, p := range pts {
		// The context keeps the path in 26.6 and dashes it in float64:
		// x/64 exactly.
		fl[i] = gg.Point{X: float64(p.X) / 64, Y: float64(p.Y) / 64}
	}
	var out [][]fixed.Point26_6
	for _, d := range dashPolyline(fl, st.dashes, st.offset) {
		f := make([]fixed.Point26_6, len(d))
		for i, p := range d {
			f[i] = p.Fixed()
		}
		out = append(out, keepApart(f))
	}
	return out
}

// keepApart leaves out each point within 4/64 pixel (|dx| + |dy|) of the
// last point kept, the drawing context's guard against degenerate joins.
// The points kept are moved to the front of pts (each to a place at or
// before its own, already read), which is returned shortened.
func keepApart(pts []fixed.Point26_6) []fixed.Point26_6 {
	const cut = 4
	out := pts[:0]
	for i, p := range pts {
		if i > 0 {
			q := out[len(out)-1]
			if abs26(p.X-q.X)+abs26(p.Y-q.Y) <= cut {
				continue
			}
		}
		out = append(out, p)
	}
	return out
}

func abs26(v fixed.Int26_6) fixed.Int26_6 {
	if v < 0 {
		return -v
	}
	return v
}

// dashPolyline cuts a polyline into dashes as the drawing context does:
// on, off, on, … along the path, starting offset into the pattern; a
// pattern of one length is that length on and off.
func dashPolyline(path []gg.Point, dashes []float64, offset float64) [][]gg.Point {
	if len(path) < 2 {
		return nil
	}
	if len(dashes) == 1 {
		dashes = []float64{dashes[0], dashes[0]}
	}
	dash, done := 0, 0.0 // the pattern's entry, and how much of it is drawn
	if offset != 0 {
		total := 0.0
		for _, d := range dashes {
			total += d
		}
		offset = math.Mod(offset, total)
		if offset < 0 {
			offset += total
		}
		for i, d := range dashes {
			offset -= d
			if offset < 0 {
				dash, done = i, d+offset
				break
			}
		}
	}
	var out [][]gg.Point
	prev := path[0]
	seg := []gg.Point{prev}
	for next := 1; next < len(path); {
		p := path[next]
		d := prev.Distance(p)
		if left := dashes[dash] - done; d > left {
			q := prev.Interpolate(p, left/d)
			seg = append(seg, q)
			if dash%2 == 0 && len(seg) > 1 {
				out = append(out, seg)
			}
			seg = []gg.Point{q}
			done, prev = 0, q
			dash = (dash + 1) % len(dashes)
			continue
		}
		seg = append(seg, p)
		prev, done = p, done+d
		next++
	}
	if dash%2 == 0 && len(seg) > 1 {
		out = append(out, seg)
	}
	return out
}

// strokeBands strokes the subpaths (one stroke: butt caps, round joins,
// non-zero winding, as the drawing context strokes) in bands of
// bandColumns pixel columns.
func (pc *pixelCanvas) strokeBands(subpaths [][]fixed.Point26_6, width fixed.Int26_6, colour color.Color) {
	lo, hi := fixed.Int26_6(math.MaxInt32), fixed.Int26_6(math.MinInt32)
	for _, sp := range subpaths {
		if len(sp) < 2 {
			continue
		}
		for _, p := range sp {
			lo, hi = min(lo, p.X), max(hi, p.X)
		}
	}
	if lo > hi {
		return
	}
	w := pc.img.Rect.Dx()
	// Everything the stroke of a segment paints lies within half the width
	// of it (joins and caps included); a pixel more covers the rounding.
	margin := width/2 + 2*64
	first := max(0, int((lo-margin)>>6)/bandColumns)
	last := min((w-1)/bandColumns, int((hi+margin)>>6)/bandColumns)
	s := pc.lineScratch()
	for b := first; b <= last; b++ {
		x0, x1 := b*bandColumns, min(w, (b+1)*bandColumns)
		from, to := fixed.Int26_6(x0*64)-margin, fixed.Int26_6(x1*64)+margin
		s.path = appendPath(s.path[:0], subpaths, from, to)
		if len(s.path) == 0 {
			continue
		}
		r := pc.bandRaster(x0, x1)
		ftraster.Stroke(r, s.path, width, ftraster.ButtCapper, ftraster.RoundJoiner)
		r.paint(pc.img, colour)
	}
}

// appendPath appends to p the rasterizer's path of the runs of
// consecutive segments of the subpaths whose x extent meets [from, to],
// each run a subpath of its own. The rasterizer reads a path
// only while it is added, so one band's path is made where the last one's
// was.
func appendPath(p ftraster.Path, subpaths [][]fixed.Point26_6, from, to fixed.Int26_6) ftraster.Path {
	for _, sp := range subpaths {
		if len(sp) < 2 {
			continue
		}
		open := false
		for i := 1; i < len(sp); i++ {
			a, b := sp[i-1], sp[i]
			if max(a.X, b.X) < from || min(a.X, b.X) > to {
				open = false
				continue
			}
			if !open {
				p.Start(a)
				open = true
			}
			p.Add1(b)
		}
	}
	return p
}

// appendFixed appends to pts the points l (canvas coordinates) in the
// device's 26.6 fixed point, through the context's transform, as the
// context forms them.
func (pc *pixelCanvas) appendFixed(pts []fixed.Point26_6, l []vg.Point, dpi float64) []fixed.Point26_6 {
	for _, p := range l {
		x, y := pc.ctx.TransformPoint(p.X.Dots(dpi), p.Y.Dots(dpi))
		pts = append(pts, gg.Point{X: x, Y: y}.Fixed())
	}
	return pts
}

// bandRaster is the scratch's rasterizer, emptied, for the columns
// [x0, x1) of the canvas's image.
func (pc *pixelCanvas) bandRaster(x0, x1 int) *bandRaster {
	r := &pc.lineScratch().raster
	r.reset(x0, x1, pc.img.Rect.Dx(), pc.img.Rect.Dy())
	return r
}

// fillRings fills the closed polygons rings (canvas coordinates) in colour
// as the drawing context fills a path of them (non-zero winding, one fill),
// a band of bandColumns pixel columns at a time, for the same reason and
// with the same pixels as strokeLines (tested against the context). A
// band's path is each ring's runs of edges that come within two pixels of
// it, joined by chords: the edges a chord stands for lie wholly to one
// side of the band, as does the chord, and both go from the same point to
// the same point, so they cross every row by the same height.
func (pc *pixelCanvas) fillRings(rings [][]vg.Point, colour color.Color) {
	dpi := pc.DPI()
	s := pc.lineScratch()
	var fixedRings [][]fixed.Point26_6
	buf := s.fixed[:0] // the rings' points, one ring after another
	lo, hi := fixed.Int26_6(math.MaxInt32), fixed.Int26_6(math.MinInt32)
	for _, ring := range rings {
		if len(ring) == 0 {
			continue
		}
		start := len(buf)
		buf = pc.appendFixed(buf, ring, dpi)
		// A ring made by an earlier append keeps the array it was made in.
		pts := buf[start:len(buf):len(buf)]
		for _, q := range pts {
			lo, hi = min(lo, q.X), max(hi, q.X)
		}
		fixedRings = append(fixedRings, pts)
	}
	s.fixed = buf
	if len(fixedRings) == 0 {
		return
	}
	if colour == nil {
		colour = color.Black
	}
	w := pc.img.Rect.Dx()
	// The cells an edge touches lie within its x extent and the pixel
	// either side (26.6 coordinates are cut to pixels toward zero).
	const margin = 2 * 64
	first := max(0, int((lo-margin)>>6)/bandColumns)
	last := min((w-1)/bandColumns, int((hi+margin)>>6)/bandColumns)
	for b := first; b <= last; b++ {
		x0, x1 := b*bandColumns, min(w, (b+1)*bandColumns)
		from, to := fixed.Int26_6(x0*64)-margin, fixed.Int26_6(x1*64)+margin
		p := s.path[:0]
		for _, ring := range fixedRings {
			bandRing(&p, ring, from, to)
		}
		s.path = p
		if len(p) == 0 {
			continue
		}
		r := pc.bandRaster(x0, x1)
		r.addPath(p)
		r.paint(pc.img, colour)
	}
}

// bandRing adds to p the closed ring's edges whose x extent meets
// [from, to], the runs between them joined by chords; nothing when no edge
// does (the ring then lies wholly to one side).
func bandRing(p *ftraster.Path, ring []fixed.Point26_6, from, to fixed.Int26_6) {
	n := len(ring)
	near := func(k int) bool { // edge k: ring[k] → ring[k+1], the last one closing
		a, b := ring[k], ring[(k+1)%n]
		return max(a.X, b.X) >= from && min(a.X, b.X) <= to
	}
	// Start at a near edge that follows a far one (or at any near edge
	// when all are near), so that the walk around the ring begins a run.
	start := -1
	for k := range n {
		if near(k) {
			if start < 0 {
				start = k
			}
			if !near((k + n - 1) % n) {
				start = k
				break
			}
		}
	}
	if start < 0 {
		return
	}
	p.Start(ring[start])
	for k, walked := start, 0; walked < n; {
		if near(k) {
			k, walked = (k+1)%n, walked+1
			p.Add1(ring[k])
			continue
		}
		// Far edges up to the next near one (the first, at the latest):
		// one chord from where they start to where they end.
		for !near(k) {
			k, walked = (k+1)%n, walked+1
		}
		p.Add1(ring[k])
	}
}
