package report

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"image"
	"image/png"
	"math"
	"math/rand/v2"
	"regexp"
	"strings"
	"testing"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"
)

// appendPathData writes what vgsvg writes for a path of moves, lines and
// closes: each coordinate as fmt's "%.*g" at vgsvg's 5 digits (the
// reference: fmt itself, as vgsvg.Canvas.pathData calls it), over values
// of every size and sign, ties of the fifth digit included.
func TestPathDataIsFmts(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	var p vg.Path
	var want strings.Builder
	vals := []float64{0, math.Copysign(0, -1), 1, -1, 12.345, 123.455, 99999.5, 0.000123455, 1e-7, 5e21, -3.25e-300}
	for range 2000 {
		vals = append(vals, (rng.Float64()-0.5)*math.Pow(10, float64(rng.IntN(24)-12)), float64(rng.IntN(200000))/8)
	}
	for i := 0; i+1 < len(vals); i += 2 {
		pt := vg.Point{X: vg.Length(vals[i]), Y: vg.Length(vals[i+1])}
		switch {
		case i%10 == 0:
			p.Move(pt)
			fmt.Fprintf(&want, "M%.*g,%.*g", 5, vals[i], 5, vals[i+1])
		default:
			p.Line(pt)
			fmt.Fprintf(&want, "L%.*g,%.*g", 5, vals[i], 5, vals[i+1])
		}
		if i%14 == 0 {
			p.Close()
			want.WriteString("Z")
		}
	}
	if got := string(appendPathData(nil, p)); got != want.String() {
		t.Fatalf("path data differs from fmt's:\n%.200s\n%.200s", got, want.String())
	}
}

// Every figure's SVG with the long paths' data formatted by svgCanvas is
// the one vgsvg writes alone (the reference), and the figures with long
// lines or bands hold them, rather than falling back. Embedded images
// (the maps') are encoded by svgCanvas with another deflate stream: they
// must decode (image/png, the reference decoder) to the same pixels and
// palette, and the bytes around them be vgsvg's.
func TestHeldPathsAreVgsvgs(t *testing.T) {
	f, err := Load(fixture(t, true))
	if err != nil {
		t.Fatal(err)
	}
	held, images := 0, 0 // paths and images held over all figures
	for _, j := range figureJobs(f) {
		fig, err := j.build(j.view)
		if err != nil || fig == nil {
			continue
		}
		c := &svgCanvas{Canvas: vgsvg.New(fig.drawing.w, fig.drawing.h)}
		fig.drawing.draw(draw.New(c))
		held += len(c.held)
		images += len(c.images)
		s, ok, err := drawSVG(fig.drawing, true)
		if err != nil || !ok {
			t.Errorf("%s: the long paths could not be held (%v)", j.id, err)
			continue
		}
		plain, _, err := drawSVG(fig.drawing, false)
		if err != nil {
			t.Fatal(err)
		}
		if !sameApartFromImages(t, s, plain) {
			t.Errorf("%s: SVG with held paths differs from vgsvg's own", j.id)
		}
		if cleanSVG(s) != fig.SVG {
			t.Errorf("%s: the figure's SVG is not its drawing's", j.id)
		}
		if strings.Contains(plain, heldData) {
			t.Errorf("%s: a path of its own writes the placeholder", j.id)
		}
	}
	if held < 10 {
		t.Errorf("%d paths held over all figures: the lines and bands should be", held)
	}
	if images < 2 {
		t.Errorf("%d images held over all figures: the maps' should be", images)
	}
}

// When the held paths do not match the placeholders one to one (a long
// line of zero width, which vgsvg leaves out; a path of a figure's own to
// the placeholder's point), the SVG is the one vgsvg writes alone (the
// reference), with every path it draws, not one with data in the wrong
// places or none.
func TestHeldPathsFallBackToVgsvg(t *testing.T) {
	long := func(x0 float64) vg.Path {
		var p vg.Path
		p.Move(vg.Point{X: vg.Length(x0), Y: 10})
		for i := 1; i < 2*heldMin; i++ {
			p.Line(vg.Point{X: vg.Length(x0 + float64(i)), Y: vg.Length(10 + i%7)})
		}
		return p
	}
	var own vg.Path
	own.Move(vg.Point{X: heldPoint, Y: heldPoint})
	for _, c := range []struct {
		name  string
		paths int // the paths vgsvg writes
		draw  func(dc draw.Canvas)
	}{
		{"zero width", 1, func(dc draw.Canvas) {
			dc.SetLineWidth(0)
			dc.Stroke(long(1))
			dc.SetLineWidth(1)
			dc.Stroke(long(40))
		}},
		{"placeholder of its own", 3, func(dc draw.Canvas) {
			dc.Stroke(long(1))
			dc.Stroke(own)
			dc.Stroke(long(40))
		}},
	} {
		dr := drawing{w: 100, h: 50, draw: c.draw}
		if _, ok, err := drawSVG(dr, true); err != nil || ok {
			t.Fatalf("%s: held paths put in place (%v, %v): the case does not test the fallback", c.name, ok, err)
		}
		plain, _, err := drawSVG(dr, false)
		if err != nil {
			t.Fatal(err)
		}
		if n := strings.Count(plain, "<path "); n != c.paths || !strings.Contains(plain, "</svg>") {
			t.Fatalf("%s: vgsvg's own SVG has %d paths, want %d:\n%s", c.name, n, c.paths, plain)
		}
		if got, err := svgOf(dr); err != nil || got != cleanSVG(plain) {
			t.Errorf("%s: SVG differs from vgsvg's own (%v)", c.name, err)
		}
	}
}

// embeddedImage is the base64 data of an image an SVG embeds.
var embeddedImage = regexp.MustCompile(`base64,([A-Za-z0-9+/=]+)"`)

// sameApartFromImages says whether the SVGs a and b are the same but for
// their embedded images' data, each pair of which decodes to the same
// paletted image.
func sameApartFromImages(t *testing.T, a, b string) bool {
	t.Helper()
	ia, ib := embeddedImage.FindAllStringSubmatch(a, -1), embeddedImage.FindAllStringSubmatch(b, -1)
	if len(ia) != len(ib) || embeddedImage.ReplaceAllString(a, "") != embeddedImage.ReplaceAllString(b, "") {
		return false
	}
	for k := range ia {
		pa, pb := decodeEmbedded(t, ia[k][1]), decodeEmbedded(t, ib[k][1])
		if pa.Rect != pb.Rect || !bytes.Equal(pa.Pix, pb.Pix) || len(pa.Palette) != len(pb.Palette) {
			return false
		}
		for i := range pa.Palette {
			if pa.Palette[i] != pb.Palette[i] {
				return false
			}
		}
	}
	return true
}

func decodeEmbedded(t *testing.T, data string) *image.Paletted {
	t.Helper()
	raw, err := base64.StdEncoding.DecodeString(data)
	if err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(bytes.NewReader(raw))
	if err != nil {
		t.Fatal(err)
	}
	p, ok := img.(*image.Paletted)
	if !ok {
		t.Fatalf("an embedded image decodes to %T, not a paletted image", img)
	}
	return p
}
