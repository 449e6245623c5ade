package deflate

import (
	"bytes"
	"compress/flate"
	"fmt"
	"io"
	"math/rand/v2"
	"testing"
)

// inputs are test streams of the kinds a deflater meets: PNG-like rows
// (mostly zeros with scattered runs), text-like bytes from a small
// alphabet, incompressible noise, long runs of one byte, periodic data at
// offsets up to and past the 32 kB window, and short ones at the edges of
// the encoder's special cases (0, 1–16 bytes stored, under 128
// Huffman-coded alone), lengths around the 65 535-byte block.
func inputs(rng *rand.Rand) map[string][]byte {
	out := map[string][]byte{}
	for _, n := range []int{0, 1, 2, 15, 16, 17, 100, 127, 128, 129, 1000, 65534, 65535, 65536, 65537, 131070, 200000, 1 << 20} {
		rows := make([]byte, n)
		for i := 0; i < n; {
			run := 1 + rng.IntN(30)
			if rng.IntN(4) == 0 {
				for k := i; k < min(n, i+run); k++ {
					rows[k] = byte(rng.IntN(256))
				}
			}
			i += run + rng.IntN(2000)
		}
		out[fmt.Sprintf("rows %d", n)] = rows
		text := make([]byte, n)
		for i := range text {
			text[i] = "etaoin shrdlu,.\n"[min(rng.IntN(16), rng.IntN(16))]
		}
		out[fmt.Sprintf("text %d", n)] = text
		noise := make([]byte, n)
		for i := range noise {
			noise[i] = byte(rng.Uint32())
		}
		out[fmt.Sprintf("noise %d", n)] = noise
		out[fmt.Sprintf("run %d", n)] = bytes.Repeat([]byte{7}, n)
		for _, period := range []int{3, 257, 30000, 33000} {
			p := make([]byte, n)
			for i := range p {
				if i < period {
					p[i] = byte(rng.Uint32())
				} else {
					p[i] = p[i-period]
					if rng.IntN(500) == 0 {
						p[i]++
					}
				}
			}
			out[fmt.Sprintf("period %d, %d", period, n)] = p
		}
	}
	return out
}

// Writer's stream is compress/flate's at BestSpeed (the Go library, the
// reference), byte for byte, for every input, written whole and in pieces
// of random lengths, with one Writer reset between streams as the PNG
// encoder uses it.
func TestSameAsCompressFlate(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	var got bytes.Buffer
	d := NewWriter(&got)
	for name, in := range inputs(rng) {
		var want bytes.Buffer
		fw, err := flate.NewWriter(&want, flate.BestSpeed)
		if err != nil {
			t.Fatal(err)
		}
		fw.Write(in)
		if err := fw.Close(); err != nil {
			t.Fatal(err)
		}
		for _, pieces := range []bool{false, true} {
			got.Reset()
			d.Reset(&got)
			rest := in
			for len(rest) > 0 {
				k := len(rest)
				if pieces {
					k = min(k, 1+rng.IntN(5000))
				}
				if n, err := d.Write(rest[:k]); n != k || err != nil {
					t.Fatalf("%s: wrote %d of %d (%v)", name, n, k, err)
				}
				rest = rest[k:]
			}
			if err := d.Close(); err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(got.Bytes(), want.Bytes()) {
				t.Errorf("%s, in pieces %v: %d bytes, compress/flate %d", name, pieces, got.Len(), want.Len())
			}
		}
		back, err := io.ReadAll(flate.NewReader(bytes.NewReader(got.Bytes())))
		if err != nil || !bytes.Equal(back, in) {
			t.Errorf("%s: does not inflate back (%v)", name, err)
		}
	}
}
