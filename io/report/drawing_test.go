package report

import (
	"bytes"
	"encoding/base64"
	"encoding/csv"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"math"
	"math/rand/v2"
	"regexp"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// kth is the k-th order statistic: by definition the k-th element (0-based)
// of the values sorted ascending; checked against a full sort on random
// values, on values with many ties and on sorted and reversed input.
func TestKthIsTheOrderStatistic(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	cases := map[string][]float64{}
	for _, n := range []int{1, 2, 3, 10, 1001} {
		a := make([]float64, n)
		ties := make([]float64, n)
		for i := range a {
			a[i] = rng.NormFloat64()
			ties[i] = float64(rng.IntN(4))
		}
		up := slices.Clone(a)
		slices.Sort(up)
		down := slices.Clone(up)
		slices.Reverse(down)
		cases[fmt.Sprint("random ", n)] = a
		cases[fmt.Sprint("ties ", n)] = ties
		cases[fmt.Sprint("ascending ", n)] = up
		cases[fmt.Sprint("descending ", n)] = down
	}
	for name, a := range cases {
		sorted := slices.Clone(a)
		slices.Sort(sorted)
		for _, k := range []int{0, len(a) / 3, len(a) / 2, len(a) - 1} {
			if got := kth(slices.Clone(a), k); got != sorted[k] {
				t.Errorf("%s (n = %d): kth(%d) = %g, sorted gives %g", name, len(a), k, got, sorted[k])
			}
		}
	}
}

// quantileAbs is the k-th smallest |v| over the finite values, k =
// round(q·(n−1)), by definition of the order statistic: checked against a
// full sort of |v| for the maps' quantiles (1 and 0.995, taken from a heap
// of the largest values) and lower ones (taken by selection), on random
// values, on values with many ties (±, so |v| ties across signs) and with
// NaN and ±Inf among them (left out).
func TestQuantileAbsIsTheOrderStatistic(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	for _, n := range []int{1, 2, 7, 64, 65, 1000, 80000} {
		for _, ties := range []bool{false, true} {
			rows := make([][]float64, 0, n/50+1)
			var abs []float64
			for i := 0; i < n; {
				r := make([]float64, min(50, n-i))
				for j := range r {
					r[j] = rng.NormFloat64()
					if ties {
						r[j] = float64(rng.IntN(7) - 3)
					}
					abs = append(abs, math.Abs(r[j]))
				}
				if i == 0 {
					r = append(r, math.NaN(), math.Inf(1), math.Inf(-1))
				}
				rows = append(rows, r)
				i += min(50, n-i)
			}
			slices.Sort(abs)
			for _, q := range []float64{1, 0.995, 0.99, 0.9, 0.5, 0} {
				want := abs[int(math.Round(q*float64(len(abs)-1)))]
				if got := quantileAbs(rows, q); got != want {
					t.Errorf("n = %d, ties %v, q = %g: %g, the sorted values give %g", n, ties, q, got, want)
				}
			}
		}
	}
	if got := quantileAbs([][]float64{{math.NaN()}}, 1); got != 0 {
		t.Errorf("no finite value: %g, want 0", got)
	}
}

// The maps are drawn in mapLevels steps of the diverging scale: zero is
// white exactly, ± the limit the ends of the scale, and every value's
// colour is within 3 of 255 per channel of the continuous scale (ramp) at
// that value — the steps are finer than the eye separates (common
// practice: 8-bit colour channels, 256 levels).
func TestMapLevelsFollowTheScale(t *testing.T) {
	const lim = 0.37
	if c := mapPalette[signedLevel(0, lim)]; c != (color.RGBA{255, 255, 255, 255}) {
		t.Errorf("zero is drawn %v, want white", c)
	}
	if c := mapPalette[signedLevel(-lim, lim)]; c != divergingRamp[0] {
		t.Errorf("−limit is drawn %v, want %v", c, divergingRamp[0])
	}
	if c := mapPalette[signedLevel(2*lim, lim)]; c != divergingRamp[len(divergingRamp)-1] {
		t.Errorf("beyond the limit is drawn %v, want %v", c, divergingRamp[len(divergingRamp)-1])
	}
	if c := mapPalette[signedLevel(math.NaN(), lim)]; c != gapGrey {
		t.Errorf("a missing value is drawn %v, want the gap grey", c)
	}
	if len(mapPalette) > 256 {
		t.Errorf("%d colours do not fit a PNG palette (at most 256, PNG specification 11.2.3)", len(mapPalette))
	}
	worst := 0
	for i := 0; i <= 10000; i++ {
		v := lim * (2*float64(i)/10000 - 1)
		want := ramp(divergingRamp, 0.5+0.5*v/lim)
		got := mapPalette[signedLevel(v, lim)].(color.RGBA)
		for _, d := range []int{int(got.R) - int(want.R), int(got.G) - int(want.G), int(got.B) - int(want.B)} {
			worst = max(worst, d, -d)
		}
	}
	if worst > 3 {
		t.Errorf("a map colour is %d of 255 away from the continuous scale, want at most 3", worst)
	}
}

// The PNG files draw a map in full colour, the SVGs in palette indices:
// both must hold the same colour at every pixel.
func TestMapImageSameInBothForms(t *testing.T) {
	axis := []float64{1800, 1700, 1600, 1500, 1200, 1100} // a gap between 1500 and 1200
	y := []float64{0, 10, 20}
	rows := [][]float64{{-1, -0.5, 0, 0.5, 1, math.NaN()}, {0, 0, 0, 0, 0, 0}, {1, 1, -1, -1, 0.2, 0.1}}
	p, _ := mapImage(axis, y, rows, true, func(v float64) uint8 { return signedLevel(v, 1) })
	full := rgbaOf(p)
	gaps := 0
	for py := p.Rect.Min.Y; py < p.Rect.Max.Y; py++ {
		for px := p.Rect.Min.X; px < p.Rect.Max.X; px++ {
			if full.RGBAAt(px, py) != p.Palette[p.ColorIndexAt(px, py)] {
				t.Fatalf("pixel %d,%d: full colour %v, palette %v", px, py, full.RGBAAt(px, py), p.Palette[p.ColorIndexAt(px, py)])
			}
			if p.ColorIndexAt(px, py) == gapLevel {
				gaps++
			}
		}
	}
	if gaps == 0 {
		t.Error("the excluded region 1500–1200 is not drawn as a gap")
	}
}

// A figure's SVG file holds the report's drawing of it unchanged (it is
// laid in, not drawn again) and its legend under it.
func TestFigureFileHoldsTheReportDrawing(t *testing.T) {
	f, err := Load(fixture(t, true))
	if err != nil {
		t.Fatal(err)
	}
	figs, _ := Figures(f)
	files, _ := FigureFiles(f)
	for _, fig := range figs {
		s := string(files["figures/"+fig.ID+".svg"])
		inner := fig.SVG[strings.Index(fig.SVG, ">")+1 : strings.LastIndex(fig.SVG, "</svg>")]
		if !strings.Contains(s, strings.TrimPrefix(inner, "\n")) {
			t.Errorf("%s.svg does not hold the report's drawing", fig.ID)
		}
		if n := strings.Count(s, "<svg"); n != 1 {
			t.Errorf("%s.svg has %d <svg> elements, want 1", fig.ID, n)
		}
	}
}

// A figure file drawn in the image of a figure drawn before and encoded
// by the same PNG encoder (drawFigures gives each goroutine one of each) is the
// file drawn in a fresh image by a fresh encoder, byte for byte: every
// figure after every other, the earlier one's pixels left in the image,
// larger or smaller, and its deflate state reset.
func TestFigureFileSameInAUsedImage(t *testing.T) {
	f, err := Load(fixture(t, true))
	if err != nil {
		t.Fatal(err)
	}
	figs, _ := Figures(f)
	fresh := map[string][]byte{}
	for _, fig := range figs {
		_, png, err := standalone(fig, nil)
		if err != nil {
			t.Fatal(err)
		}
		fresh[fig.ID] = png
	}
	if len(figs) < 2 {
		t.Fatalf("%d figures: nothing to compare", len(figs))
	}
	for _, before := range figs {
		for _, fig := range figs {
			var s fileScratch
			if _, _, err := standalone(before, &s); err != nil {
				t.Fatal(err)
			}
			if _, png, err := standalone(fig, &s); err != nil || !bytes.Equal(png, fresh[fig.ID]) {
				t.Errorf("%s drawn after %s differs from %s drawn alone (%v)", fig.ID, before.ID, fig.ID, err)
			}
		}
	}
}

// pngEncoder's files decode, with Go's image/png (a reference decoder of
// the PNG specification, ISO/IEC 15948), to the very pixels encoded: an
// opaque picture with runs, gradients (the Up filter's differences wrap
// modulo 256) and noise, written as 8-bit RGB; and pictures with
// transparency — one translucent pixel inside, the very last pixel clear,
// a clear first row — which it leaves to image/png (the same bytes).
func TestEncodePNGRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, clear := range []string{"none", "inside", "last pixel", "first row"} {
		img := image.NewRGBA(image.Rect(0, 0, 37, 23))
		for y := range 23 {
			for x := range 37 {
				c := color.RGBA{uint8(7 * x), uint8(250 - 11*y), uint8(rng.IntN(256)), 255}
				if x < 10 {
					c = color.RGBA{255, 255, 255, 255}
				}
				switch {
				case clear == "inside" && x == 20 && y == 5:
					c = color.RGBA{60, 30, 90, 128} // premultiplied: no channel above alpha
				case clear == "last pixel" && x == 36 && y == 22, clear == "first row" && y == 0:
					c = color.RGBA{}
				}
				img.SetRGBA(x, y, c)
			}
		}
		file, err := new(pngEncoder).encode(img)
		if err != nil {
			t.Fatal(err)
		}
		b := bytes.NewBuffer(file)
		var ref bytes.Buffer
		if err := (&png.Encoder{CompressionLevel: png.BestSpeed}).Encode(&ref, img); err != nil {
			t.Fatal(err)
		}
		// Colour type, byte 25 of the file (signature 8, IHDR length,
		// type, width, height, bit depth): 2 is RGB.
		if rgb := b.Bytes()[25] == 2; rgb != (clear == "none") {
			t.Errorf("transparency %s: written as RGB %v", clear, rgb)
		}
		if clear != "none" && !bytes.Equal(b.Bytes(), ref.Bytes()) {
			t.Errorf("transparency %s: not image/png's file", clear)
		}
		back, err := png.Decode(b)
		if err != nil {
			t.Fatalf("transparency %s: does not decode: %v", clear, err)
		}
		for y := range 23 {
			for x := range 37 {
				c1 := color.RGBAModel.Convert(back.At(x, y)).(color.RGBA)
				c2 := img.RGBAAt(x, y)
				// A translucent pixel goes through straight alpha in the
				// file: ±1 of rounding each way.
				tol := 0
				if c2.A < 255 {
					tol = 1
				}
				if d := max(absDiff(c1.R, c2.R), absDiff(c1.G, c2.G), absDiff(c1.B, c2.B), absDiff(c1.A, c2.A)); d > tol {
					t.Fatalf("transparency %s: pixel %d,%d decodes as %v, was %v", clear, x, y, back.At(x, y), img.At(x, y))
				}
			}
		}
	}
}

func absDiff(a, b uint8) int { return max(int(a)-int(b), int(b)-int(a)) }

// thin keeps, of each pixel column, the lowest and highest point (so a
// peak one sample wide keeps its height), the first and last points, and
// nothing that was not a point; a line with under one point per column
// comes back whole. Reference: the extremes of each column, found here by
// a direct scan (min/max per column is common practice for drawing series
// longer than the picture is wide).
func TestThinKeepsEachColumnsExtremes(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	var ps []vg.Point
	for i := range 3001 {
		y := rng.NormFloat64()
		if i == 1234 {
			y = 50 // a spike one point wide
		}
		ps = append(ps, vg.Point{X: vg.Length(i) * pixelColumn / 7, Y: vg.Length(y)})
	}
	out := thin(ps)
	if len(out) >= len(ps)/2 {
		t.Errorf("%d of %d points kept at 7 per column", len(out), len(ps))
	}
	if out[0] != ps[0] || out[len(out)-1] != ps[len(ps)-1] {
		t.Error("the first or last point was dropped")
	}
	lo, hi := map[float64]vg.Length{}, map[float64]vg.Length{}
	for _, p := range ps {
		c := math.Floor(float64(p.X / pixelColumn))
		if l, ok := lo[c]; !ok || p.Y < l {
			lo[c] = p.Y
		}
		if h, ok := hi[c]; !ok || p.Y > h {
			hi[c] = p.Y
		}
	}
	gotLo, gotHi := map[float64]vg.Length{}, map[float64]vg.Length{}
	k := 0
	for _, p := range out {
		for k < len(ps) && ps[k] != p {
			k++
		}
		if k == len(ps) {
			t.Fatalf("%v is not one of the points, in order", p)
		}
		c := math.Floor(float64(p.X / pixelColumn))
		if l, ok := gotLo[c]; !ok || p.Y < l {
			gotLo[c] = p.Y
		}
		if h, ok := gotHi[c]; !ok || p.Y > h {
			gotHi[c] = p.Y
		}
	}
	for c := range lo {
		if gotLo[c] != lo[c] || gotHi[c] != hi[c] {
			t.Fatalf("column %g spans %g … %g after thinning, %g … %g before", c, gotLo[c], gotHi[c], lo[c], hi[c])
		}
	}
	if gotHi[math.Floor(float64(ps[1234].X/pixelColumn))] != 50 {
		t.Error("the one-point spike lost its height")
	}
	sparse := []vg.Point{{X: 0, Y: 1}, {X: 2 * pixelColumn, Y: 3}, {X: 4 * pixelColumn, Y: 2}, {X: 6 * pixelColumn, Y: 5}, {X: 8 * pixelColumn, Y: 0}}
	if got := thin(sparse); !slices.Equal(got, sparse) {
		t.Errorf("a line with a point every other column came back as %v", got)
	}
}

// parseCSV gives the records encoding/csv (the standard library's reader
// of RFC 4180 CSV, the reference here) gives with '#' comments and any
// number of fields: on files without quotes, which it splits itself, and
// on files with them.
func TestParseCSVAsTheStandardReader(t *testing.T) {
	for _, in := range []string{
		"a,b,c\n1,2,3\n",
		"a,b,c\n1,2,3",
		"matrix,experiment,time,1800,1799\n\ndata,1,0,0.5,-1e-05\n# note\ndata,1,10,,0.25\n\n",
		"x\n \n,\n,,\nµ,ΔA,ppm\n",
		"name,value\n\"a, b\",1\n\"say \"\"hi\"\"\",2\n",
		"a,b\r\n1,2\r\n",
		"",
		"\n\n",
	} {
		r := csv.NewReader(strings.NewReader(in))
		r.FieldsPerRecord, r.Comment = -1, '#'
		want, werr := r.ReadAll()
		got, gerr := parseCSV([]byte(in))
		if (werr != nil) != (gerr != nil) || !slices.EqualFunc(got, want, slices.Equal) {
			t.Errorf("%q: got %q (%v), encoding/csv %q (%v)", in, got, gerr, want, werr)
		}
		// The records are separate slices, as encoding/csv's are: a cell
		// appended to one does not land in the next.
		for i := 0; i+1 < len(got); i++ {
			next := slices.Clone(got[i+1])
			_ = append(got[i], "appended")
			if !slices.Equal(got[i+1], next) {
				t.Errorf("%q: appending to record %d changed record %d to %q", in, i, i+1, got[i+1])
			}
		}
	}
}

// The maps reach the canvases under the crops the plot makes: the SVG
// embeds them as paletted PNG (PNG specification colour type 3), and the
// PNG file paints each cell as a block of the image pixel under it
// (nearest neighbour), the colours the palette gives.
func TestMapsReachTheirCanvases(t *testing.T) {
	f, err := Load(fixture(t, true))
	if err != nil {
		t.Fatal(err)
	}
	figs, _ := Figures(f)
	found := false
	for _, fig := range figs {
		if fig.ID != "fig-map" {
			continue
		}
		found = true
		uri := regexp.MustCompile(`data:image/png;base64,([A-Za-z0-9+/=]+)`).FindAllStringSubmatch(fig.SVG, -1)
		if len(uri) == 0 {
			t.Fatal("the map's SVG embeds no image")
		}
		for _, u := range uri {
			raw, err := base64.StdEncoding.DecodeString(u[1])
			if err != nil {
				t.Fatal(err)
			}
			img, err := png.Decode(bytes.NewReader(raw))
			if err != nil {
				t.Fatal(err)
			}
			if _, ok := img.(*image.Paletted); !ok {
				t.Errorf("the map's SVG embeds a %T, want a paletted image", img)
			}
		}
	}
	if !found {
		t.Fatal("the fixture has no fig-map")
	}
	// A 4 × 2 image over a rectangle of 12 × 6 pixels: blocks of 3 × 3.
	src := image.NewPaletted(image.Rect(0, 0, 4, 2), mapPalette)
	for i := range src.Pix {
		src.Pix[i] = uint8(i * 30)
	}
	pc, img := rasterCanvas(20*pixelColumn, 10*pixelColumn, nil)
	c := draw.Canvas{Canvas: pc, Rectangle: vg.Rectangle{Max: vg.Point{X: 20 * pixelColumn, Y: 10 * pixelColumn}}}
	if got := baseCanvas(draw.Crop(draw.Crop(c, 1, 0, 0, 0), 0, 0, 1, 0)); got != vg.Canvas(pc) {
		t.Fatalf("under two crops the canvas is a %T, want the pixel canvas", got)
	}
	// Canvas y counts from the bottom: rows 3–8 from the top of 10.
	pc.paint(vg.Rectangle{Min: vg.Point{X: 2 * pixelColumn, Y: 1 * pixelColumn}, Max: vg.Point{X: 14 * pixelColumn, Y: 7 * pixelColumn}}, src)
	for py := range 10 {
		for px := range 20 {
			want := color.RGBA{255, 255, 255, 255}
			if px >= 2 && px < 14 && py >= 3 && py < 9 {
				want = mapPalette[src.Pix[(py-3)/3*src.Stride+(px-2)/3]].(color.RGBA)
			}
			if got := img.RGBAAt(px, py); got != want {
				t.Fatalf("pixel %d,%d is %v, want %v", px, py, got, want)
			}
		}
	}
}

// upFilter's differences are those of the Up filter's definition (PNG
// specification, ISO/IEC 15948, 9.2: Raw(x) − Prior(x) modulo 256) for every
// pair of byte values, in each of a pixel's colour bytes, with the
// neighbouring bytes at values that would borrow from them in a plain
// 64-bit subtraction; the alpha bytes are dropped. Rows of 255 pixels
// (an odd one at the end) too.
func TestUpFilterEveryBytePair(t *testing.T) {
	row, above := make([]byte, 4*256), make([]byte, 4*256)
	dst := make([]byte, 3*256+2)
	for a := range 256 {
		for pos := range 3 {
			for x := range 256 {
				for k := range 4 {
					row[4*x+k], above[4*x+k] = 0, 255 // every other byte borrows
				}
				row[4*x+pos], above[4*x+pos] = byte(a), byte(x)
			}
			for _, n := range []int{256, 255} {
				upFilter(dst, row[:4*n], above[:4*n])
				for x := range n {
					for k := range 3 {
						if want := row[4*x+k] - above[4*x+k]; dst[3*x+k] != want {
							t.Fatalf("%d pixels, byte %d of pixel: %d − %d gave %d, want %d", n, k, row[4*x+k], above[4*x+k], dst[3*x+k], want)
						}
					}
				}
			}
		}
	}
}

// BenchmarkParseCSV reads back a table the size of uniqueness.csv at
// 2000 × 3001 with five components (1.6 MB, 25 000 rows of seven cells).
func BenchmarkParseCSV(b *testing.B) {
	var buf bytes.Buffer
	buf.WriteString("part,component,index,axis,solution,min,max\n")
	for i := range 25000 {
		fmt.Fprintf(&buf, "spectrum,species_%d,%d,%.6g,%.10g,%.10g,%.10g\n", i%5+1, i, 4000-0.1*float64(i), 0.1234567891*float64(i), 0.0123456789, 0.2345678912)
	}
	b.SetBytes(int64(buf.Len()))
	for b.Loop() {
		if _, err := parseCSV(buf.Bytes()); err != nil {
			b.Fatal(err)
		}
	}
}
