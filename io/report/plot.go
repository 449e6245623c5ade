package report

import (
	"fmt"
	"image"
	"image/color"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"

	"git.sr.ht/~sbinet/gg"
	ftraster "github.com/golang/freetype/raster"
	"golang.org/x/image/math/fixed"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"
)

// Figure is one figure of the report: an SVG drawing with its words.
type Figure struct {
	ID      string // anchor in the report, e.g. "fig-spectra"
	Title   string
	Caption string
	Legend  []LegendItem
	SVG     string // <svg …>…</svg>, without the XML prolog
	drawing drawing
}

// drawing redraws a figure on any canvas, for the stand-alone figure files.
type drawing struct {
	draw  func(dc draw.Canvas)
	w, h  vg.Length
	plots []*plot.Plot
}

// LegendItem is one entry of a figure's legend, drawn in the HTML beside
// the figure so it never hides data.
type LegendItem struct {
	Label  string
	Colour color.RGBA
	Dash   []float64 // nil: solid
	Marker bool      // a point rather than a line
	Fill   bool      // a shaded area
}

// Figures are drawn 16 cm × 9 cm, the width of a printed page's text
// column, with 10–12 pt text: readable when printed at that size.
const (
	figW = 16 * vg.Centimeter
	figH = 9 * vg.Centimeter
)

var sans = font.Font{Typeface: "Liberation", Variant: "Sans"}

// dashes per component, so lines stay apart in grey print.
var dashes = [][]float64{nil, {6, 3}, {2, 2}, {8, 3, 2, 3}, {4, 4}, {10, 2}, {1, 3}}

func dashOf(k int) []float64 { return dashes[k%len(dashes)] }

func lengths(d []float64) []vg.Length {
	if d == nil {
		return nil
	}
	out := make([]vg.Length, len(d))
	for i, v := range d {
		out[i] = vg.Points(v)
	}
	return out
}

// newPlot makes a plot in the report's style: sans-serif text, light grid.
func newPlot(xlabel, ylabel string) *plot.Plot {
	p := plot.New()
	p.Title.TextStyle.Font = font.From(sans, 12)
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Font = font.From(sans, 11)
		a.Tick.Label.Font = font.From(sans, 10)
		a.Padding = vg.Points(2)
	}
	p.X.Label.Text, p.Y.Label.Text = xlabel, ylabel
	p.X.Tick.Marker, p.Y.Tick.Marker = niceTicks{}, niceTicks{}
	p.Legend.TextStyle.Font = font.From(sans, 10)
	g := plotter.NewGrid()
	g.Vertical.Color, g.Horizontal.Color = lightGrey, lightGrey
	g.Vertical.Width, g.Horizontal.Width = vg.Points(0.4), vg.Points(0.4)
	p.Add(g)
	measureOnce(p)
	return p
}

// measureOnce gives the plot's texts a handler that measures each text in
// each font once (measuredText), in place of the plot's own, which it
// asks.
func measureOnce(p *plot.Plot) {
	own := p.TextHandler
	m := &measuredText{Handler: own}
	for _, h := range []*text.Handler{&p.TextHandler, &p.Title.TextStyle.Handler, &p.Legend.TextStyle.Handler,
		&p.X.Label.TextStyle.Handler, &p.X.Tick.Label.Handler, &p.Y.Label.TextStyle.Handler, &p.Y.Tick.Label.Handler} {
		if *h == own {
			*h = m
		}
	}
}

// measuredText is a text handler that keeps the box of each text in each
// font it measured: gonum/plot measures a tick label several times a
// drawing (the axes' sizes, their glyph boxes, the labels' places), and
// each measure walks the font's tables for every glyph with a buffer of
// its own, made anew (font.Face.Width). A box depends on the text and the
// font alone, so it is the one the handler would give again. It is used by
// one goroutine at a time, as its plot is.
type measuredText struct {
	text.Handler
	boxes map[textKey][3]vg.Length
}

type textKey struct {
	txt string
	fnt font.Font
}

func (m *measuredText) Box(txt string, fnt font.Font) (width, height, depth vg.Length) {
	k := textKey{txt, fnt}
	if b, ok := m.boxes[k]; ok {
		return b[0], b[1], b[2]
	}
	width, height, depth = m.Handler.Box(txt, fnt)
	if m.boxes == nil {
		m.boxes = map[textKey][3]vg.Length{}
	}
	m.boxes[k] = [3]vg.Length{width, height, depth}
	return width, height, depth
}

// axisStyle is how a spectral axis is labelled and which way it runs.
type axisStyle struct {
	Label    string
	Reversed bool // high → low left to right
	Unit     string
}

// spectralAxis reads the axis column's name. Infrared wavenumber axes run
// high → low left to right, and so do chemical shifts (common practice).
func spectralAxis(name string) axisStyle {
	n := strings.ToLower(name)
	switch {
	case strings.Contains(n, "wavenumber") || strings.Contains(n, "cm-1") || strings.Contains(n, "cm^-1") || strings.Contains(n, "cm⁻¹"):
		return axisStyle{Label: "wavenumber / cm⁻¹", Reversed: true, Unit: "cm⁻¹"}
	case strings.Contains(n, "wavelength") || n == "nm" || strings.Contains(n, "(nm)"):
		return axisStyle{Label: "wavelength / nm", Unit: "nm"}
	case strings.Contains(n, "ppm") || strings.Contains(n, "shift"):
		return axisStyle{Label: "chemical shift / ppm", Reversed: true, Unit: "ppm"}
	case strings.Contains(n, "raman"):
		return axisStyle{Label: "Raman shift / cm⁻¹", Unit: "cm⁻¹"}
	}
	if name == "" {
		name = "axis"
	}
	return axisStyle{Label: name + " (unit as in the input)"}
}

func (a axisStyle) apply(p *plot.Plot) {
	p.X.Label.Text = a.Label
	if a.Reversed {
		p.X.Scale = plot.InvertedScale{Normalizer: plot.LinearScale{}}
	}
}

// addLine adds x,y as a line, split at missing values (NaN). The points
// are copied once, into one array whose parts the segments' lines keep,
// rather than gathered point by point and copied again by plotter.NewLine.
// It has no error to give: every point it keeps is finite, all NewLine
// checks.
func addLine(p *plot.Plot, x, y []float64, c color.RGBA, width float64, dash []float64) {
	all := make(plotter.XYs, 0, min(len(x), len(y)))
	start := 0
	flush := func() {
		seg := all[start:len(all):len(all)]
		if len(seg) >= 2 {
			// What plotter.NewLine gives for finite points, without its copy.
			l := &plotter.Line{XYs: seg, LineStyle: plotter.DefaultLineStyle}
			l.Color, l.Width, l.Dashes = c, vg.Points(width), lengths(dash)
			p.Add(edgeLine{Line: l, boxes: &glyphBoxCache{}})
		} else if len(seg) == 1 {
			addPoints(p, seg, c, false)
		}
		start = len(all)
	}
	for i := range x {
		if i >= len(y) || !finite(x[i]) || !finite(y[i]) {
			flush()
			continue
		}
		all = append(all, plotter.XY{X: x[i], Y: y[i]})
	}
	flush()
}

// edgeLine is a line whose glyph boxes are only those the plot's padding
// can use. plotter.Line gives one box, half its width square, per point
// (3001 per spectrum, three times per figure); the plot keeps those inside
// the axes and pads for the outermost one in each direction, and as all are
// the same size only the points at the least and greatest x and y inside
// the axes decide it. The padding, and so every byte drawn, is the same.
// The plot asks four times a drawing (padding each axis, and the data area
// for both), and a figure is drawn twice (report and PNG file) with the
// same axes: the boxes are kept for the axes' ranges they were found for.
type edgeLine struct {
	*plotter.Line
	boxes *glyphBoxCache
}

// DataRange is plotter.Line's (plotter.XYRange of the points) in one loop
// over the points instead of four interface calls per point.
func (l edgeLine) DataRange() (xmin, xmax, ymin, ymax float64) { return xyRange(l.XYs) }

// xyRange is plotter.XYRange of xys: the least and greatest x and y from
// ±Inf by math.Min and math.Max, as it takes them (the built-in min and
// max give another NaN's bits).
func xyRange(xys plotter.XYs) (xmin, xmax, ymin, ymax float64) {
	xmin, xmax, ymin, ymax = math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for _, p := range xys {
		xmin, xmax = math.Min(xmin, p.X), math.Max(xmax, p.X)
		ymin, ymax = math.Min(ymin, p.Y), math.Max(ymax, p.Y)
	}
	return xmin, xmax, ymin, ymax
}

// glyphBoxCache is an edgeLine's glyph boxes for one plot and axis ranges.
type glyphBoxCache struct {
	plt   *plot.Plot
	rng   [4]float64 // x min, x max, y min, y max
	boxes []plot.GlyphBox
}

func (l edgeLine) GlyphBoxes(plt *plot.Plot) []plot.GlyphBox {
	// The boxes depend on the points (fixed once added) and on the axes'
	// normalization: the plot's scales (set before it is drawn) and ranges.
	rng := [4]float64{plt.X.Min, plt.X.Max, plt.Y.Min, plt.Y.Max}
	if c := l.boxes; c != nil && c.plt == plt && c.rng == rng {
		return slices.Clone(c.boxes)
	}
	boxes := l.glyphBoxes(plt)
	if l.boxes != nil {
		*l.boxes = glyphBoxCache{plt: plt, rng: rng, boxes: slices.Clone(boxes)}
	}
	return boxes
}

func (l edgeLine) glyphBoxes(plt *plot.Plot) []plot.GlyphBox {
	r := 0.5 * l.LineStyle.Width
	if !(r > 0) {
		return nil // boxes of no size never pad
	}
	rect := vg.Rectangle{Min: vg.Point{X: -r, Y: -r}, Max: vg.Point{X: r, Y: r}}
	var ext [4]int // least x, greatest x, least y, greatest y
	var val [4]float64
	found := false
	for i := range l.XYs {
		x, y := plt.X.Norm(l.XYs[i].X), plt.Y.Norm(l.XYs[i].Y)
		// What plot.GlyphBoxes keeps (a NaN position never pads either).
		if !(x >= 0 && x <= 1 && y >= 0 && y <= 1) {
			continue
		}
		if !found {
			found, ext, val = true, [4]int{i, i, i, i}, [4]float64{x, -x, y, -y}
			continue
		}
		for q, v := range [4]float64{x, -x, y, -y} {
			if v < val[q] {
				ext[q], val[q] = i, v
			}
		}
	}
	if !found {
		return nil
	}
	out := make([]plot.GlyphBox, 0, 4)
	for q, i := range ext {
		if q > 0 && slices.Contains(ext[:q], i) {
			continue
		}
		out = append(out, plot.GlyphBox{X: plt.X.Norm(l.XYs[i].X), Y: plt.Y.Norm(l.XYs[i].Y), Rectangle: rect})
	}
	return out
}

// Plot draws the line reduced to what the figure's pixels can show (thin):
// a 3001-point spectrum is otherwise stroked point by point three times
// per figure at resolutions where several points share one pixel column.
// A line wholly inside the canvas (as every line of a figure whose axes
// span its data) is thinned without clipping, which gives such a line back
// as it is (draw.Canvas.ClipLinesXY: one line of the same points, none of
// fewer than two) after four copies; its points are formed and thinned in
// the canvas's scratch memory.
func (l edgeLine) Plot(c draw.Canvas, plt *plot.Plot) {
	if l.LineStyle.Width == 0 {
		return
	}
	trX, trY := transforms(&c, plt)
	s := scratchOf(c)
	ps := grownPoints(&s.pts, len(l.XYs))
	inside := true
	for i, p := range l.XYs {
		ps[i] = vg.Point{X: trX.at(p.X), Y: trY.at(p.Y)}
		inside = inside && c.Contains(ps[i])
	}
	var lines [][]vg.Point
	switch {
	case inside && len(ps) >= 2:
		s.thinned = thinAppend(s.thinned[:0], ps)
		s.lines = append(s.lines[:0], s.thinned)
		lines = s.lines
	case !inside:
		lines = c.ClipLinesXY(ps)
		for i := range lines {
			lines[i] = thin(lines[i])
		}
	}
	switch cv := baseCanvas(c).(type) {
	case *pixelCanvas:
		cv.strokeLines(c, l.LineStyle, lines)
	case *svgCanvas:
		cv.strokeLines(c, l.LineStyle, lines)
	default:
		c.StrokeLines(l.LineStyle, lines...)
	}
}

// axisMap is plot.Plot.Transforms' map of one axis, data to canvas: the
// axis's Norm then the canvas's X or Y, the same operations in the same
// order, so the same lengths. Transforms' closures call Axis.Norm, whose
// receiver is the whole Axis (its label, ticks and styles) copied at every
// point: with the scale's and the canvas's calls, a tenth of drawing the
// long lines and bands (docs/performance-history.md, twenty-fourth round).
// The linear scale and its inverse are written out; any other scale is
// called through the axis's Normalizer.
type axisMap struct {
	min, max float64
	lo, size vg.Length // the canvas's Min and Max − Min along the axis
	scale    int       // linearAxis, invertedAxis or otherAxis
	norm     plot.Normalizer
}

const (
	linearAxis = iota
	invertedAxis
	otherAxis
)

func newAxisMap(a *plot.Axis, lo, hi vg.Length) axisMap {
	m := axisMap{min: a.Min, max: a.Max, lo: lo, size: hi - lo, scale: otherAxis, norm: a.Scale}
	switch sc := a.Scale.(type) {
	case plot.LinearScale:
		m.scale = linearAxis
	case plot.InvertedScale:
		if _, ok := sc.Normalizer.(plot.LinearScale); ok {
			m.scale = invertedAxis
		}
	}
	return m
}

// at is the canvas coordinate of x.
func (m axisMap) at(x float64) vg.Length {
	var v float64
	switch m.scale {
	case linearAxis: // plot.LinearScale.Normalize(min, max, x)
		v = (x - m.min) / (m.max - m.min)
	case invertedAxis: // plot.InvertedScale{LinearScale}: the same with min and max swapped
		v = (x - m.max) / (m.min - m.max)
	default:
		v = m.norm.Normalize(m.min, m.max, x)
	}
	return vg.Length(v)*m.size + m.lo // draw.Canvas.X and Y
}

// transforms are plt.Transforms(c) as axis maps.
func transforms(c *draw.Canvas, plt *plot.Plot) (x, y axisMap) {
	return newAxisMap(&plt.X, c.Min.X, c.Max.X), newAxisMap(&plt.Y, c.Min.Y, c.Max.Y)
}

// lineScratch is memory that the lines and shaded bands drawn on one canvas
// reuse, one after another: their points in canvas coordinates, thinned,
// in the device's fixed point, the rasterizer's path and a band's cells.
// Nothing drawn keeps any of it: a stroke or a fill is done when its call
// returns (the SVG data held back are bytes of their own).
type lineScratch struct {
	pts, thinned []vg.Point
	lines        [][]vg.Point
	fixed        []fixed.Point26_6
	path         ftraster.Path
	raster       bandRaster
}

// scratchOf is the scratch memory of c's base canvas (a pixel canvas lent
// none makes its own, as its strokes do), or fresh memory for another.
func scratchOf(c draw.Canvas) *lineScratch {
	switch cv := baseCanvas(c).(type) {
	case *pixelCanvas:
		return cv.lineScratch()
	case *svgCanvas:
		return &cv.scratch
	}
	return &lineScratch{}
}

// grownPoints is *s resliced to n points, made anew when it is shorter.
func grownPoints(s *[]vg.Point, n int) []vg.Point {
	if cap(*s) < n {
		*s = make([]vg.Point, n)
	}
	return (*s)[:n]
}

// pixelColumn is the width of the columns lines and shaded bands are
// reduced to before they are drawn: one pixel of the PNG files (1/FigureDPI
// inch, about half a point), under the width of every line drawn.
const pixelColumn = vg.Inch / FigureDPI

// thin reduces a polyline to what columns pixelColumn wide can show: of
// each run of consecutive points in one column only the lowest and the
// highest are kept, in their order, and the first and last points of all.
// A peak narrower than a column keeps its full height (it is not averaged
// away); what goes is the path within a column, hidden under the stroke.
// The result depends only on the points, so the drawing stays
// deterministic.
func thin(ps []vg.Point) []vg.Point {
	if len(ps) < 4 {
		return ps
	}
	return thinAppend(make([]vg.Point, 0, min(len(ps), 2048)), ps)
}

// thinAppend appends thin(ps) to out.
func thinAppend(out, ps []vg.Point) []vg.Point {
	if len(ps) < 4 {
		return append(out, ps...)
	}
	col := func(p vg.Point) float64 { return math.Floor(float64(p.X / pixelColumn)) }
	out = append(out, ps[0])
	for i := 0; i < len(ps); {
		c, lo, hi := col(ps[i]), i, i
		j := i + 1
		for ; j < len(ps) && col(ps[j]) == c; j++ {
			if ps[j].Y < ps[lo].Y {
				lo = j
			}
			if ps[j].Y > ps[hi].Y {
				hi = j
			}
		}
		first, second := min(lo, hi), max(lo, hi)
		if first > 0 {
			out = append(out, ps[first])
		}
		if second != first {
			out = append(out, ps[second])
		}
		i = j
	}
	if last := ps[len(ps)-1]; out[len(out)-1] != last {
		out = append(out, last)
	}
	return out
}

// thinPolygon is a shaded area whose outline is thinned like a line
// before it is filled; it has no outline stroke.
type thinPolygon struct{ *plotter.Polygon }

// DataRange is plotter.Polygon's, each ring's range by xyRange.
func (pg thinPolygon) DataRange() (xmin, xmax, ymin, ymax float64) {
	xmin, xmax, ymin, ymax = math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for _, ring := range pg.XYs {
		x0, x1, y0, y1 := xyRange(ring)
		xmin, xmax = math.Min(xmin, x0), math.Max(xmax, x1)
		ymin, ymax = math.Min(ymin, y0), math.Max(ymax, y1)
	}
	return xmin, xmax, ymin, ymax
}

// Like a line, a ring wholly inside the canvas is not clipped, which would
// give it back as it is (draw.Canvas.ClipPolygonXY) after four copies.
func (pg thinPolygon) Plot(c draw.Canvas, plt *plot.Plot) {
	trX, trY := transforms(&c, plt)
	s := scratchOf(c)
	var rings [][]vg.Point
	buf := s.thinned[:0] // the thinned rings, one after another
	for _, ring := range pg.XYs {
		ps := grownPoints(&s.pts, len(ring))
		for i, p := range ring {
			ps[i] = vg.Point{X: trX.at(p.X), Y: trY.at(p.Y)}
		}
		start := len(buf)
		buf = thinAppend(buf, ps)
		// A ring made by an earlier append keeps the array it was made in.
		ps = buf[start:len(buf):len(buf)]
		if !allInside(c, ps) {
			ps = c.ClipPolygonXY(ps)
		}
		if len(ps) > 0 {
			rings = append(rings, ps)
		}
	}
	s.thinned = buf
	if pg.Color == nil || len(rings) == 0 {
		return
	}
	c.SetColor(pg.Color)
	switch cv := baseCanvas(c).(type) {
	case *pixelCanvas:
		cv.fillRings(rings, pg.Color)
	case *svgCanvas:
		cv.fillRings(c, rings)
	default:
		c.Fill(ringsPath(rings))
	}
}

// allInside says whether every point lies in c, as its clipping tests
// them (draw.Canvas.Contains: the same bounds and slop).
func allInside(c draw.Canvas, ps []vg.Point) bool {
	for _, p := range ps {
		if !c.Contains(p) {
			return false
		}
	}
	return true
}

// ringsPath is the path of closed polygons.
func ringsPath(rings [][]vg.Point) vg.Path {
	n := 0
	for _, ps := range rings {
		n += len(ps) + 1
	}
	pa := make(vg.Path, 0, n)
	for _, ps := range rings {
		pa.Move(ps[0])
		for _, p := range ps[1:] {
			pa.Line(p)
		}
		pa.Close()
	}
	return pa
}

func addPoints(p *plot.Plot, xy plotter.XYs, c color.RGBA, hollow bool) {
	s, err := plotter.NewScatter(xy)
	if err != nil {
		return
	}
	s.GlyphStyle.Color = c
	s.GlyphStyle.Radius = vg.Points(2.2)
	s.GlyphStyle.Shape = draw.CircleGlyph{}
	if hollow {
		s.GlyphStyle.Shape = draw.RingGlyph{}
	}
	p.Add(s)
}

// hline draws a horizontal reference line across [x0, x1].
func hline(p *plot.Plot, x0, x1, y float64, c color.RGBA, dash []float64) {
	l, err := plotter.NewLine(plotter.XYs{{X: x0, Y: y}, {X: x1, Y: y}})
	if err != nil {
		return
	}
	l.Color, l.Width, l.Dashes = c, vg.Points(0.8), lengths(dash)
	p.Add(l)
}

func vline(p *plot.Plot, x, y0, y1 float64, c color.RGBA, dash []float64) {
	l, err := plotter.NewLine(plotter.XYs{{X: x, Y: y0}, {X: x, Y: y1}})
	if err != nil {
		return
	}
	l.Color, l.Width, l.Dashes = c, vg.Points(0.8), lengths(dash)
	p.Add(l)
}

// band shades the area between lo and hi. Its ring is gathered in one
// array of the size it can reach and kept by the polygon as it is, rather
// than grown point by point and copied by plotter.NewPolygon.
func band(p *plot.Plot, x, lo, hi []float64, c color.RGBA) {
	pts := make(plotter.XYs, 0, 2*len(x))
	for i := range x {
		if finite(x[i]) && finite(lo[i]) && finite(hi[i]) {
			pts = append(pts, plotter.XY{X: x[i], Y: hi[i]})
		}
	}
	for i := len(x) - 1; i >= 0; i-- {
		if finite(x[i]) && finite(lo[i]) && finite(hi[i]) {
			pts = append(pts, plotter.XY{X: x[i], Y: lo[i]})
		}
	}
	if len(pts) < 3 {
		return
	}
	// What plotter.NewPolygon gives for finite points, without its copy.
	poly := &plotter.Polygon{XYs: []plotter.XYs{pts}, LineStyle: plotter.DefaultLineStyle}
	poly.Color = c
	poly.LineStyle.Width = 0
	p.Add(thinPolygon{poly})
}

// raster draws an image into a data rectangle. It maps the corners through
// the plot's transforms, so it stays right on an inverted axis (the gonum
// heat map assumes a forward one). SVG canvases get the paletted image (its
// PNG is 1 byte a pixel, unfiltered, and so cheap to encode); the figure
// files' raster canvas paints it pixel by pixel (pixelCanvas.paint).
type raster struct {
	pal                    *image.Paletted
	xmin, xmax, ymin, ymax float64
}

// newRaster draws p over the data rectangle r (xmin, xmax, ymin, ymax).
func newRaster(p *image.Paletted, r [4]float64) raster {
	return raster{pal: p, xmin: r[0], xmax: r[1], ymin: r[2], ymax: r[3]}
}

func (r raster) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	x0, x1 := trX(r.xmin), trX(r.xmax)
	y0, y1 := trY(r.ymin), trY(r.ymax)
	if x0 > x1 {
		x0, x1 = x1, x0
	}
	if y0 > y1 {
		y0, y1 = y1, y0
	}
	rect := vg.Rectangle{Min: vg.Point{X: x0, Y: y0}, Max: vg.Point{X: x1, Y: y1}}
	switch cv := baseCanvas(c).(type) {
	case *vgsvg.Canvas:
		cv.DrawImage(rect, r.pal)
	case *svgCanvas:
		cv.drawImage(rect, r.pal)
	case *pixelCanvas:
		cv.paint(rect, r.pal)
	default:
		c.DrawImage(rect, rgbaOf(r.pal))
	}
}

// baseCanvas is the canvas c draws on: draw.Crop wraps a draw.Canvas in
// another, once per crop.
func baseCanvas(c draw.Canvas) vg.Canvas {
	var cv vg.Canvas = c
	for {
		d, ok := cv.(draw.Canvas)
		if !ok {
			return cv
		}
		cv = d.Canvas
	}
}

// pixelCanvas is the figure files' raster canvas together with the image
// it draws into, so that maps can be painted straight into it.
type pixelCanvas struct {
	*vgimg.Canvas
	img *image.RGBA
	ctx *gg.Context // the canvas's drawing context
	// scratch is the memory its lines and bands are drawn with (nil: each
	// takes fresh memory); a figure's files lend theirs (fileScratch).
	scratch *lineScratch
	// colours is the canvas's colour and those Push saved (vgimg keeps
	// them, unexported), for FillString.
	colours []color.Color
	// mat is the drawing context's matrix and mats those Push saved (gg
	// keeps them, unexported), for rotated text.
	mat  gg.Matrix
	mats []gg.Matrix
}

// paint draws p over rect (canvas coordinates): every pixel whose centre
// lies inside takes the colour of the image pixel under that centre
// (nearest neighbour), the sharp cells the report's SVG shows
// (image-rendering: pixelated). The drawing context would resample the
// image bilinearly instead, at a tenth of the figure files' time.
func (pc *pixelCanvas) paint(rect vg.Rectangle, p *image.Paletted) {
	dpi := pc.DPI()
	w, h := pc.img.Rect.Dx(), pc.img.Rect.Dy()
	// Image rows count down from the top; canvas y counts up from the bottom.
	x0, x1 := rect.Min.X.Dots(dpi), rect.Max.X.Dots(dpi)
	top, bottom := float64(h)-rect.Max.Y.Dots(dpi), float64(h)-rect.Min.Y.Dots(dpi)
	if !(x1 > x0 && bottom > top) {
		return
	}
	colours := make([]color.RGBA, len(p.Palette))
	for i, c := range p.Palette {
		colours[i] = color.RGBAModel.Convert(c).(color.RGBA)
	}
	sw, sh := p.Rect.Dx(), p.Rect.Dy()
	first := func(a float64) int { return int(math.Ceil(a - 0.5)) } // first pixel whose centre is ≥ a
	pxLo, pxHi := max(0, first(x0)), min(w, first(x1))
	src := make([]int, max(0, pxHi-pxLo))
	for i := range src {
		src[i] = min(sw-1, int((float64(pxLo+i)+0.5-x0)/(x1-x0)*float64(sw)))
	}
	for py := max(0, first(top)); py < min(h, first(bottom)); py++ {
		sy := min(sh-1, int((float64(py)+0.5-top)/(bottom-top)*float64(sh)))
		row := p.Pix[sy*p.Stride:]
		out := pc.img.Pix[py*pc.img.Stride+4*pxLo:]
		for i, sx := range src {
			c := colours[row[sx]]
			o := out[4*i : 4*i+4 : 4*i+4]
			o[0], o[1], o[2], o[3] = c.R, c.G, c.B, c.A
		}
	}
}

func (r raster) DataRange() (xmin, xmax, ymin, ymax float64) { return r.xmin, r.xmax, r.ymin, r.ymax }

// render draws the plot as SVG. A second plot, when given, is a colour bar
// drawn in a strip on the right. It also returns the drawing itself, which
// FigureFiles replays onto PNG and stand-alone SVG canvases.
func render(p, bar *plot.Plot, w, h vg.Length) (svg string, dr drawing, err error) {
	// gonum/plot panics on some degenerate inputs (an empty log axis, say);
	// a figure that cannot be drawn is left out with the reason, it must
	// not stop the report.
	defer func() {
		if e := recover(); e != nil {
			svg, err = "", fmt.Errorf("drawing failed: %v", e)
		}
	}()
	dr = drawing{w: w, h: h, plots: []*plot.Plot{p, bar}, draw: func(dc draw.Canvas) {
		if bar != nil {
			barW := 3 * vg.Centimeter
			p.Draw(draw.Crop(dc, 0, -barW, 0, 0))
			bar.Draw(draw.Crop(dc, w-barW+0.3*vg.Centimeter, 0, 1.15*vg.Centimeter, 0))
		} else {
			p.Draw(dc)
		}
	}}
	s, err := svgOf(dr)
	return s, dr, err
}

// svgOf is the drawing's SVG, vgsvg's bytes (cleanSVG aside), with the
// long paths' data formatted by svgCanvas, or by vgsvg alone when they
// could not be put in place.
func svgOf(dr drawing) (string, error) {
	s, ok, err := drawSVG(dr, true)
	if err == nil && !ok {
		s, _, err = drawSVG(dr, false)
	}
	if err != nil {
		return "", err
	}
	return cleanSVG(s), nil
}

// drawSVG writes the drawing as SVG, with the long paths' data formatted
// by svgCanvas when held; ok is false when they could not be put in place
// (svgCanvas.fill), and the drawing must be written again without (vgsvg
// alone, whose bytes are taken as they are).
func drawSVG(dr drawing, held bool) (s string, ok bool, err error) {
	c := &svgCanvas{Canvas: vgsvg.New(dr.w, dr.h)}
	var cv vg.CanvasSizer = c
	if !held {
		cv = c.Canvas
	}
	dr.draw(draw.New(cv))
	var b strings.Builder // its String is not a copy
	if _, err := c.WriteTo(&b); err != nil {
		return "", false, fmt.Errorf("writing SVG: %w", err)
	}
	if !held {
		return b.String(), true, nil // a placeholder of the figure's own is its own
	}
	s, ok = c.fill(b.String())
	return s, ok, nil
}

func cleanSVG(s string) string {
	if i := strings.Index(s, "<svg"); i >= 0 {
		s = s[i:]
	}
	// vgsvg labels its embedded PNG images as JPEG; say what they are.
	s = strings.ReplaceAll(s, "data:image/jpg;base64,", "data:image/png;base64,")
	// The image must fill its data rectangle exactly, not keep the pixel
	// grid's aspect ratio (SVG's default would letterbox it).
	s = strings.ReplaceAll(s, "<image ", `<image preserveAspectRatio="none" style="image-rendering:pixelated" `)
	return s
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// span is the finite min and max of xs (0, 1 if none).
func span(xs ...[]float64) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, x := range xs {
		for _, v := range x {
			if finite(v) {
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
	}
	if lo > hi {
		return 0, 1
	}
	return lo, hi
}

// quantileAbs is the q-quantile of |v| over finite values: the k-th
// smallest of them, k = round(q·(n−1)), so the same data always give the
// same limit. The maps ask for the top of the range (q = 1, 0.995), where
// the k-th smallest is the least of the n−k largest: those are kept in a
// heap of their own (topAbs), a few hundred values, rather than a copy of
// all n to select from (kth), which is left for quantiles lower down.
func quantileAbs(rows [][]float64, q float64) float64 {
	n := 0
	for _, r := range rows {
		for _, v := range r {
			if finite(v) {
				n++
			}
		}
	}
	if n == 0 {
		return 0
	}
	k := int(math.Round(q * float64(n-1)))
	if top := n - k; top <= max(1, n/64) {
		return topAbs(rows, top)
	}
	a := make([]float64, 0, n)
	for _, r := range rows {
		for _, v := range r {
			if finite(v) {
				a = append(a, math.Abs(v))
			}
		}
	}
	return kth(a, k)
}

// topAbs is the least of the m largest |v| over finite values (m ≥ 1, at
// most their number), kept in a min-heap of m values (Williams,
// "Algorithm 232: Heapsort", CACM 1964): a value above the heap's least
// takes its place. Ties keep the value, whichever of them is kept.
func topAbs(rows [][]float64, m int) float64 {
	h := make([]float64, 0, m)
	for _, r := range rows {
		for _, v := range r {
			if !finite(v) {
				continue
			}
			a := math.Abs(v)
			switch {
			case len(h) < m:
				h = append(h, a)
				for i := len(h) - 1; i > 0 && h[(i-1)/2] > h[i]; i = (i - 1) / 2 {
					h[i], h[(i-1)/2] = h[(i-1)/2], h[i]
				}
			case a > h[0]:
				h[0] = a
				siftDown(h)
			}
		}
	}
	return h[0]
}

// siftDown restores the min-heap h after its root was raised.
func siftDown(h []float64) {
	for i := 0; ; {
		c := 2*i + 1
		if c >= len(h) {
			return
		}
		if c+1 < len(h) && h[c+1] < h[c] {
			c++
		}
		if h[i] <= h[c] {
			return
		}
		h[i], h[c] = h[c], h[i]
		i = c
	}
}

// kth is the k-th smallest of a (0-based), found by selection (Hoare,
// "Algorithm 65: FIND", CACM 1961) in linear time on average rather than
// by sorting; a is reordered. The value is the same whatever the order of
// a, so the map's colour limit is too.
func kth(a []float64, k int) float64 {
	lo, hi := 0, len(a)-1
	for lo < hi {
		x, y, z := a[lo], a[lo+(hi-lo)/2], a[hi]
		pivot := max(min(x, y), min(max(x, y), z)) // median of three
		i, j := lo, hi
		for i <= j {
			for a[i] < pivot {
				i++
			}
			for a[j] > pivot {
				j--
			}
			if i <= j {
				a[i], a[j] = a[j], a[i]
				i, j = i+1, j-1
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return a[k] // between the parts: equal to the pivot
		}
	}
	return a[k]
}

// mapImage paints a time × axis matrix as pixels: columns on an even grid
// of the axis in display order, rows on an even grid of y, top = largest y.
// Each pixel takes the nearest measured point, coloured by its level on
// mapPalette; pixels in a gap of the axis (an excluded region) are pale grey.
func mapImage(axis, y []float64, rows [][]float64, reversed bool, level func(v float64) uint8) (*image.Paletted, [4]float64) {
	const W, H = 480, 260
	xlo, xhi := span(axis)
	ylo, yhi := span(y)
	if ylo == yhi {
		ylo, yhi = ylo-0.5, yhi+0.5
	}
	ax := sortedIndex(axis)
	yi := sortedIndex(y)
	step := medianStep(axis, ax)
	// The nearest row of each pixel row, found once rather than per pixel.
	row := make([]int, H)
	for py := range row {
		row[py] = nearest(y, yi, yhi-(float64(py)+0.5)/H*(yhi-ylo))
	}
	img := image.NewPaletted(image.Rect(0, 0, W, H), mapPalette)
	for px := 0; px < W; px++ {
		f := (float64(px) + 0.5) / W
		xv := xlo + f*(xhi-xlo)
		if reversed {
			xv = xhi - f*(xhi-xlo)
		}
		j := nearest(axis, ax, xv)
		gap := step > 0 && math.Abs(axis[j]-xv) > 1.5*step
		for py, i := range row {
			k := uint8(gapLevel)
			if !gap {
				k = level(rows[i][j])
			}
			img.Pix[py*img.Stride+px] = k
		}
	}
	return img, [4]float64{xlo, xhi, ylo, yhi}
}

// mapLevels is how many steps of the diverging scale the maps use: an odd
// number, so that one step is zero (white) exactly. Adjacent steps differ
// by at most 3 of 255 in any channel, below what the eye tells apart, and
// with the gap grey they fit a PNG palette (at most 256 colours), which
// encodes in a quarter of the bytes of full colour.
const mapLevels = 255

// gapLevel is the palette index of the gap grey.
const gapLevel = mapLevels

// mapPalette is the maps' colours: mapLevels steps of divergingRamp from
// the most negative (index 0) to the most positive, then the gap grey.
var mapPalette = func() color.Palette {
	p := make(color.Palette, 0, mapLevels+1)
	for k := 0; k < mapLevels; k++ {
		p = append(p, ramp(divergingRamp, float64(k)/(mapLevels-1)))
	}
	return append(p, gapGrey)
}()

// signedLevel is the palette step of v on the scale −lim … lim (clamped);
// NaN is drawn as a gap.
func signedLevel(v, lim float64) uint8 {
	f := 0.5 + 0.5*v/lim
	if math.IsNaN(f) {
		return gapLevel
	}
	return uint8(math.Round(math.Max(0, math.Min(1, f)) * (mapLevels - 1)))
}

// rgbaOf is p in full colour: the raster canvas scales full-colour images
// on a fast path (and paletted ones pixel by pixel).
func rgbaOf(p *image.Paletted) *image.RGBA {
	out := image.NewRGBA(p.Rect)
	for i, k := range p.Pix {
		c := p.Palette[k].(color.RGBA)
		o := out.Pix[4*i : 4*i+4 : 4*i+4]
		o[0], o[1], o[2], o[3] = c.R, c.G, c.B, c.A
	}
	return out
}

func sortedIndex(v []float64) []int {
	idx := make([]int, len(v))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return v[idx[a]] < v[idx[b]] })
	return idx
}

func nearest(v []float64, idx []int, x float64) int {
	k := sort.Search(len(idx), func(i int) bool { return v[idx[i]] >= x })
	best := -1
	for _, c := range []int{k - 1, k} {
		if c >= 0 && c < len(idx) && (best < 0 || math.Abs(v[idx[c]]-x) < math.Abs(v[best]-x)) {
			best = idx[c]
		}
	}
	if best < 0 {
		return 0
	}
	return best
}

func medianStep(v []float64, idx []int) float64 {
	if len(idx) < 2 {
		return 0
	}
	d := make([]float64, 0, len(idx)-1)
	for i := 1; i < len(idx); i++ {
		d = append(d, v[idx[i]]-v[idx[i-1]])
	}
	sort.Float64s(d)
	return d[len(d)/2]
}

// colourBar is a narrow plot showing the diverging scale from −lim to lim:
// the maps' palette steps, most positive at the top.
func colourBar(lim float64, label string) *plot.Plot {
	img := image.NewPaletted(image.Rect(0, 0, 1, mapLevels), mapPalette)
	for py := range mapLevels {
		img.Pix[py*img.Stride] = uint8(mapLevels - 1 - py)
	}
	p := plot.New()
	p.HideX()
	p.Y.Label.Text = label
	p.Y.Label.TextStyle.Font = font.From(sans, 10)
	p.Y.Tick.Label.Font = font.From(sans, 9)
	p.Y.Tick.Marker = plot.TickerFunc(func(min, max float64) []plot.Tick {
		return []plot.Tick{{Value: -lim, Label: tickLabel(-lim)}, {Value: 0, Label: "0"}, {Value: lim, Label: tickLabel(lim)}}
	})
	p.Add(newRaster(img, [4]float64{0, 1, -lim, lim}))
	measureOnce(p)
	return p
}

// tickLabel writes small limits as m×10ⁿ, which stays narrow.
func tickLabel(v float64) string {
	if a := math.Abs(v); a > 0 && (a < 0.01 || a >= 1e5) {
		e := math.Floor(math.Log10(a))
		m := v / math.Pow(10, e)
		return strconv.FormatFloat(m, 'g', 2, 64) + "×10" + superscript(strconv.Itoa(int(e)))
	}
	return trimFloat(v, 2)
}

// trimFloat formats with the given significant digits, plainly.
func trimFloat(v float64, digits int) string {
	if !finite(v) {
		return "–"
	}
	if v == 0 {
		return "0"
	}
	s := fmt.Sprintf("%.*g", digits, v)
	if strings.Contains(s, "e") {
		m, e, _ := strings.Cut(s, "e")
		exp := strings.TrimLeft(strings.TrimPrefix(e, "+"), "0")
		if strings.HasPrefix(e, "-") {
			exp = "-" + strings.TrimLeft(e[1:], "0")
		}
		return m + "×10" + superscript(exp)
	}
	return s
}

func superscript(s string) string {
	r := strings.NewReplacer("-", "⁻", "0", "⁰", "1", "¹", "2", "²", "3", "³", "4", "⁴", "5", "⁵", "6", "⁶", "7", "⁷", "8", "⁸", "9", "⁹")
	return r.Replace(s)
}

// niceTicks labels about six round values (1, 2, 2.5 or 5 × 10ⁿ apart)
// with unlabelled ticks between them: denser than gonum's default three,
// so band positions can be read off the axis.
type niceTicks struct{}

func (niceTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) || !finite(lo) || !finite(hi) {
		return []plot.Tick{{Value: lo, Label: trimFloat(lo, 4)}}
	}
	raw := (hi - lo) / 6
	mag := math.Pow(10, math.Floor(math.Log10(raw)))
	step := mag
	for _, m := range []float64{1, 2, 2.5, 5, 10} {
		if m*mag >= raw {
			step = m * mag
			break
		}
	}
	minor := step / 2
	if step/mag == 2.5 || step/mag == 5 {
		minor = step / 5
	}
	var ticks []plot.Tick
	start := math.Ceil(lo/minor-1e-9) * minor
	for i := 0; ; i++ {
		v := start + float64(i)*minor
		if v > hi+1e-9*step {
			break
		}
		// Snap round-off so 0.30000000000000004 prints as 0.3.
		v = math.Round(v/minor) * minor
		t := plot.Tick{Value: v}
		if r := v / step; math.Abs(r-math.Round(r)) < 1e-6 {
			t.Label = tickText(v, step)
		}
		ticks = append(ticks, t)
	}
	return ticks
}

// tickText prints v with just the decimals step needs.
func tickText(v, step float64) string {
	if math.Abs(v) < step*1e-9 {
		return "0"
	}
	if math.Abs(v) >= 1e5 || math.Abs(v) < 1e-3 {
		return trimFloat(v, 3)
	}
	dec := 0
	for s := step; s < 1-1e-9 && dec < 8; s *= 10 {
		dec++
	}
	if step/math.Pow(10, -float64(dec)) == 2.5 {
		dec++
	}
	return strconv.FormatFloat(v, 'f', dec, 64)
}

// logTicks are gonum's decade ticks kept to the axis range: gonum's own
// run to the next decade, and the label beyond the top pushes the whole
// plot down.
type logTicks struct{}

func (logTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(lo > 0) || !(hi > lo) {
		return nil
	}
	var out []plot.Tick
	for _, t := range (plot.LogTicks{Prec: -1}).Ticks(lo, hi) {
		if t.Value >= lo*(1-1e-9) && t.Value <= hi*(1+1e-9) {
			out = append(out, t)
		}
	}
	return out
}
