package report

import (
	"bytes"
	"encoding/binary"
	"hash/crc32"
	"image"
	"image/color"
	"image/png"

	"github.com/klauspost/compress/flate"
)

// pngEncoder writes images as PNG files (PNG specification, ISO/IEC 15948:
// signature, IHDR, IDAT, IEND chunks, each with its CRC-32). An opaque
// image is written as 8-bit RGB with every row under the "Up" filter (the
// difference from the row above) and deflated at a fast level: the
// figures are mostly rows like the one above, so this one filter comes
// within a few per cent of the size of choosing the best filter per row
// (as image/png does), in half the time. An image with any transparency is
// left to image/png (found while filtering, not by a pass of its own).
//
// The deflate stream is klauspost/compress's at its level 1 rather than
// compress/flate's BestSpeed: on the 40 figures of the four reference runs
// (testdata/perf/reference-runs.sh, 16 MB of filtered rows a run) its
// level 3 took about half the time, 71 ms against 135 in all, for files
// 1 % smaller (the 2000 × 3001 series) to 2 % larger (the urethane
// series), and level 1 takes a fifth to a quarter less again (108–140 ms
// against 131–206 for the 41 figures of the reference runs, best of seven
// each, on a loaded machine; the eleven of the 2000 × 3001 run 26 against
// 36 ms) for files 2.9 % larger (4.12 MB against 4.00). Any conforming
// inflater reads them all (RFC 1951); the pixels are the same.
//
// Its working memory is kept from one image to the next (drawFigures
// encodes every figure of a goroutine with one): the deflate state (about
// 0.5 MB it writes to, a fresh one per image before) is reset rather than
// made again, which flate.Writer.Reset documents as equivalent to a new
// writer, and the compressed data is gathered in one buffer that is kept.
// Each file is returned in a slice of its own.
//
// The zlib stream (RFC 1950) around the deflate data is put together here:
// the two header bytes zlib gives for its fastest level, and the
// Adler-32 of the filtered rows, which adler32Update forms in one step per
// eight zero bytes (most of a figure is white under white, all zeros after
// the filter) where hash/adler32 takes eight.
type pngEncoder struct {
	zw, zp             *flate.Writer // at deflateLevel and paletteLevel
	idat               bytes.Buffer
	above, line, zeros []byte
}

// encode returns img's PNG file.
func (e *pngEncoder) encode(img *image.RGBA) ([]byte, error) {
	sum, opaque, err := e.deflateRows(img)
	if err != nil {
		return nil, err
	}
	if !opaque {
		var b bytes.Buffer
		err := (&png.Encoder{CompressionLevel: png.BestSpeed}).Encode(&b, img)
		return b.Bytes(), err
	}
	e.idat.Write(binary.BigEndian.AppendUint32(nil, sum))
	var hdr [13]byte
	binary.BigEndian.PutUint32(hdr[0:], uint32(img.Rect.Dx()))
	binary.BigEndian.PutUint32(hdr[4:], uint32(img.Rect.Dy()))
	hdr[8], hdr[9] = 8, 2 // bit depth 8, colour type 2 (RGB); methods 0 (deflate, the five filters), no interlace
	const signature = "\x89PNG\r\n\x1a\n"
	b := make([]byte, 0, len(signature)+3*12+len(hdr)+e.idat.Len())
	b = append(b, signature...)
	b = pngChunk(b, "IHDR", hdr[:])
	b = pngChunk(b, "IDAT", e.idat.Bytes())
	return pngChunk(b, "IEND", nil), nil
}

// deflateRows writes the zlib header and the deflated rows of img, each
// under the Up filter, into e.idat and returns their Adler-32; opaque is
// false, and the rows are left unfinished, at the first row holding a
// pixel that is not opaque.
func (e *pngEncoder) deflateRows(img *image.RGBA) (sum uint32, opaque bool, err error) {
	width, height := img.Rect.Dx(), img.Rect.Dy()
	e.idat.Reset()
	e.idat.Grow(len(img.Pix) / 8) // figures deflate to about a tenth
	e.idat.WriteString(zlibHeader)
	if e.zw == nil {
		zw, err := flate.NewWriter(&e.idat, deflateLevel)
		if err != nil {
			return 0, false, err
		}
		e.zw = zw
	} else {
		e.zw.Reset(&e.idat)
	}
	// The Up filter of a pixel's three bytes is the difference of its RGBA
	// bytes from the pixel above (a zero row above the first), the alpha
	// byte dropped; a row the same as the one above is all zeros.
	above := grown(&e.above, 4*width)
	clear(above)
	line := grown(&e.line, 1+3*width+2) // two spare bytes for the last pixels' 8-byte store
	zeros := grown(&e.zeros, 1+3*width)
	clear(zeros)
	line[0], zeros[0] = 2, 2 // filter type Up
	sum = 1                  // Adler-32 of nothing
	// The alpha bytes of every row, and-ed.
	alpha := uint32(0xff000000)
	for y := range height {
		row := img.Pix[y*img.Stride : y*img.Stride+4*width]
		out := zeros
		if !bytes.Equal(row, above) {
			alpha &= upFilter(line[1:], row, above)
			out = line[:1+3*width]
			sum = adler32Update(sum, out)
		} else {
			if y == 0 {
				alpha = 0 // the same as the zero row above: alpha 0
			}
			sum = adler32Zeros(adler32Update(sum, zeros[:1]), 3*width)
		}
		if alpha != 0xff000000 {
			return 0, false, nil
		}
		if _, err := e.zw.Write(out); err != nil {
			return 0, false, err
		}
		above = row
	}
	return sum, true, e.zw.Close()
}

// encodePaletted returns the PNG file of a paletted image with more than 16
// colours, all opaque, as image/png writes it but for the deflate stream:
// 8-bit indexed colour with its palette (PLTE), every row under filter
// None (image/png filters no paletted image), deflated at paletteLevel by
// klauspost/compress; nil for any other image, which image/png is left to
// (its smaller bit depths and transparency chunk). image/png deflates at
// zlib's default level, 4–8 ms a run of 2000 × 3001 for the maps' images
// (docs/performance-history.md, twenty-fourth round).
func (e *pngEncoder) encodePaletted(img *image.Paletted) ([]byte, error) {
	width, height := img.Rect.Dx(), img.Rect.Dy()
	if len(img.Palette) <= 16 || len(img.Palette) > 256 || width <= 0 || height <= 0 {
		return nil, nil
	}
	plte := make([]byte, 0, 3*len(img.Palette))
	for _, c := range img.Palette {
		rgba := color.NRGBAModel.Convert(c).(color.NRGBA)
		if rgba.A != 0xff {
			return nil, nil
		}
		plte = append(plte, rgba.R, rgba.G, rgba.B)
	}
	e.idat.Reset()
	e.idat.WriteString(zlibHeader)
	if e.zp == nil {
		zp, err := flate.NewWriter(&e.idat, paletteLevel)
		if err != nil {
			return nil, err
		}
		e.zp = zp
	} else {
		e.zp.Reset(&e.idat)
	}
	line := grown(&e.line, 1+width)
	line[0] = 0 // filter type None
	sum := uint32(1)
	for y := range height {
		off := img.PixOffset(img.Rect.Min.X, img.Rect.Min.Y+y)
		copy(line[1:], img.Pix[off:off+width])
		sum = adler32Update(sum, line)
		if _, err := e.zp.Write(line); err != nil {
			return nil, err
		}
	}
	if err := e.zp.Close(); err != nil {
		return nil, err
	}
	e.idat.Write(binary.BigEndian.AppendUint32(nil, sum))
	var hdr [13]byte
	binary.BigEndian.PutUint32(hdr[0:], uint32(width))
	binary.BigEndian.PutUint32(hdr[4:], uint32(height))
	hdr[8], hdr[9] = 8, 3 // bit depth 8, colour type 3 (indexed); methods 0, no interlace
	const signature = "\x89PNG\r\n\x1a\n"
	b := make([]byte, 0, len(signature)+4*12+len(hdr)+len(plte)+e.idat.Len())
	b = append(b, signature...)
	b = pngChunk(b, "IHDR", hdr[:])
	b = pngChunk(b, "PLTE", plte)
	b = pngChunk(b, "IDAT", e.idat.Bytes())
	return pngChunk(b, "IEND", nil), nil
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

// zlibHeader is the header zlib writes at its fastest level (RFC 1950:
// method 8 with a 32 kB window, FLEVEL 0, check bits: 0x7801 is a multiple
// of 31).
const zlibHeader = "\x78\x01"

// deflateLevel is klauspost/compress/flate's level for the figures; its
// header above says "fastest" (FLEVEL 0 of RFC 1950, the value zlib writes
// for levels 0 and 1; informative only, inflaters ignore it).
const deflateLevel = 1

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

// paletteLevel is klauspost/compress/flate's level for the maps' paletted
// images: on a map of noise and one of smooth bands (BenchmarkEncodeMapImage,
// 480 × 260) it gives files within 0.3 % and 9 % of image/png's at zlib's
// default level in 0.7–1.6 ms against 7–11 ms an image; level 1 (the
// figures') takes 0.2–0.8 ms but makes files 38 % and 50 % larger (the noise
// map's pixels are stored, not compressed).
const paletteLevel = 5
