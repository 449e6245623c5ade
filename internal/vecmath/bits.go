package vecmath

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// SameBits reports whether a and b have the same length and the same bits
// at every index: −0 differs from +0 and a NaN equals a NaN of the same
// payload, unlike ==, which is what "byte-identical results" needs.
func SameBits(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			return false
		}
	}
	return true
}

// SameBitsMatrix is SameBits for two matrices: the same dimensions and the
// same bits in every entry.
func SameBitsMatrix(a, b mat.Matrix) bool {
	r, c := a.Dims()
	if rb, cb := b.Dims(); rb != r || cb != c {
		return false
	}
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			if math.Float64bits(a.At(i, j)) != math.Float64bits(b.At(i, j)) {
				return false
			}
		}
	}
	return true
}
