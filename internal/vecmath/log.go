package vecmath

import "math"

// Log sets dst[i] = math.Log(src[i]) for every i, bit for bit. dst and src
// may be the same slice; dst must be at least as long as src.
func Log(dst, src []float64) {
	dst = dst[:len(src)]
	n8, n := lanes(len(src))
	if n8 > 0 {
		logAVX512(dst[:n8], src[:n8])
	}
	if n > n8 {
		logAVX2(dst[n8:n], src[n8:n])
	}
	for i := n; i < len(src); i++ {
		dst[i] = math.Log(src[i])
	}
}

// lanes splits a length n among the vector kernels: the eight-lane ones
// take [0, n8), the four-lane ones [n8, n4) (at most four values, or all
// of [0, n4) without AVX-512), Go's loop the rest.
func lanes(n int) (n8, n4 int) {
	if useAVX512 {
		n8 = n &^ 7
	}
	if useAVX2 {
		n4 = n8 + (n-n8)&^3
	}
	return n8, n4
}

// Log10 sets dst[i] = math.Log10(src[i]) for every i, bit for bit. dst and
// src may be the same slice; dst must be at least as long as src.
func Log10(dst, src []float64) {
	dst = dst[:len(src)]
	n := 0
	if useAVX2 {
		n = len(src) &^ 3
		log10AVX2(dst[:n], src[:n])
	}
	for i := n; i < len(src); i++ {
		dst[i] = math.Log10(src[i])
	}
}
