package report

import (
	"bytes"
	"compress/zlib"
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
// encodes every figure of a goroutine with one): the deflate state (about
// 0.5 MB it writes to, a fresh one per image before) is reset rather than
// made again, which zlib.Writer.Reset documents as equivalent to a new
// writer, and the compressed data is gathered in one buffer that is kept.
// Each file is returned in a slice of its own.
type pngEncoder struct {
	zw                 *zlib.Writer
	idat               bytes.Buffer
	above, line, zeros []byte
}

// encode returns img's PNG file.
func (e *pngEncoder) encode(img *image.RGBA) ([]byte, error) {
	width, height := img.Rect.Dx(), img.Rect.Dy()
	e.idat.Reset()
	e.idat.Grow(len(img.Pix) / 8) // figures deflate to about a tenth
	if e.zw == nil {
		zw, err := zlib.NewWriterLevel(&e.idat, zlib.BestSpeed)
		if err != nil {
			return nil, err
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
	line := grown(&e.line, 1+3*width+1) // one spare byte for the last pixel's 4-byte store
	zeros := grown(&e.zeros, 1+3*width)
	clear(zeros)
	line[0], zeros[0] = 2, 2 // filter type Up
	// The alpha bytes of every row, and-ed.
	opaque := uint32(0xff000000)
	for y := range height {
		row := img.Pix[y*img.Stride : y*img.Stride+4*width]
		out := zeros
		if !bytes.Equal(row, above) {
			opaque &= upFilter(line[1:], row, above)
			out = line[:1+3*width]
		} else if y == 0 {
			opaque = 0 // the same as the zero row above: alpha 0
		}
		if opaque != 0xff000000 {
			var b bytes.Buffer
			err := (&png.Encoder{CompressionLevel: png.BestSpeed}).Encode(&b, img)
			return b.Bytes(), err
		}
		if _, err := e.zw.Write(out); err != nil {
			return nil, err
		}
		above = row
	}
	if err := e.zw.Close(); err != nil {
		return nil, err
	}
	var hdr [13]byte
	binary.BigEndian.PutUint32(hdr[0:], uint32(width))
	binary.BigEndian.PutUint32(hdr[4:], uint32(height))
	hdr[8], hdr[9] = 8, 2 // bit depth 8, colour type 2 (RGB); methods 0 (deflate, the five filters), no interlace
	const signature = "\x89PNG\r\n\x1a\n"
	b := make([]byte, 0, len(signature)+3*12+len(hdr)+e.idat.Len())
	b = append(b, signature...)
	b = pngChunk(b, "IHDR", hdr[:])
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
// byte modulo 256, as the filter is defined) as RGB into dst, which has one
// byte of room past the last pixel. A pixel's four bytes are subtracted at
// once with no borrow between them: (p | H) − (q &^ H) takes each byte's
// low seven bits with its top bit set (no byte goes below zero), and
// ^ ((p ^ ^q) & H) puts the top bit the subtraction would have given (a
// common SIMD-within-a-register method; the test checks every pair of
// bytes against the plain difference). It returns the and of the row's
// alpha bytes, in the top byte (0xff000000 when the row is opaque).
func upFilter(dst, row, above []byte) uint32 {
	const h = 0x80808080
	alpha := uint32(0xff000000)
	for x := 0; x+4 <= len(row); x += 4 {
		p := binary.LittleEndian.Uint32(row[x:])
		q := binary.LittleEndian.Uint32(above[x:])
		binary.LittleEndian.PutUint32(dst[x/4*3:], ((p|h)-(q&^h))^((p^^q)&h))
		alpha &= p
	}
	return alpha & 0xff000000
}

// pngChunk appends one chunk to b: length, type, data, CRC-32 of type and
// data.
func pngChunk(b []byte, typ string, data []byte) []byte {
	b = binary.BigEndian.AppendUint32(b, uint32(len(data)))
	start := len(b)
	b = append(append(b, typ...), data...)
	return binary.BigEndian.AppendUint32(b, crc32.ChecksumIEEE(b[start:]))
}
