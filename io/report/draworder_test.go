package report

import (
	"fmt"
	"image/color"
	"regexp"
	"strings"
	"testing"

	"golang.org/x/net/html"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// TestProfileRangesUnderEveryPoint: in the profiles figure every component's uniqueness range
// is drawn before any component's points. Drawn per component, species_2's opaque range
// covered species_1's points wherever the two ranges overlap: on the real urethane series
// (catalyst 0.01, 'A -> B') the points of species_1 from 0 to 2.1 h were hidden. An SVG
// paints in document order (SVG 1.1, section 3.3, "Rendering model": later elements are
// painted over earlier ones), so the last range fill must come before the first point fill.
func TestProfileRangesUnderEveryPoint(t *testing.T) {
	dir := fixture(t, true)
	b, err := BuildDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var svg string
	walk(parse(t, b), func(n *html.Node) {
		if id, _ := attr(n, "id"); n.Type == html.ElementNode && n.Data == "figure" && id == "fig-profiles" {
			var sb strings.Builder
			if err := html.Render(&sb, n); err != nil {
				t.Fatal(err)
			}
			svg = sb.String()
		}
	})
	if svg == "" {
		t.Fatal("no fig-profiles in the report")
	}
	// The drawing only: the legend's samples (class "key") follow it.
	if i := strings.Index(svg, `class="key"`); i >= 0 {
		svg = svg[:i]
	}
	hex := func(c color.RGBA) string { return fmt.Sprintf("#%02x%02x%02x", c.R, c.G, c.B) }
	fills := regexp.MustCompile(`fill[:=]"?(#[0-9a-fA-F]{6})`)
	lastRange, firstPoint := -1, -1
	for _, m := range fills.FindAllStringSubmatchIndex(svg, -1) {
		c := strings.ToLower(svg[m[2]:m[3]])
		for k := 0; k < 2; k++ {
			if c == hex(tint(componentColour(k), 0.72)) {
				lastRange = m[0]
			}
			if c == hex(componentColour(k)) && firstPoint < 0 {
				firstPoint = m[0]
			}
		}
	}
	if lastRange < 0 || firstPoint < 0 {
		t.Fatalf("the figure has no range fill (%d) or no point fill (%d)", lastRange, firstPoint)
	}
	if lastRange > firstPoint {
		t.Errorf("a uniqueness range (at byte %d) is painted after a component's points (from byte %d): it hides them", lastRange, firstPoint)
	}
}

// TestLegendMarkerIsAPoint: in the figure files a legend entry for points (Marker) shows a
// point, as the report's own legend does (sample), not a line like a line's entry. Drawn on
// a raster at 72 dpi (one pixel per point): the swatch's left end stays white for a point and is
// coloured for a line.
func TestLegendMarkerIsAPoint(t *testing.T) {
	red := color.RGBA{R: 255, A: 255}
	for _, tc := range []struct {
		item     LegendItem
		leftSeen bool
	}{
		{LegendItem{Label: "resolved", Colour: red, Marker: true}, false},
		{LegendItem{Label: "fit", Colour: red}, true},
	} {
		img := vgimg.NewWith(vgimg.UseWH(6*vg.Centimeter, 2*vg.Centimeter), vgimg.UseDPI(72))
		c := draw.New(img)
		drawLegend(c, []LegendItem{tc.item}, 1, 6*vg.Centimeter)
		y := c.Min.Y + legendRowH/2
		at := func(x vg.Length) color.Color {
			px := int(float64(x))
			py := img.Image().Bounds().Dy() - 1 - int(float64(y))
			return img.Image().At(px, py)
		}
		isRed := func(c color.Color) bool { r, g, b, _ := c.RGBA(); return r > 0xc000 && g < 0x4000 && b < 0x4000 }
		x0 := c.Min.X + 0.5*vg.Centimeter
		if got := isRed(at(x0 + 0.05*vg.Centimeter)); got != tc.leftSeen {
			t.Errorf("marker %v: the swatch's left end coloured %v, want %v", tc.item.Marker, got, tc.leftSeen)
		}
		if !isRed(at(x0 + swatchW/2)) {
			t.Errorf("marker %v: the swatch's centre is not coloured", tc.item.Marker)
		}
	}
}
