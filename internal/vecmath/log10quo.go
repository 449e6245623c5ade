package vecmath

import "math"

// Log10Quo sets dst[i] = math.Log10(x[i] / y[i]) for every i of x, bit for
// bit (the quotient rounded as Go's division, see Quo, then its logarithm as
// Log10), and reports whether every value it set is finite: Quo, Log10 and
// a check of the result in one pass, each quotient and logarithm still in
// a register. dst may be x or y; dst and y must be at least as long as x.
func Log10Quo(dst, x, y []float64) (finite bool) {
	dst, y = dst[:len(x)], y[:len(x)]
	n, finite := 0, true
	if useAVX2 {
		n = len(x) &^ 3
		finite = log10QuoAVX2(dst[:n], x[:n], y[:n])
	}
	for i := n; i < len(x); i++ {
		v := math.Log10(x[i] / y[i])
		dst[i] = v
		finite = finite && v-v == 0
	}
	return finite
}

// Log10QuoMax is Log10Quo that also raises top[i] to dst[i] wherever
// dst[i] > top[i] (a NaN never raises it); top must be as long as x.
func Log10QuoMax(dst, x, y, top []float64) (finite bool) {
	dst, y, top = dst[:len(x)], y[:len(x)], top[:len(x)]
	n, finite := 0, true
	if useAVX2 {
		n = len(x) &^ 3
		finite = log10QuoMaxAVX2(dst[:n], x[:n], y[:n], top[:n])
	}
	for i := n; i < len(x); i++ {
		v := math.Log10(x[i] / y[i])
		dst[i] = v
		finite = finite && v-v == 0
		if v > top[i] {
			top[i] = v
		}
	}
	return finite
}
