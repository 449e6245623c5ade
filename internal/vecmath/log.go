package vecmath

import "math"

// Log sets dst[i] = math.Log(src[i]) for every i, bit for bit. dst and src
// may be the same slice; dst must be at least as long as src.
func Log(dst, src []float64) {
	dst = dst[:len(src)]
	n := 0
	if useAVX2 {
		n = len(src) &^ 3
		logAVX2(dst[:n], src[:n])
	}
	for i := n; i < len(src); i++ {
		dst[i] = math.Log(src[i])
	}
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
