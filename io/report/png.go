package report

import (
	"bytes"
	"compress/zlib"
	"encoding/binary"
	"hash/crc32"
	"image"
	"image/png"
	"io"
)

// encodePNG writes img as a PNG file (PNG specification, ISO/IEC 15948:
// signature, IHDR, IDAT, IEND chunks, each with its CRC-32). An opaque
// image is written as 8-bit RGB with every row under the "Up" filter (the
// difference from the row above) and deflated at the fastest level: the
// figures are mostly rows like the one above, so this one filter comes
// within a few per cent of the size of choosing the best filter per row
// (as image/png does), in half the time. An image with any transparency is
// left to image/png.
func encodePNG(w io.Writer, img *image.RGBA) error {
	if !img.Opaque() {
		return (&png.Encoder{CompressionLevel: png.BestSpeed}).Encode(w, img)
	}
	width, height := img.Rect.Dx(), img.Rect.Dy()
	var b bytes.Buffer
	b.WriteString("\x89PNG\r\n\x1a\n")
	var hdr [13]byte
	binary.BigEndian.PutUint32(hdr[0:], uint32(width))
	binary.BigEndian.PutUint32(hdr[4:], uint32(height))
	hdr[8], hdr[9] = 8, 2 // bit depth 8, colour type 2 (RGB); methods 0 (deflate, the five filters), no interlace
	pngChunk(&b, "IHDR", hdr[:])
	var z bytes.Buffer
	z.Grow(len(img.Pix) / 8) // figures deflate to about a tenth
	zw, err := zlib.NewWriterLevel(&z, zlib.BestSpeed)
	if err != nil {
		return err
	}
	prev, cur := make([]byte, 3*width), make([]byte, 3*width)
	line := make([]byte, 1+3*width)
	line[0] = 2 // filter type Up
	for y := range height {
		row := img.Pix[y*img.Stride : y*img.Stride+4*width]
		for x := range width {
			cur[3*x], cur[3*x+1], cur[3*x+2] = row[4*x], row[4*x+1], row[4*x+2]
		}
		for i, v := range cur {
			line[1+i] = v - prev[i] // modulo 256, as the filter is defined
		}
		if _, err := zw.Write(line); err != nil {
			return err
		}
		prev, cur = cur, prev
	}
	if err := zw.Close(); err != nil {
		return err
	}
	pngChunk(&b, "IDAT", z.Bytes())
	pngChunk(&b, "IEND", nil)
	_, err = w.Write(b.Bytes())
	return err
}

// pngChunk appends one chunk: length, type, data, CRC-32 of type and data.
func pngChunk(b *bytes.Buffer, typ string, data []byte) {
	var n [4]byte
	binary.BigEndian.PutUint32(n[:], uint32(len(data)))
	b.Write(n[:])
	b.WriteString(typ)
	b.Write(data)
	crc := crc32.NewIEEE()
	io.WriteString(crc, typ)
	crc.Write(data)
	binary.BigEndian.PutUint32(n[:], crc.Sum32())
	b.Write(n[:])
}
