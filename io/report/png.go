package report

import (
	"bytes"
	"compress/flate"
	"encoding/binary"
	"hash/crc32"
	"image"
	"image/png"
)

// pngEncoder writes images as PNG files (PNG specification, ISO/IEC 15948:
// signature, IHDR, IDAT, IEND chunks, each with its CRC-32). An opaque
// image is written as 8-bit RGB with every row under the "Up" filter (the
// difference from the row above) and deflated at the fastest level: the
// figures are mostly rows like the one above, so this one filter comes
// within a few per cent of the size of choosing the best filter per row
// (as image/png does), in half the time. An image with any transparency is
// left to image/png (found while filtering, not by a pass of its own).
//
// Its working memory is kept from one image to the next (drawFigures
// encodes every figure of a goroutine with one): the deflate states (about
// 0.5 MB each they write to, a fresh one per image before) are reset
// rather than made again, which flate.Writer.Reset documents as equivalent
// to a new writer, and the compressed data are gathered in buffers that
// are kept. Each file is returned in a slice of its own.
//
// The zlib stream (RFC 1950) around the deflate data is put together here:
// the two header bytes zlib.Writer gives at the fastest level, and the
// Adler-32 of the filtered rows, which adler32Update forms in one step per
// eight zero bytes (most of a figure is white under white, all zeros after
// the filter) where hash/adler32 takes eight.
//
// An image of at least splitBytes of filtered rows is deflated in two
// pieces, its rows above half its height and the rest, each by a deflate
// writer of its own, so that a figure drawn while the other processor is
// idle (the two drawn after the uniqueness ranges) is encoded in about
// half the time: with concurrent, the second piece on a goroutine of its
// own; without, one after the other (where every processor is busy
// anyway, the goroutine's hand-over would cost without giving anything;
// the bytes are the same either way). The first piece ends with a
// sync flush (RFC 1951 3.2.4: an empty stored block, which leaves the
// stream byte-aligned), and the second, whose blocks begin with nothing
// before them to refer to, is appended as it is: one valid deflate
// stream, which decodes to the same rows. The two checksums are combined
// (adler32Combine). Where the split lies depends on the image's size
// alone, never on the processors or the timing, so the file is the same
// on any machine; it is about 0.1 % larger than one piece's
// (docs/performance.md, fourteenth round).
type pngEncoder struct {
	pieces     [2]rowDeflater
	zeros      []byte // a filtered row the same as the one above
	concurrent bool   // deflate the two pieces side by side
}

// rowDeflater deflates a run of an image's filtered rows.
type rowDeflater struct {
	zw   *flate.Writer
	out  bytes.Buffer
	line []byte
	top  []byte // the row of zeros above the first
	// sum is the rows' Adler-32 (from 1, that of nothing); opaque is false
	// at the first row holding a pixel that is not opaque.
	sum    uint32
	opaque bool
	err    error
}

// splitBytes is the least size of an image's filtered rows that is
// deflated in two pieces: two of compress/flate's blocks at the fastest
// level (65 535 bytes of input each) in each piece, so that the pieces'
// own blocks and their sync flush's five bytes weigh little. The report's
// figures are about 2 MB.
const splitBytes = 4 * 65535

// encode returns img's PNG file.
func (e *pngEncoder) encode(img *image.RGBA) ([]byte, error) {
	width, height := img.Rect.Dx(), img.Rect.Dy()
	zeros := grown(&e.zeros, 1+3*width)
	clear(zeros)
	zeros[0] = 2 // filter type Up
	first, second := &e.pieces[0], &e.pieces[1]
	second.out.Reset()
	split := filteredLen(width, height) >= splitBytes && height >= 2
	switch {
	case !split:
		first.deflateRows(img, 0, height, zeros, false)
	case e.concurrent:
		done := make(chan struct{})
		go func() {
			defer close(done)
			second.deflateRows(img, height/2, height, zeros, false)
		}()
		first.deflateRows(img, 0, height/2, zeros, true)
		<-done
	default:
		first.deflateRows(img, 0, height/2, zeros, true)
		second.deflateRows(img, height/2, height, zeros, false)
	}
	sum := first.sum
	if split && first.err == nil && first.opaque {
		first.err, first.opaque = second.err, second.opaque
		sum = adler32Combine(first.sum, second.sum, filteredLen(width, height-height/2))
	}
	if first.err != nil {
		return nil, first.err
	}
	if !first.opaque {
		var b bytes.Buffer
		err := (&png.Encoder{CompressionLevel: png.BestSpeed}).Encode(&b, img)
		return b.Bytes(), err
	}
	return e.file(width, height, sum), nil
}

// file puts the PNG file together around the deflated pieces (the second
// empty where the image was not split).
func (e *pngEncoder) file(width, height int, sum uint32) []byte {
	var hdr [13]byte
	binary.BigEndian.PutUint32(hdr[0:], uint32(width))
	binary.BigEndian.PutUint32(hdr[4:], uint32(height))
	hdr[8], hdr[9] = 8, 2 // bit depth 8, colour type 2 (RGB); methods 0 (deflate, the five filters), no interlace
	const signature = "\x89PNG\r\n\x1a\n"
	first, second := e.pieces[0].out.Bytes(), e.pieces[1].out.Bytes()
	n := len(zlibHeader) + len(first) + len(second) + 4
	b := make([]byte, 0, len(signature)+3*12+len(hdr)+n)
	b = append(b, signature...)
	b = pngChunk(b, "IHDR", hdr[:])
	// The IDAT chunk (pngChunk's) of the zlib stream, from its pieces.
	b = binary.BigEndian.AppendUint32(b, uint32(n))
	start := len(b)
	b = append(append(append(append(b, "IDAT"...), zlibHeader...), first...), second...)
	b = binary.BigEndian.AppendUint32(b, sum)
	b = binary.BigEndian.AppendUint32(b, crc32.ChecksumIEEE(b[start:]))
	return pngChunk(b, "IEND", nil)
}

// reserve makes e's deflate writers, if not yet made.
func (e *pngEncoder) reserve() {
	for i := range e.pieces {
		if d := &e.pieces[i]; d.zw == nil {
			d.zw, _ = flate.NewWriter(&d.out, flate.BestSpeed) // an error only for a level out of range
		}
	}
}

// filteredLen is the size of n filtered rows of an image width pixels
// wide: a filter-type byte and three bytes a pixel each.
func filteredLen(width, n int) int { return (1 + 3*width) * n }

// deflateRows deflates rows y0 to y1 of img, each under the Up filter,
// into d.out (the row above y0 is the image's, or a row of zeros above the
// first), and sets d.sum to their Adler-32 and d.opaque; the rows are left
// unfinished at the first row holding a pixel that is not opaque. With
// flush the deflate stream ends in a sync flush, else it is closed. zeros
// is a filtered row the same as the one above, read only.
func (d *rowDeflater) deflateRows(img *image.RGBA, y0, y1 int, zeros []byte, flush bool) {
	width := img.Rect.Dx()
	d.out.Reset()
	d.out.Grow(filteredLen(width, y1-y0) / 8) // figures deflate to about a tenth
	d.sum, d.opaque, d.err = 1, false, nil    // Adler-32 of nothing
	if d.zw == nil {
		if d.zw, d.err = flate.NewWriter(&d.out, flate.BestSpeed); d.err != nil {
			return
		}
	} else {
		d.zw.Reset(&d.out)
	}
	// The Up filter of a pixel's three bytes is the difference of its RGBA
	// bytes from the pixel above (a zero row above the first), the alpha
	// byte dropped; a row the same as the one above is all zeros.
	var above []byte
	if y0 == 0 {
		above = grown(&d.top, 4*width)
		clear(above)
	} else {
		above = img.Pix[(y0-1)*img.Stride : (y0-1)*img.Stride+4*width]
	}
	line := grown(&d.line, 1+3*width+2) // two spare bytes for the last pixels' 8-byte store
	line[0] = 2                         // filter type Up
	// The alpha bytes of every row, and-ed.
	alpha := uint32(0xff000000)
	for y := y0; y < y1; y++ {
		row := img.Pix[y*img.Stride : y*img.Stride+4*width]
		out := zeros
		if !bytes.Equal(row, above) {
			alpha &= upFilter(line[1:], row, above)
			out = line[:1+3*width]
			d.sum = adler32Update(d.sum, out)
		} else {
			if y == 0 {
				alpha = 0 // the same as the zero row above: alpha 0
			}
			d.sum = adler32Zeros(adler32Update(d.sum, zeros[:1]), 3*width)
		}
		if alpha != 0xff000000 {
			return
		}
		if _, d.err = d.zw.Write(out); d.err != nil {
			return
		}
		above = row
	}
	d.opaque = true
	if flush {
		d.err = d.zw.Flush()
	} else {
		d.err = d.zw.Close()
	}
}

// grown is *s resliced to n bytes, made anew when it is shorter.
func grown(s *[]byte, n int) []byte {
	if cap(*s) < n {
		*s = make([]byte, n)
	}
	return (*s)[:n]
}

// upFilter writes the Up filter of an RGBA row (row minus above, byte by
// byte modulo 256, as the filter is defined) as RGB into dst, which has two
// bytes of room past the last pixel. Two pixels' eight bytes are
// subtracted at once with no borrow between them: (p | H) − (q &^ H) takes
// each byte's low seven bits with its top bit set (no byte goes below
// zero), and ^ ((p ^ ^q) & H) puts the top bit the subtraction would have
// given (a common SIMD-within-a-register method; the test checks every pair
// of bytes against the plain difference). It returns the and of the row's
// alpha bytes, in the top byte (0xff000000 when the row is opaque).
func upFilter(dst, row, above []byte) uint32 {
	const h = 0x8080808080808080
	alpha := uint64(0xff000000ff000000)
	x := 0
	for ; x+8 <= len(row); x += 8 {
		p := binary.LittleEndian.Uint64(row[x:])
		q := binary.LittleEndian.Uint64(above[x:])
		d := ((p | h) - (q &^ h)) ^ ((p ^ ^q) & h)
		// The two pixels' colour bytes, six in a row; the store's top two
		// bytes are written over by the next pixels' or left in the spare.
		binary.LittleEndian.PutUint64(dst[x/4*3:], d&0xffffff|(d>>8)&0xffffff000000)
		alpha &= p
	}
	if x < len(row) { // an odd pixel at the end
		p := uint64(binary.LittleEndian.Uint32(row[x:]))
		q := uint64(binary.LittleEndian.Uint32(above[x:]))
		d := ((p | h) - (q &^ h)) ^ ((p ^ ^q) & h)
		binary.LittleEndian.PutUint32(dst[x/4*3:], uint32(d))
		alpha &= p | 0xff000000_00000000
	}
	return uint32(alpha&(alpha>>32)) & 0xff000000
}

// zlibHeader is the header zlib.Writer writes at the fastest level (RFC
// 1950: method 8 with a 32 kB window, level 0, check bits).
const zlibHeader = "\x78\x01"

// adlerMod and adlerMax are Adler-32's modulus and the most bytes its sums
// take before they must be reduced to stay in 32 bits (RFC 1950, 9; zlib's
// NMAX).
const (
	adlerMod = 65521
	adlerMax = 5552
)

// adler32Update is hash/adler32's update: the sums s1 (1 + the bytes) and
// s2 (the sum of s1 after each byte), modulo 65521, of the bytes after
// those sum was taken of. Eight zero bytes in a row leave s1 and add
// 8·s1 to s2, in one step.
func adler32Update(sum uint32, p []byte) uint32 {
	s1, s2 := sum&0xffff, sum>>16
	for len(p) > 0 {
		n := min(len(p), adlerMax)
		q := p[:n]
		for len(q) >= 8 {
			if binary.LittleEndian.Uint64(q) == 0 {
				s2 += 8 * s1
			} else {
				for _, b := range q[:8] {
					s1 += uint32(b)
					s2 += s1
				}
			}
			q = q[8:]
		}
		for _, b := range q {
			s1 += uint32(b)
			s2 += s1
		}
		s1, s2 = s1%adlerMod, s2%adlerMod
		p = p[n:]
	}
	return s2<<16 | s1
}

// adler32Combine is the Adler-32 of two runs of bytes one after the
// other, from each run's own (sum1 and sum2, each from 1) and the second
// run's length n: the second's s1 gains the first's s1 − 1, and its s2
// gains n times that (RFC 1950, 8.2's sums written out; zlib's
// adler32_combine).
func adler32Combine(sum1, sum2 uint32, n int) uint32 {
	a1, b1 := uint64(sum1&0xffff), uint64(sum1>>16)
	a2, b2 := uint64(sum2&0xffff), uint64(sum2>>16)
	rem := uint64(n) % adlerMod
	s1 := (a1 + a2 + adlerMod - 1) % adlerMod
	s2 := (b1 + b2 + rem*a1 + adlerMod - rem) % adlerMod
	return uint32(s2<<16 | s1)
}

// adler32Zeros is adler32Update of n zero bytes: s1 stays, s2 gains n·s1.
func adler32Zeros(sum uint32, n int) uint32 {
	s1, s2 := uint64(sum&0xffff), uint64(sum>>16)
	return uint32((s2+uint64(n)%adlerMod*s1)%adlerMod)<<16 | uint32(s1)
}

// pngChunk appends one chunk to b: length, type, data, CRC-32 of type and
// data.
func pngChunk(b []byte, typ string, data []byte) []byte {
	b = binary.BigEndian.AppendUint32(b, uint32(len(data)))
	start := len(b)
	b = append(append(b, typ...), data...)
	return binary.BigEndian.AppendUint32(b, crc32.ChecksumIEEE(b[start:]))
}
