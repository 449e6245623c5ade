// Parts of this file (scan, Add1, Add2, Add3, saveCell, setCell and the
// painting of a row) are adapted from github.com/golang/freetype/raster
// (raster.go and paint.go), Copyright 2010 The Freetype-Go Authors, used
// under the FreeType License (FTL.TXT in this folder). Changed from the
// original: a band's cells are kept in an array rather than in sorted lists
// per row, the cover left of the band is one sum per row, and only the
// band's columns are painted (see bandRaster). The arithmetic is the
// original's.

package report

import (
	"image"
	"image/color"
	"math"

	"golang.org/x/image/math/fixed"
)

// bandRaster is freetype's rasterizer (github.com/golang/freetype/raster
// .Rasterizer, non-zero winding, painted with its RGBAPainter over an
// *image.RGBA) for the pixel columns [x0, x1) of one band, with the same
// integer arithmetic step for step, so that every pixel of the band gets
// the byte the rasterizer would give it. What differs is where the cells'
// sums are kept. The rasterizer keeps each row's cells in a list sorted by
// column and walks it from the left for every cell an outline adds (a
// third of a long line's stroke); here a band's cells are an array, a
// cell's place found at once. A pixel's coverage is its own cell's area
// plus the cover of every cell to its left in the row, so of the cells
// left of the band only their cover is kept, one sum a row, and cells to
// its right only say how far the row is painted: the rasterizer paints a
// row up to its last cell and no further.
type bandRaster struct {
	x0, x1                   int // the band's columns
	width, height            int // the image's, the rasterizer's bounds
	splitScale2, splitScale3 int

	// The pen, and the cell being summed (freetype's a, xi, yi, area, cover).
	a           fixed.Point26_6
	xi, yi      int
	area, cover int

	cells      []cellSum // row by row, x1 − x0 a row
	rows       []rowSpan
	ymin, ymax int // the rows with cells (ymin > ymax: none; a new bandRaster has none)
}

// cellSum is a cell's signed area and cover, as the rasterizer sums them.
type cellSum struct{ area, cover int }

// rowSpan is what a row holds besides its band's cells: the cover of its
// cells left of the band, its least cell column in the band and its
// greatest cell column anywhere (clamped to the width as the rasterizer
// clamps it).
type rowSpan struct {
	left        int
	first, last int
}

// reset readies r for the band [x0, x1) of an image width × height: no
// cells, the pen at the origin, the curves split as the rasterizer made
// for that image splits them (freetype's SetBounds). Only the rows the
// last band used are emptied, in that band's layout.
func (r *bandRaster) reset(x0, x1, width, height int) {
	bw := r.x1 - r.x0
	for y := r.ymin; y <= min(r.ymax, len(r.rows)-1); y++ {
		clear(r.cells[y*bw : (y+1)*bw])
		r.rows[y] = noCells
	}
	ss2, ss3 := 32, 16
	if width > 24 || height > 24 {
		ss2, ss3 = 2*ss2, 2*ss3
		if width > 120 || height > 120 {
			ss2, ss3 = 2*ss2, 2*ss3
		}
	}
	r.splitScale2, r.splitScale3 = ss2, ss3
	r.width, r.height = width, height
	r.x0, r.x1 = x0, x1
	if n := (x1 - x0) * height; cap(r.cells) < n {
		r.cells = make([]cellSum, n)
	} else {
		r.cells = r.cells[:n]
	}
	if cap(r.rows) < height {
		r.rows = make([]rowSpan, height)
		for y := range r.rows {
			r.rows[y] = noCells
		}
	}
	r.rows = r.rows[:height]
	r.ymin, r.ymax = height, -1
	r.a, r.xi, r.yi, r.area, r.cover = fixed.Point26_6{}, 0, 0, 0, 0
}

// noCells is a row with no cells.
var noCells = rowSpan{first: math.MaxInt, last: math.MinInt}

// saveCell adds the cell being summed to its row, as the rasterizer's
// saveCell (a cell with nothing summed is not made).
func (r *bandRaster) saveCell() {
	if r.area == 0 && r.cover == 0 {
		return
	}
	if r.yi >= 0 && r.yi < r.height {
		xi := min(max(r.xi, -1), r.width)
		row := &r.rows[r.yi]
		switch {
		case xi < r.x0:
			row.left += r.cover
		case xi < r.x1:
			c := &r.cells[r.yi*(r.x1-r.x0)+xi-r.x0]
			c.area += r.area
			c.cover += r.cover
			row.first = min(row.first, xi)
		}
		row.last = max(row.last, xi)
		r.ymin, r.ymax = min(r.ymin, r.yi), max(r.ymax, r.yi)
	}
	r.area, r.cover = 0, 0
}

func (r *bandRaster) setCell(xi, yi int) {
	if r.xi != xi || r.yi != yi {
		r.saveCell()
		r.xi, r.yi = xi, yi
	}
}

// Start, Add1, Add2 and Add3 are the rasterizer's (raster.Adder).
func (r *bandRaster) Start(a fixed.Point26_6) {
	r.setCell(int(a.X/64), int(a.Y/64))
	r.a = a
}

// scan is the rasterizer's scan: the line from (x0, y0f) to (x1, y1f)
// within the row yi (y in 26.6 within the row).
func (r *bandRaster) scan(yi int, x0, y0f, x1, y1f fixed.Int26_6) {
	x0i := int(x0) / 64
	x0f := x0 - fixed.Int26_6(64*x0i)
	x1i := int(x1) / 64
	x1f := x1 - fixed.Int26_6(64*x1i)
	if y0f == y1f { // a horizontal scan
		r.setCell(x1i, yi)
		return
	}
	dx, dy := x1-x0, y1f-y0f
	if x0i == x1i { // within one cell
		r.area += int((x0f + x1f) * dy)
		r.cover += int(dy)
		return
	}
	var (
		p, q, edge0, edge1 fixed.Int26_6
		xiDelta            int
	)
	if dx > 0 {
		p, q = (64-x0f)*dy, dx
		edge0, edge1, xiDelta = 0, 64, 1
	} else {
		p, q = x0f*dy, -dx
		edge0, edge1, xiDelta = 64, 0, -1
	}
	yDelta, yRem := floorDivMod(p, q)
	// The first cell, the ones the line crosses whole, the last.
	xi, y := x0i, y0f
	r.area += int((x0f + edge1) * yDelta)
	r.cover += int(yDelta)
	xi, y = xi+xiDelta, y+yDelta
	r.setCell(xi, yi)
	if xi != x1i {
		p = 64 * (y1f - y + yDelta)
		fullDelta, fullRem := floorDivMod(p, q)
		yRem -= q
		for xi != x1i {
			yDelta = fullDelta
			yRem += fullRem
			if yRem >= 0 {
				yDelta += 1
				yRem -= q
			}
			r.area += int(64 * yDelta)
			r.cover += int(yDelta)
			xi, y = xi+xiDelta, y+yDelta
			r.setCell(xi, yi)
		}
	}
	yDelta = y1f - y
	r.area += int((edge0 + x1f) * yDelta)
	r.cover += int(yDelta)
}

func (r *bandRaster) Add1(b fixed.Point26_6) {
	x0, y0 := r.a.X, r.a.Y
	x1, y1 := b.X, b.Y
	dx, dy := x1-x0, y1-y0
	y0i := int(y0) / 64
	y0f := y0 - fixed.Int26_6(64*y0i)
	y1i := int(y1) / 64
	y1f := y1 - fixed.Int26_6(64*y1i)
	switch {
	case y0i == y1i: // one row
		r.scan(y0i, x0, y0f, x1, y1f)
	case dx == 0:
		r.vertical(x0, y0i, y0f, y1i, y1f, dy)
	default:
		r.across(x0, y0i, y0f, x1, y1i, y1f, dx, dy)
	}
	r.a = b
}

// vertical is Add1 of a vertical line over more than one row.
func (r *bandRaster) vertical(x0 fixed.Int26_6, y0i int, y0f fixed.Int26_6, y1i int, y1f, dy fixed.Int26_6) {
	var (
		edge0, edge1 fixed.Int26_6
		yiDelta      int
	)
	if dy > 0 {
		edge0, edge1, yiDelta = 0, 64, 1
	} else {
		edge0, edge1, yiDelta = 64, 0, -1
	}
	x0i, yi := int(x0)/64, y0i
	x0fTimes2 := (int(x0) - (64 * x0i)) * 2
	dcover := int(edge1 - y0f)
	darea := int(x0fTimes2 * dcover)
	r.area += darea
	r.cover += dcover
	yi += yiDelta
	r.setCell(x0i, yi)
	dcover = int(edge1 - edge0)
	darea = int(x0fTimes2 * dcover)
	for yi != y1i {
		r.area += darea
		r.cover += dcover
		yi += yiDelta
		r.setCell(x0i, yi)
	}
	dcover = int(y1f - edge0)
	darea = int(x0fTimes2 * dcover)
	r.area += darea
	r.cover += dcover
}

// across is Add1 of a sloping line over more than one row, a scan a row.
func (r *bandRaster) across(x0 fixed.Int26_6, y0i int, y0f, x1 fixed.Int26_6, y1i int, y1f, dx, dy fixed.Int26_6) {
	var (
		p, q, edge0, edge1 fixed.Int26_6
		yiDelta            int
	)
	if dy > 0 {
		p, q = (64-y0f)*dx, dy
		edge0, edge1, yiDelta = 0, 64, 1
	} else {
		p, q = y0f*dx, -dy
		edge0, edge1, yiDelta = 64, 0, -1
	}
	xDelta, xRem := floorDivMod(p, q)
	x, yi := x0, y0i
	r.scan(yi, x, y0f, x+xDelta, edge1)
	x, yi = x+xDelta, yi+yiDelta
	r.setCell(int(x)/64, yi)
	if yi != y1i {
		p = 64 * dx
		fullDelta, fullRem := floorDivMod(p, q)
		xRem -= q
		for yi != y1i {
			xDelta = fullDelta
			xRem += fullRem
			if xRem >= 0 {
				xDelta += 1
				xRem -= q
			}
			r.scan(yi, x, edge0, x+xDelta, edge1)
			x, yi = x+xDelta, yi+yiDelta
			r.setCell(int(x)/64, yi)
		}
	}
	r.scan(yi, x, edge0, x1, y1f)
}

// floorDivMod is p ÷ q rounded down and its remainder in [0, q), q > 0:
// the rasterizer's step along a line in whole cells and the error it
// carries (Go's / and % round towards zero).
func floorDivMod(p, q fixed.Int26_6) (fixed.Int26_6, fixed.Int26_6) {
	d, r := p/q, p%q
	if r < 0 {
		d, r = d-1, r+q
	}
	return d, r
}

// Add2 is the rasterizer's quadratic: split in halves as often as the
// middle point strays from the chord's, each piece two lines.
func (r *bandRaster) Add2(b, c fixed.Point26_6) {
	dev := max(abs26(r.a.X-2*b.X+c.X), abs26(r.a.Y-2*b.Y+c.Y)) / fixed.Int26_6(r.splitScale2)
	nsplit := 0
	for dev > 0 {
		dev /= 4
		nsplit++
	}
	const maxNsplit = 16
	if nsplit > maxNsplit {
		panic("bandRaster: quadratic split too often")
	}
	var (
		pStack [2*maxNsplit + 3]fixed.Point26_6
		sStack [maxNsplit + 1]int
		i      int
	)
	sStack[0] = nsplit
	pStack[0], pStack[1], pStack[2] = c, b, r.a
	for i >= 0 {
		s := sStack[i]
		p := pStack[2*i:]
		if s == 0 {
			midx := (p[0].X + 2*p[1].X + p[2].X) / 4
			midy := (p[0].Y + 2*p[1].Y + p[2].Y) / 4
			r.Add1(fixed.Point26_6{X: midx, Y: midy})
			r.Add1(p[0])
			i--
			continue
		}
		mx := p[1].X
		p[4].X = p[2].X
		p[3].X = (p[4].X + mx) / 2
		p[1].X = (p[0].X + mx) / 2
		p[2].X = (p[1].X + p[3].X) / 2
		my := p[1].Y
		p[4].Y = p[2].Y
		p[3].Y = (p[4].Y + my) / 2
		p[1].Y = (p[0].Y + my) / 2
		p[2].Y = (p[1].Y + p[3].Y) / 2
		sStack[i] = s - 1
		sStack[i+1] = s - 1
		i++
	}
}

// Add3 is the rasterizer's cubic, split as it splits one.
func (r *bandRaster) Add3(b, c, d fixed.Point26_6) {
	dev2 := max(abs26(r.a.X-3*(b.X+c.X)+d.X), abs26(r.a.Y-3*(b.Y+c.Y)+d.Y)) / fixed.Int26_6(r.splitScale2)
	dev3 := max(abs26(r.a.X-2*b.X+d.X), abs26(r.a.Y-2*b.Y+d.Y)) / fixed.Int26_6(r.splitScale3)
	nsplit := 0
	for dev2 > 0 || dev3 > 0 {
		dev2 /= 8
		dev3 /= 4
		nsplit++
	}
	const maxNsplit = 16
	if nsplit > maxNsplit {
		panic("bandRaster: cubic split too often")
	}
	var (
		pStack [3*maxNsplit + 4]fixed.Point26_6
		sStack [maxNsplit + 1]int
		i      int
	)
	sStack[0] = nsplit
	pStack[0], pStack[1], pStack[2], pStack[3] = d, c, b, r.a
	for i >= 0 {
		s := sStack[i]
		p := pStack[3*i:]
		if s == 0 {
			midx := (p[0].X + 3*(p[1].X+p[2].X) + p[3].X) / 8
			midy := (p[0].Y + 3*(p[1].Y+p[2].Y) + p[3].Y) / 8
			r.Add1(fixed.Point26_6{X: midx, Y: midy})
			r.Add1(p[0])
			i--
			continue
		}
		p[1].X, p[2].X, p[3].X, p[4].X, p[5].X, p[6].X = splitCubic(p[0].X, p[1].X, p[2].X, p[3].X)
		p[1].Y, p[2].Y, p[3].Y, p[4].Y, p[5].Y, p[6].Y = splitCubic(p[0].Y, p[1].Y, p[2].Y, p[3].Y)
		sStack[i] = s - 1
		sStack[i+1] = s - 1
		i++
	}
}

// splitCubic is the rasterizer's halving of a cubic's coordinate p0…p3:
// the new p1…p6 (p0 stays).
func splitCubic(p0, p1, p2, p3 fixed.Int26_6) (q1, q2, q3, q4, q5, q6 fixed.Int26_6) {
	m01 := (p0 + p1) / 2
	m12 := (p1 + p2) / 2
	m23 := (p2 + p3) / 2
	q6, q5, q1 = p3, m23, m01
	q2 = (m01 + m12) / 2
	q4 = (m12 + m23) / 2
	q3 = (q2 + q4) / 2
	return
}

// addPath adds a rasterizer's path (raster.Rasterizer.AddPath).
func (r *bandRaster) addPath(p []fixed.Int26_6) {
	pt := func(i int) fixed.Point26_6 { return fixed.Point26_6{X: p[i], Y: p[i+1]} }
	for i := 0; i < len(p); {
		switch p[i] {
		case 0:
			r.Start(pt(i + 1))
			i += 4
		case 1:
			r.Add1(pt(i + 1))
			i += 4
		case 2:
			r.Add2(pt(i+1), pt(i+3))
			i += 6
		case 3:
			r.Add3(pt(i+1), pt(i+3), pt(i+5))
			i += 8
		default:
			panic("bandRaster: bad path")
		}
	}
}

// paint lays what r holds over the band's pixels of img in colour c, as
// the rasterizer's Rasterize with an RGBAPainter (op Over) does: each
// pixel's alpha from the cover of the cells to its left and its own
// cell's area (areaToAlpha, non-zero winding), up to the row's last cell.
func (r *bandRaster) paint(img *image.RGBA, c color.Color) {
	r.saveCell()
	cr, cg, cb, ca := c.RGBA()
	const m = 1<<16 - 1
	bw := r.x1 - r.x0
	for y := r.ymin; y <= min(r.ymax, len(r.rows)-1); y++ {
		row := r.rows[y]
		from, to := row.first, min(row.last+1, r.x1)
		cover := row.left
		if cover != 0 {
			from = r.x0
		}
		cells := r.cells[y*bw : (y+1)*bw]
		pix := img.Pix[(y-img.Rect.Min.Y)*img.Stride-img.Rect.Min.X*4:]
		for x := from; x < to; x++ {
			cell := cells[x-r.x0]
			cover += cell.cover
			ma := areaToAlpha(cover*64*2 - cell.area)
			if ma == 0 {
				continue
			}
			p := pix[4*x : 4*x+4 : 4*x+4]
			a := (m - (ca * ma / m)) * 0x101
			p[0] = uint8((uint32(p[0])*a + cr*ma) / m >> 8)
			p[1] = uint8((uint32(p[1])*a + cg*ma) / m >> 8)
			p[2] = uint8((uint32(p[2])*a + cb*ma) / m >> 8)
			p[3] = uint8((uint32(p[3])*a + ca*ma) / m >> 8)
		}
	}
}

// areaToAlpha is the rasterizer's, non-zero winding: the area rounded to
// a 12-bit alpha, clamped, widened to 16 bits.
func areaToAlpha(area int) uint32 {
	a := (area + 1) >> 1
	if a < 0 {
		a = -a
	}
	alpha := min(uint32(a), 0x0fff)
	return alpha<<4 | alpha>>8
}
