package vecmath

import "math"

// Log10Quo sets dst[i] = math.Log10(x[i] / y[i]) for every i of x, bit for
// bit (the quotient rounded as Go's division, see Quo, then its logarithm as
// Log10), and reports whether every value it set is finite: Quo, Log10 and
// a check of the result in one pass, each quotient and logarithm still in
// a register. dst may be x or y; dst and y must be at least as long as x.
func Log10Quo(dst, x, y []float64) (finite bool) {
	dst, y = dst[:len(x)], y[:len(x)]
	n8, n := lanes(len(x))
	finite = true
	if n8 > 0 {
		finite = log10QuoAVX512(dst[:n8], x[:n8], y[:n8])
	}
	if n > n8 {
		finite = log10QuoAVX2(dst[n8:n], x[n8:n], y[n8:n]) && finite
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
	n8, n := lanes(len(x))
	finite = true
	if n8 > 0 {
		finite = log10QuoMaxAVX512(dst[:n8], x[:n8], y[:n8], top[:n8])
	}
	if n > n8 {
		finite = log10QuoMaxAVX2(dst[n8:n], x[n8:n], y[n8:n], top[n8:n]) && finite
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
