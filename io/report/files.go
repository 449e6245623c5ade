package report

import (
	"bytes"
	"fmt"
	"image"
	"image/color"
	"strings"

	"git.sr.ht/~sbinet/gg"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"
)

// FigureDPI is the resolution of the PNG figure files: 16 cm at 150 dpi is
// 945 pixels across, sharp on screen and readable when printed at size.
const FigureDPI = 150

// FigureFiles renders every figure of the folder as stand-alone files for
// papers and slides: figures/<id>.svg and figures/<id>.png, each with its
// legend drawn under the plot (in report.html the legend is HTML beside it).
// Like the report, they depend only on the folder's files.
func FigureFiles(f *Folder) (map[string][]byte, []string) {
	d := drawFigures(figureJobs(f), true, nil, nil)
	return d.files, append(d.problems, d.fileProblems...)
}

// fileScratch is what one goroutine of drawFigures keeps from figure to
// figure: one image, and the PNG encoder's working memory. Memory a
// process touches for the first time is dear (docs/performance.md,
// Machine): a fresh 2.4 MB image per figure cost its pages' first touch,
// and so did a fresh deflate state per file.
type fileScratch struct {
	pix   []byte // the image the PNG is drawn in, when large enough; its content does not matter
	png   pngEncoder
	lines lineScratch // what the figure's lines and bands are drawn with
}

// legendLayout is how a figure's legend is laid out under it: items per
// row, and the strip's height.
func legendLayout(fig Figure) (perRow int, legH vg.Length) {
	perRow = legendColumns(fig.Legend, fig.drawing.w)
	rows := (len(fig.Legend) + perRow - 1) / perRow
	return perRow, vg.Length(rows) * legendRowH
}

// legendRowH is the height of one row of the legend strip.
const legendRowH = 0.55 * vg.Centimeter

// standalone gives a figure's files: the SVG is the report's drawing with
// the legend under it (standaloneSVG), the PNG a drawing of both at
// FigureDPI. The PNG is drawn in s.pix when it is large enough (its content
// does not matter; the pixels drawn are left there for the next figure) and
// encoded with s.png; s may be nil.
func standalone(fig Figure, s *fileScratch) (svg, pngb []byte, err error) {
	defer func() {
		if e := recover(); e != nil {
			err = fmt.Errorf("drawing failed: %v", e)
		}
	}()
	if s == nil {
		s = &fileScratch{}
	}
	d := fig.drawing
	perRow, legH := legendLayout(fig)
	if svg, err = standaloneSVG(fig, perRow, legH); err != nil {
		return nil, nil, err
	}
	// The canvas starts white, so the plots' own white backgrounds are not
	// filled again (a fill of the whole picture each).
	ic, rgba := rasterCanvas(d.w, d.h+legH, s.pix)
	s.pix = rgba.Pix
	ic.scratch = &s.lines
	c := draw.Canvas{Canvas: ic, Rectangle: vg.Rectangle{Max: vg.Point{X: d.w, Y: d.h + legH}}}
	// The raster font has no superscript minus: "cm⁻¹" would print as
	// "cm¹". Axis texts are written "cm-1" in the PNG only.
	restore := plainMinus(d.plots)
	restoreBg := noBackground(d.plots)
	d.draw(draw.Crop(c, 0, 0, legH, 0))
	restoreBg()
	restore()
	drawLegend(c, fig.Legend, perRow, d.w)
	if pngb, err = s.png.encode(rgba); err != nil {
		return nil, nil, err
	}
	return svg, pngb, nil
}

// figurePixels is a length in pixels of the PNG files, as vgimg.NewWith
// rounds it (UseWH).
func figurePixels(l vg.Length) int { return int(l/vg.Inch*FigureDPI + 0.5) }

// rasterCanvas is a white FigureDPI canvas for a drawing w × h, drawing
// straight into the image it returns. vgimg.NewWith(UseWH) makes an image
// and then a copy of it for its drawing context (gg.NewContextForImage):
// two 2.4 MB images a figure, a tenth of the figure files' time. The
// context is set up as NewWith sets up its own (butt line caps, y up).
// The image is the size NewWith gives (w and h in pixels, rounded); it is
// drawn in pix when that is large enough (NewWith paints it all white).
func rasterCanvas(w, h vg.Length, pix []byte) (*pixelCanvas, *image.RGBA) {
	r := image.Rect(0, 0, figurePixels(w), figurePixels(h))
	var img *image.RGBA
	if n := 4 * r.Dx() * r.Dy(); cap(pix) >= n {
		img = &image.RGBA{Pix: pix[:n], Stride: 4 * r.Dx(), Rect: r}
	} else {
		img = image.NewRGBA(r)
	}
	ctx := gg.NewContextForRGBA(img)
	ctx.SetLineCapButt()
	ctx.InvertY()
	// The matrix as ctx.InvertY leaves it (gg: Translate(0, height), Scale(1, −1)).
	mat := gg.Identity().Translate(0, float64(r.Dy())).Scale(1, -1)
	return &pixelCanvas{Canvas: vgimg.NewWith(vgimg.UseImageWithContext(img, ctx), vgimg.UseDPI(FigureDPI)), img: img, ctx: ctx, colours: []color.Color{color.Black}, mat: mat}, img
}

// noBackground takes the plots' background colours away (for a canvas
// already white) and returns a function that puts them back.
func noBackground(plots []*plot.Plot) func() {
	old := make([]color.Color, len(plots))
	for i, p := range plots {
		if p != nil {
			old[i], p.BackgroundColor = p.BackgroundColor, nil
		}
	}
	return func() {
		for i, p := range plots {
			if p != nil {
				p.BackgroundColor = old[i]
			}
		}
	}
}

// standaloneSVG is the figure's SVG file: the legend drawn on a white page
// legH taller than the figure, and the report's own drawing of the figure
// (Figure.SVG) laid in at the top as it is, rather than drawn a second
// time (that took a third of the figures' time). The report's SVG is one
// group in plot coordinates flipped to the page's, so its content goes in
// unchanged.
func standaloneSVG(fig Figure, perRow int, legH vg.Length) ([]byte, error) {
	d := fig.drawing
	sc := vgsvg.New(d.w, d.h+legH)
	c := draw.New(sc)
	c.SetColor(color.White)
	c.Fill(c.Rectangle.Path())
	drawLegend(c, fig.Legend, perRow, d.w)
	var raw bytes.Buffer
	if _, err := sc.WriteTo(&raw); err != nil {
		return nil, err
	}
	page := cleanSVG(raw.String())
	open, end := strings.Index(fig.SVG, ">"), strings.LastIndex(fig.SVG, "</svg>")
	close := strings.LastIndex(page, "</svg>")
	if open < 0 || end < open || close < 0 {
		return nil, fmt.Errorf("the figure's SVG has no <svg> element")
	}
	const prolog = "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
	body := strings.TrimPrefix(fig.SVG[open+1:end], "\n")
	b := make([]byte, 0, len(prolog)+len(page)+len(body))
	b = append(append(append(append(b, prolog...), page[:close]...), body...), page[close:]...)
	return b, nil
}

// Legend geometry: a sample swatchW wide, the label swatchGap after it,
// and at least itemGap before the next column.
const (
	swatchW   = 0.9 * vg.Centimeter
	swatchGap = 0.15 * vg.Centimeter
	itemGap   = 0.4 * vg.Centimeter
)

func legendStyle() draw.TextStyle {
	sty := draw.TextStyle{Color: color.Black, Font: font.From(sans, 9), Handler: plot.DefaultTextHandler}
	sty.YAlign = draw.YCenter
	return sty
}

// legendColumns is how many items fit side by side on a figure w wide (at
// most 3, at least 1): every column is as wide as the widest item, so no
// label runs into the next item's sample.
func legendColumns(items []LegendItem, w vg.Length) int {
	sty := legendStyle()
	widest := vg.Length(0)
	for _, it := range items {
		widest = max(widest, swatchW+swatchGap+sty.Width(it.Label)+itemGap)
	}
	n := 3
	for n > 1 && vg.Length(n)*widest > w-1*vg.Centimeter {
		n--
	}
	return n
}

// drawLegend lays the items out in rows at the bottom of the canvas.
func drawLegend(c draw.Canvas, items []LegendItem, perRow int, w vg.Length) {
	if len(items) == 0 {
		return
	}
	colW := (w - 1*vg.Centimeter) / vg.Length(perRow)
	rows := (len(items) + perRow - 1) / perRow
	sty := legendStyle()
	for i, it := range items {
		row, col := i/perRow, i%perRow
		x := c.Min.X + 0.5*vg.Centimeter + vg.Length(col)*colW
		y := c.Min.Y + vg.Length(rows-row)*legendRowH - legendRowH/2
		sw := swatchW
		switch {
		case it.Marker: // a point, as the plot draws it (addPoints)
			c.DrawGlyph(draw.GlyphStyle{Color: it.Colour, Radius: vg.Points(2.2), Shape: draw.CircleGlyph{}}, vg.Point{X: x + sw/2, Y: y})
		case it.Fill:
			box := vg.Rectangle{Min: vg.Point{X: x, Y: y - 0.12*vg.Centimeter}, Max: vg.Point{X: x + sw, Y: y + 0.12*vg.Centimeter}}
			c.SetColor(it.Colour)
			c.Fill(box.Path())
		default:
			ls := draw.LineStyle{Color: it.Colour, Width: vg.Points(1.6), Dashes: lengths(it.Dash)}
			c.StrokeLine2(ls, x, y, x+sw, y)
		}
		c.FillText(sty, vg.Point{X: x + sw + swatchGap, Y: y}, it.Label)
	}
}

// plainMinus replaces the superscript minus in the plots' titles, axis
// labels and tick labels (8×10⁻⁵ becomes 8e-5: without it the raster font
// prints 8×10⁵) and returns a function that puts the texts back.
func plainMinus(plots []*plot.Plot) func() {
	var undo []func()
	swap := func(t *string) {
		old := *t
		*t = strings.ReplaceAll(strings.ReplaceAll(old, "⁻¹", "-1"), "⁻", "-")
		undo = append(undo, func() { *t = old })
	}
	ticks := func(m *plot.Ticker) {
		old := *m
		if old == nil {
			return
		}
		*m = plot.TickerFunc(func(lo, hi float64) []plot.Tick {
			ts := old.Ticks(lo, hi)
			for i := range ts {
				ts[i].Label = plainExponent(ts[i].Label)
			}
			return ts
		})
		undo = append(undo, func() { *m = old })
	}
	for _, p := range plots {
		if p == nil {
			continue
		}
		swap(&p.Title.Text)
		swap(&p.X.Label.Text)
		swap(&p.Y.Label.Text)
		ticks(&p.X.Tick.Marker)
		ticks(&p.Y.Tick.Marker)
	}
	return func() {
		for _, u := range undo {
			u()
		}
	}
}

var superDigits = strings.NewReplacer("⁻", "-", "⁰", "0", "¹", "1", "²", "2", "³", "3", "⁴", "4", "⁵", "5", "⁶", "6", "⁷", "7", "⁸", "8", "⁹", "9")

// plainExponent writes a tick label m×10ⁿ as men, which the raster font can
// print whole; other labels are returned as they are.
func plainExponent(label string) string {
	m, e, ok := strings.Cut(label, "×10")
	if !ok || e == "" {
		return label
	}
	return m + "e" + superDigits.Replace(e)
}
