package report

import (
	"bytes"
	"compress/zlib"
	"encoding/binary"
	"hash/adler32"
	"image"
	"image/color"
	"image/png"
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
// dropped, the whole deflated by compress/zlib at its fastest level, in the
// chunks IHDR, IDAT, IEND. Pictures like the figures (white, with lines,
// text-like specks and rows the same as the one above), widths odd and
// even down to one pixel, one image after another with one encoder.
func TestEncodePNGAsZlib(t *testing.T) {
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
		if want := longWayPNG(t, img); !bytes.Equal(got, want) {
			t.Fatalf("%d × %d: %d bytes, the long way %d", w, h, len(got), len(want))
		}
	}
}

// longWayPNG is an opaque img's PNG file as the specification puts it
// together, deflated by compress/zlib at level 1.
func longWayPNG(t *testing.T, img *image.RGBA) []byte {
	w, h := img.Rect.Dx(), img.Rect.Dy()
	var z bytes.Buffer
	zw, err := zlib.NewWriterLevel(&z, zlib.BestSpeed)
	if err != nil {
		t.Fatal(err)
	}
	for y := range h {
		line := []byte{2}
		for x := range w {
			for k := range 3 {
				prior := byte(0)
				if y > 0 {
					prior = img.Pix[(y-1)*img.Stride+4*x+k]
				}
				line = append(line, img.Pix[y*img.Stride+4*x+k]-prior)
			}
		}
		zw.Write(line)
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	var hdr [13]byte
	binary.BigEndian.PutUint32(hdr[0:], uint32(w))
	binary.BigEndian.PutUint32(hdr[4:], uint32(h))
	hdr[8], hdr[9] = 8, 2
	b := []byte("\x89PNG\r\n\x1a\n")
	b = pngChunk(b, "IHDR", hdr[:])
	b = pngChunk(b, "IDAT", z.Bytes())
	return pngChunk(b, "IEND", nil)
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
		if got, err := e.encode(after); err != nil || !bytes.Equal(got, longWayPNG(t, after)) {
			t.Fatalf("after %s: an opaque image is not the long way's file (%v)", name, err)
		}
	}
}
