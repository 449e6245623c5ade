package report

import (
	"bytes"
	"compress/zlib"
	"encoding/binary"
	"errors"
	"fmt"
	"hash/adler32"
	"hash/crc32"
	"image"
	"image/color"
	"image/png"
	"io"
	"math"
	"math/rand/v2"
	"testing"
)

// adler32Update and adler32Zeros give hash/adler32's checksum (the Go
// library's implementation of RFC 1950's Adler-32) of the same bytes, for
// data mostly of zeros with short and long runs of other bytes, lengths
// around the eight-byte steps and the 5552-byte reduction, started from
// the checksum of a prefix.
func TestAdler32AsTheLibrary(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	for trial := range 400 {
		n := rng.IntN(20000)
		if trial < 40 {
			n = trial
		}
		p := make([]byte, n)
		for i := 0; i < n; {
			run := 1 + rng.IntN(40)
			if rng.IntN(3) == 0 {
				for k := i; k < min(n, i+run); k++ {
					p[k] = byte(rng.IntN(256))
				}
			}
			i += run + rng.IntN(3000)
		}
		if trial%7 == 0 {
			for i := range p {
				p[i] = 255 // the sums at their largest
			}
		}
		cut := 0
		if n > 0 {
			cut = rng.IntN(n)
		}
		d := adler32.New()
		d.Write(p[:cut])
		prefix := d.Sum32()
		d.Write(p[cut:])
		if got, want := adler32Update(prefix, p[cut:]), d.Sum32(); got != want {
			t.Fatalf("%d bytes from %d: %08x, hash/adler32 %08x", n, cut, got, want)
		}
		zeros := rng.IntN(200000)
		d.Write(make([]byte, zeros))
		if got, want := adler32Zeros(adler32Update(prefix, p[cut:]), zeros), d.Sum32(); got != want {
			t.Fatalf("%d bytes and %d zeros: %08x, hash/adler32 %08x", n, zeros, got, want)
		}
	}
}

// pngEncoder's file is the file of the PNG specification (ISO/IEC 15948)
// put together the long way: the signature and the chunks IHDR, IDAT, IEND,
// each with the CRC-32 hash/crc32 gives, IHDR byte for byte, and IDAT a
// zlib stream (RFC 1950) that compress/zlib inflates, checking its header
// and Adler-32, to every row under the Up filter by its definition
// (Raw(x) − Prior(x) modulo 256, 9.2), the alpha bytes dropped; and
// image/png decodes it to the pixels drawn. Pictures like the figures
// (white, with lines, text-like specks and rows the same as the one above),
// widths odd and even down to one pixel, one image after another with one
// encoder.
func TestEncodePNGAsTheSpecification(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 14))
	var e pngEncoder
	for trial := range 60 {
		w, h := 1+rng.IntN(400), 1+rng.IntN(300)
		if trial == 0 {
			w, h = 945, 700
		}
		img := image.NewRGBA(image.Rect(0, 0, w, h))
		for i := range img.Pix {
			img.Pix[i] = 255
		}
		for range rng.IntN(4000) {
			x, y := rng.IntN(w), rng.IntN(h)
			c := color.RGBA{uint8(rng.IntN(256)), uint8(rng.IntN(256)), uint8(rng.IntN(256)), 255}
			for k := range 1 + rng.IntN(20) {
				if y+k < h {
					img.SetRGBA(x, y+k, c)
				}
			}
		}
		got, err := e.encode(img)
		if err != nil {
			t.Fatal(err)
		}
		if err := checkLongWay(got, img); err != nil {
			t.Fatalf("%d × %d: %v", w, h, err)
		}
	}
}

// checkLongWay says how file differs from an opaque img's PNG file as the
// specification puts it together (see TestEncodePNGAsTheSpecification),
// nil when it does not.
func checkLongWay(file []byte, img *image.RGBA) error {
	w, h := img.Rect.Dx(), img.Rect.Dy()
	var hdr [13]byte
	binary.BigEndian.PutUint32(hdr[0:], uint32(w))
	binary.BigEndian.PutUint32(hdr[4:], uint32(h))
	hdr[8], hdr[9] = 8, 2
	const signature = "\x89PNG\r\n\x1a\n"
	if !bytes.HasPrefix(file, []byte(signature)) {
		return errors.New("no PNG signature")
	}
	rest := file[len(signature):]
	var chunks []string
	var idat []byte
	for len(rest) > 0 {
		if len(rest) < 12 {
			return fmt.Errorf("a chunk cut short: %d bytes left", len(rest))
		}
		n := int(binary.BigEndian.Uint32(rest))
		if len(rest) < 12+n {
			return fmt.Errorf("chunk of %d bytes with %d left", n, len(rest)-12)
		}
		kind, data := string(rest[4:8]), rest[8:8+n]
		if crc := binary.BigEndian.Uint32(rest[8+n:]); crc != crc32.ChecksumIEEE(rest[4:8+n]) {
			return fmt.Errorf("%s: CRC-32 %08x, hash/crc32 %08x", kind, crc, crc32.ChecksumIEEE(rest[4:8+n]))
		}
		switch kind {
		case "IHDR":
			if !bytes.Equal(data, hdr[:]) {
				return fmt.Errorf("IHDR % x, want % x", data, hdr)
			}
		case "IDAT":
			idat = data
		}
		chunks, rest = append(chunks, kind), rest[12+n:]
	}
	if fmt.Sprint(chunks) != "[IHDR IDAT IEND]" {
		return fmt.Errorf("chunks %v", chunks)
	}
	zr, err := zlib.NewReader(bytes.NewReader(idat))
	if err != nil {
		return err
	}
	rows, err := io.ReadAll(zr) // the Adler-32 is checked at the end
	if err != nil {
		return fmt.Errorf("IDAT: %w", err)
	}
	var want []byte
	for y := range h {
		want = append(want, 2)
		for x := range w {
			for k := range 3 {
				prior := byte(0)
				if y > 0 {
					prior = img.Pix[(y-1)*img.Stride+4*x+k]
				}
				want = append(want, img.Pix[y*img.Stride+4*x+k]-prior)
			}
		}
	}
	if !bytes.Equal(rows, want) {
		return fmt.Errorf("IDAT inflates to %d bytes, not the %d of the rows under the Up filter", len(rows), len(want))
	}
	return decodesTo(file, img)
}

// decodesTo says where image/png's decoding of file differs from img.
func decodesTo(file []byte, img *image.RGBA) error {
	dec, err := png.Decode(bytes.NewReader(file))
	if err != nil {
		return err
	}
	for y := range img.Rect.Dy() {
		for x := range img.Rect.Dx() {
			if d, w := color.NRGBAModel.Convert(dec.At(x, y)), color.NRGBAModel.Convert(img.At(x, y)); d != w {
				return fmt.Errorf("pixel (%d, %d) decodes to %v, drawn %v", x, y, dec.At(x, y), img.At(x, y))
			}
		}
	}
	return nil
}

// An image with any pixel not opaque is image/png's file at its fastest
// level (the encoder's stated fallback), which decodes to the same colours
// (PNG stores them non-premultiplied, ISO/IEC 15948 4.3), wherever that
// pixel lies: an all-transparent image (its first row the same as the zero
// row the Up filter puts above it), a translucent pixel in the last row,
// in a row whose colour bytes are the same as the one above's (only its
// alpha differs), in an odd last pixel. The encoder, left mid-stream by
// each, then writes an opaque image as the long way does.
func TestEncodePNGLeavesTransparencyToTheLibrary(t *testing.T) {
	opaque := func(w, h int) *image.RGBA {
		img := image.NewRGBA(image.Rect(0, 0, w, h))
		for i := range img.Pix {
			img.Pix[i] = 255
		}
		return img
	}
	cases := map[string]*image.RGBA{"all transparent": image.NewRGBA(image.Rect(0, 0, 9, 4))}
	for name, at := range map[string][3]int{"last row": {16, 5, 4}, "second row": {16, 5, 1}, "odd last pixel": {7, 3, 6}} {
		img := opaque(at[0], at[1])
		x, y := at[2]%at[0], at[2]
		if name == "odd last pixel" {
			x, y = at[0]-1, 0
		}
		img.SetRGBA(x, y, color.RGBA{R: 40, G: 60, B: 80, A: 128})
		if name == "second row" { // the pixel above of the same colour bytes, opaque
			img.SetRGBA(x, 0, color.RGBA{R: 40, G: 60, B: 80, A: 255})
		}
		cases[name] = img
	}
	var e pngEncoder
	for name, img := range cases {
		got, err := e.encode(img)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		var want bytes.Buffer
		if err := (&png.Encoder{CompressionLevel: png.BestSpeed}).Encode(&want, img); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got, want.Bytes()) {
			t.Errorf("%s: not image/png's file", name)
		}
		if err := decodesTo(got, img); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		after := opaque(11, 6)
		after.SetRGBA(3, 2, color.RGBA{R: 1, G: 2, B: 3, A: 255})
		got, err = e.encode(after)
		if err == nil {
			err = checkLongWay(got, after)
		}
		if err != nil {
			t.Fatalf("after %s: an opaque image is not the long way's file: %v", name, err)
		}
	}
}

// BenchmarkEncodePNG is one figure's PNG file as drawFigures encodes it:
// the fixture's spectra figure (945 pixels wide at 150 dpi, the report's
// usual size), the encoder's working memory kept from call to call.
func BenchmarkEncodePNG(b *testing.B) {
	f, err := Load(fixture(b, true))
	if err != nil {
		b.Fatal(err)
	}
	files, _ := FigureFiles(f)
	im, err := png.Decode(bytes.NewReader(files["figures/fig-spectra.png"]))
	if err != nil {
		b.Fatal(err)
	}
	img := image.NewRGBA(im.Bounds())
	for y := img.Rect.Min.Y; y < img.Rect.Max.Y; y++ {
		for x := img.Rect.Min.X; x < img.Rect.Max.X; x++ {
			img.Set(x, y, im.At(x, y))
		}
	}
	var e pngEncoder
	b.SetBytes(int64(3 * img.Rect.Dx() * img.Rect.Dy()))
	for b.Loop() {
		if _, err := e.encode(img); err != nil {
			b.Fatal(err)
		}
	}
}

// encodePaletted's file must decode with image/png (the reference decoder)
// to the same size, palette and pixels, on a map of noise and a smooth
// map; an image with a transparent colour or a small palette is left to
// image/png (nil).
func TestEncodePalettedDecodes(t *testing.T) {
	var e pngEncoder
	for _, name := range []string{"noise", "smooth"} {
		img := benchMapImage(name)
		b, err := e.encodePaletted(img)
		if err != nil || b == nil {
			t.Fatalf("%s: %v, %d bytes", name, err, len(b))
		}
		got, err := png.Decode(bytes.NewReader(b))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		p, ok := got.(*image.Paletted)
		if !ok || p.Rect != img.Rect || len(p.Palette) != len(img.Palette) || !bytes.Equal(p.Pix, img.Pix) {
			t.Fatalf("%s: decoded to another image", name)
		}
		for i := range p.Palette {
			r0, g0, b0, a0 := p.Palette[i].RGBA()
			r1, g1, b1, a1 := img.Palette[i].RGBA()
			if r0 != r1 || g0 != g1 || b0 != b1 || a0 != a1 {
				t.Fatalf("%s: palette entry %d differs", name, i)
			}
		}
	}
	clear := benchMapImage("smooth")
	clear.Palette = append(color.Palette(nil), clear.Palette...)
	clear.Palette[3] = color.NRGBA{1, 2, 3, 4}
	if b, err := e.encodePaletted(clear); b != nil || err != nil {
		t.Error("a palette with a transparent colour was encoded")
	}
	small := image.NewPaletted(image.Rect(0, 0, 4, 4), mapPalette[:16])
	if b, err := e.encodePaletted(small); b != nil || err != nil {
		t.Error("a 16-colour palette was encoded")
	}
}

// benchMapImage is a 480 × 260 map as mapImage draws them: of noise (a
// residual map, the hardest to compress) or of smooth bands.
func benchMapImage(kind string) *image.Paletted {
	const n, m = 200, 400
	rng := rand.New(rand.NewPCG(5, 6))
	axis, y := make([]float64, m), make([]float64, n)
	for j := range axis {
		axis[j] = 4000 - 7.5*float64(j)
	}
	for i := range y {
		y[i] = float64(i)
	}
	rows := make([][]float64, n)
	for i := range rows {
		rows[i] = make([]float64, m)
		for j := range rows[i] {
			if kind == "noise" {
				rows[i][j] = rng.NormFloat64()
			} else {
				rows[i][j] = 2 * math.Sin(float64(j)/40) * math.Exp(-float64(i)/80)
			}
		}
	}
	img, _ := mapImage(axis, y, rows, true, func(v float64) uint8 { return signedLevel(v, 3) })
	return img
}

// BenchmarkEncodeMapImage is a map's image encoded as the SVG figures embed
// it: by image/png (vgsvg's DrawImage, zlib's default level) and by
// encodePaletted.
func BenchmarkEncodeMapImage(b *testing.B) {
	for _, kind := range []string{"noise", "smooth"} {
		img := benchMapImage(kind)
		b.Run(kind+"/imagepng", func(b *testing.B) {
			var n int
			for b.Loop() {
				var buf bytes.Buffer
				if err := png.Encode(&buf, img); err != nil {
					b.Fatal(err)
				}
				n = buf.Len()
			}
			b.ReportMetric(float64(n), "file-bytes")
		})
		b.Run(kind+"/paletted", func(b *testing.B) {
			var e pngEncoder
			var n int
			for b.Loop() {
				f, err := e.encodePaletted(img)
				if err != nil {
					b.Fatal(err)
				}
				n = len(f)
			}
			b.ReportMetric(float64(n), "file-bytes")
		})
	}
}
