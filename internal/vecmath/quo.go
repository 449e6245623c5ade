package vecmath

// Quo sets dst[i] = x[i] / y[i] for every i of x, bit for bit as Go's
// division: IEEE 754 division is correctly rounded, so four lanes of
// VDIVPD give the bits one DIVSD gives, NaNs included (both return the
// dividend's NaN, quieted, when it is one, else the divisor's, and the
// default NaN for 0/0 and ∞/∞). dst may be x or y; dst and y must be at
// least as long as x.
func Quo(dst, x, y []float64) {
	dst, y = dst[:len(x)], y[:len(x)]
	n := 0
	if useAVX2 {
		n = len(x) &^ 3
		quoAVX2(dst[:n], x[:n], y[:n])
	}
	for i := n; i < len(x); i++ {
		dst[i] = x[i] / y[i]
	}
}

// QuoBy sets dst[i] = x[i] / c for every i of x, bit for bit as Go's
// division (see Quo). dst may be x; it must be at least as long as x.
func QuoBy(dst, x []float64, c float64) {
	dst = dst[:len(x)]
	n := 0
	if useAVX2 {
		n = len(x) &^ 3
		quoByAVX2(dst[:n], x[:n], c)
	}
	for i := n; i < len(x); i++ {
		dst[i] = x[i] / c
	}
}
