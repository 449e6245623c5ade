package report

import (
	"bytes"
	"compress/flate"
	"compress/zlib"
	"encoding/binary"
	"hash/adler32"
	"image"
	"image/color"
	"image/png"
	"io"
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

// pngEncoder's file is, byte for byte, the file of the PNG specification
// (ISO/IEC 15948) put together the long way: every row under the Up filter
// by its definition (Raw(x) − Prior(x) modulo 256, 9.2), the alpha bytes
// dropped, deflated by compress/flate at its fastest level (in two pieces
// where the encoder splits: the rows above half the height, then a sync
// flush, then the rest by a second writer), in a zlib stream (RFC 1950:
// header, deflate data, hash/adler32's checksum of the rows), in the
// chunks IHDR, IDAT, IEND. Pictures like the figures (white, with lines,
// text-like specks and rows the same as the one above), widths odd and
// even down to one pixel, sizes either side of the split's, one image
// after another with one encoder, and the same bytes from an encoder
// deflating the two pieces side by side. Each file decodes (image/png) to the
// image's pixels, and its zlib stream reads to its end (compress/zlib,
// which checks the Adler-32 there) as the filtered rows.
func TestEncodePNGAsZlib(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 14))
	var e, side pngEncoder
	side.concurrent = true
	for trial := range 60 {
		w, h := 1+rng.IntN(400), 1+rng.IntN(300)
		switch trial {
		case 0:
			w, h = 945, 700 // a figure's size
		case 1:
			w, h = 7, splitBytes/(1+3*7) // just under the split
		case 2:
			w, h = 7, splitBytes/(1+3*7)+1 // just over it, an odd height
		case 3:
			w, h = splitBytes-1, 1 // one long row
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
		want, rows := longWayPNG(t, img)
		if !bytes.Equal(got, want) {
			t.Fatalf("%d × %d: %d bytes, the long way %d", w, h, len(got), len(want))
		}
		if !bytes.Equal(mustEncode(t, &side, img), got) {
			t.Fatalf("%d × %d: the pieces deflated side by side give other bytes", w, h)
		}
		decodesTo(t, got, img)
		zr, err := zlib.NewReader(bytes.NewReader(idatOf(t, got)))
		if err != nil {
			t.Fatal(err)
		}
		if inflated, err := io.ReadAll(zr); err != nil || !bytes.Equal(inflated, rows) {
			t.Fatalf("%d × %d: the zlib stream reads as %d bytes (%v), the filtered rows are %d", w, h, len(inflated), err, len(rows))
		}
	}
}

// longWayPNG is an opaque img's PNG file as the specification puts it
// together, and its filtered rows.
func longWayPNG(t *testing.T, img *image.RGBA) (file, rows []byte) {
	w, h := img.Rect.Dx(), img.Rect.Dy()
	for y := range h {
		rows = append(rows, 2)
		for x := range w {
			for k := range 3 {
				prior := byte(0)
				if y > 0 {
					prior = img.Pix[(y-1)*img.Stride+4*x+k]
				}
				rows = append(rows, img.Pix[y*img.Stride+4*x+k]-prior)
			}
		}
	}
	z := bytes.NewBufferString("\x78\x01") // zlib.Writer's header at the fastest level
	cut := 0
	if len(rows) >= splitBytes && h >= 2 {
		cut = h / 2 * (1 + 3*w)
		fw, _ := flate.NewWriter(z, flate.BestSpeed)
		fw.Write(rows[:cut])
		if err := fw.Flush(); err != nil {
			t.Fatal(err)
		}
	}
	fw, _ := flate.NewWriter(z, flate.BestSpeed)
	fw.Write(rows[cut:])
	if err := fw.Close(); err != nil {
		t.Fatal(err)
	}
	z.Write(binary.BigEndian.AppendUint32(nil, adler32.Checksum(rows)))
	var hdr [13]byte
	binary.BigEndian.PutUint32(hdr[0:], uint32(w))
	binary.BigEndian.PutUint32(hdr[4:], uint32(h))
	hdr[8], hdr[9] = 8, 2
	b := []byte("\x89PNG\r\n\x1a\n")
	b = pngChunk(b, "IHDR", hdr[:])
	b = pngChunk(b, "IDAT", z.Bytes())
	return pngChunk(b, "IEND", nil), rows
}

// idatOf is the data of a PNG file's IDAT chunk (the encoder writes one).
func idatOf(t *testing.T, file []byte) []byte {
	const afterIHDR = 8 + 12 + 13
	n := binary.BigEndian.Uint32(file[afterIHDR:])
	if string(file[afterIHDR+4:afterIHDR+8]) != "IDAT" {
		t.Fatalf("no IDAT chunk after IHDR")
	}
	return file[afterIHDR+8 : afterIHDR+8+int(n)]
}

// decodesTo fails unless file decodes (image/png) to img's colours.
func decodesTo(t *testing.T, file []byte, img *image.RGBA) {
	t.Helper()
	dec, err := png.Decode(bytes.NewReader(file))
	if err != nil {
		t.Fatal(err)
	}
	if dec.Bounds() != img.Rect {
		t.Fatalf("decodes to %v, drawn %v", dec.Bounds(), img.Rect)
	}
	for y := range img.Rect.Dy() {
		for x := range img.Rect.Dx() {
			if d, w := color.NRGBAModel.Convert(dec.At(x, y)), color.NRGBAModel.Convert(img.At(x, y)); d != w {
				t.Fatalf("pixel (%d, %d) decodes to %v, drawn %v", x, y, dec.At(x, y), img.At(x, y))
			}
		}
	}
}

// adler32Combine gives hash/adler32's checksum of two runs of bytes one
// after the other from each run's own, for runs of every length from 0
// to past the modulus (65 521) and a few times it, of bytes at their
// largest and at random.
func TestAdler32CombineAsTheLibrary(t *testing.T) {
	rng := rand.New(rand.NewPCG(15, 16))
	for trial := range 300 {
		n1, n2 := rng.IntN(3*adlerMod), rng.IntN(3*adlerMod)
		if trial < 20 {
			n1, n2 = trial/4, trial%4*adlerMod/2
		}
		p := make([]byte, n1+n2)
		for i := range p {
			if trial%5 == 0 {
				p[i] = 255
			} else {
				p[i] = byte(rng.IntN(256))
			}
		}
		got := adler32Combine(adler32.Checksum(p[:n1]), adler32.Checksum(p[n1:]), n2)
		if want := adler32.Checksum(p); got != want {
			t.Fatalf("%d then %d bytes: %08x, hash/adler32 %08x", n1, n2, got, want)
		}
	}
}

// An image with any pixel not opaque is image/png's file at its fastest
// level (the encoder's stated fallback), which decodes to the same colours
// (PNG stores them non-premultiplied, ISO/IEC 15948 4.3), wherever that
// pixel lies: an all-transparent image (its first row the same as the zero
// row the Up filter puts above it), a translucent pixel in the last row,
// in a row whose colour bytes are the same as the one above's (only its
// alpha differs), in an odd last pixel, in either piece of an image the
// encoder deflates in two. The encoder, left mid-stream by
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
	for name, y := range map[string]int{"first piece": 100, "second piece's first row": 350, "second piece": 699} {
		img := opaque(945, 700) // deflated in two pieces when opaque
		img.SetRGBA(3, y, color.RGBA{R: 40, G: 60, B: 80, A: 128})
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
		dec, err := png.Decode(bytes.NewReader(got))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		for y := range img.Rect.Dy() {
			for x := range img.Rect.Dx() {
				if d, w := color.NRGBAModel.Convert(dec.At(x, y)), color.NRGBAModel.Convert(img.At(x, y)); d != w {
					t.Fatalf("%s: pixel (%d, %d) decodes to %v, drawn %v", name, x, y, dec.At(x, y), img.At(x, y))
				}
			}
		}
		after := opaque(11, 6)
		after.SetRGBA(3, 2, color.RGBA{R: 1, G: 2, B: 3, A: 255})
		if want, _ := longWayPNG(t, after); !bytes.Equal(mustEncode(t, &e, after), want) {
			t.Fatalf("after %s: an opaque image is not the long way's file", name)
		}
	}
}

func mustEncode(t *testing.T, e *pngEncoder, img *image.RGBA) []byte {
	t.Helper()
	b, err := e.encode(img)
	if err != nil {
		t.Fatal(err)
	}
	return b
}
