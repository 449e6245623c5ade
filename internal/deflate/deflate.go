// Copyright 2009 The Go Authors. All rights reserved.
// Use of this source code is governed by a BSD-style
// license that can be found in the LICENSE file.

// Package deflate writes the DEFLATE stream (RFC 1951) that the Go
// library's compress/flate writes at its fastest level (flate.BestSpeed),
// byte for byte, in less time: the figure files are PNG images whose bytes
// are that stream, so only the same encoder's output will do.
//
// The encoder is compress/flate's (Go 1.26), kept as it is: an LZ77 pass
// with one hash table of 4-byte sequences over each block of 65 535 input
// bytes (deflatefast.go, after Snappy's encoder), then each block written
// with the Huffman codes of its own symbol counts, length-limited to 15
// bits (huffman_code.go), as stored bytes when that is no shorter, or
// Huffman-coded alone when matching removed under a sixteenth
// (huffman_bit_writer.go). What differs is only how the same results are
// found: a match's length is compared eight bytes at a time, and the
// symbol lists are sorted by a generic sort of the same total order
// instead of sort.Sort. The tests hold the output to compress/flate's.
package deflate

import (
	"errors"
	"io"
)

const (
	// The LZ77 step produces literal tokens and <length, offset> pairs.
	baseMatchLength = 3       // the smallest match length per the RFC section 3.2.5
	minMatchLength  = 4       // the smallest match length the encoder emits
	maxMatchLength  = 258     // the largest match length
	baseMatchOffset = 1       // the smallest match offset
	maxMatchOffset  = 1 << 15 // the largest match offset

	maxStoreBlockSize = 65535 // the input bytes of one block
	maxNumLit         = 286   // literal and length symbols
)

var errClosed = errors.New("deflate: closed writer")

// Writer is flate.NewWriter(w, flate.BestSpeed), and Reset is its Reset.
type Writer struct {
	w         *huffmanBitWriter
	fast      *deflateFast
	window    []byte
	windowEnd int
	tokens    []token
	err       error
}

// NewWriter is a writer of the stream flate.NewWriter(w, flate.BestSpeed)
// writes.
func NewWriter(w io.Writer) *Writer {
	return &Writer{
		w:      newHuffmanBitWriter(w),
		fast:   newDeflateFast(),
		window: make([]byte, maxStoreBlockSize),
		tokens: make([]token, maxStoreBlockSize),
	}
}

// Reset discards the writer's state and makes it equivalent to NewWriter(w).
func (d *Writer) Reset(w io.Writer) {
	d.w.reset(w)
	d.err = nil
	d.windowEnd = 0
	d.tokens = d.tokens[:0]
	d.fast.reset()
}

// Write compresses p; the input is cut into blocks of 65 535 bytes
// whatever the lengths written.
func (d *Writer) Write(p []byte) (int, error) {
	if d.err != nil {
		return 0, d.err
	}
	n := len(p)
	for len(p) > 0 {
		d.encSpeed(false)
		k := copy(d.window[d.windowEnd:], p)
		d.windowEnd += k
		p = p[k:]
		if d.err != nil {
			return 0, d.err
		}
	}
	return n, nil
}

// Close writes what is left and the final block.
func (d *Writer) Close() error {
	if d.err == errClosed {
		return nil
	}
	if d.err != nil {
		return d.err
	}
	d.encSpeed(true)
	if d.err != nil {
		return d.err
	}
	if d.w.writeStoredHeader(0, true); d.w.err != nil {
		return d.w.err
	}
	d.w.flush()
	if d.w.err != nil {
		return d.w.err
	}
	d.err = errClosed
	return nil
}

// encSpeed encodes the window when it is full, or, at the end (sync),
// whatever it holds.
func (d *Writer) encSpeed(sync bool) {
	if d.windowEnd < maxStoreBlockSize {
		if !sync {
			return
		}
		// Small sizes.
		if d.windowEnd < 128 {
			switch {
			case d.windowEnd == 0:
				return
			case d.windowEnd <= 16:
				d.err = d.writeStoredBlock(d.window[:d.windowEnd])
			default:
				d.w.writeBlockHuff(false, d.window[:d.windowEnd])
				d.err = d.w.err
			}
			d.windowEnd = 0
			d.fast.reset()
			return
		}
	}
	d.tokens = d.fast.encode(d.tokens[:0], d.window[:d.windowEnd])
	// If matching removed less than a sixteenth, Huffman-code the block.
	if len(d.tokens) > d.windowEnd-(d.windowEnd>>4) {
		d.w.writeBlockHuff(false, d.window[:d.windowEnd])
	} else {
		d.w.writeBlockDynamic(d.tokens, false, d.window[:d.windowEnd])
	}
	d.err = d.w.err
	d.windowEnd = 0
}

func (d *Writer) writeStoredBlock(buf []byte) error {
	if d.w.writeStoredHeader(len(buf), false); d.w.err != nil {
		return d.w.err
	}
	d.w.writeBytes(buf)
	return d.w.err
}
