package vecmath

import "math"

// QuoSquares sets, for every i of x, with q = x[i]/y[i] and r = q·q,
//
//	d[i] = (r + e[i]) / c,   a[i] = r / c,
//
// each operation rounded on its own as Go rounds it (no fused multiply-add;
// the divisions as Quo's): the squared relative noise of a single beam
// with and without a fixed share e, over c, in one pass where Quo, a loop
// and QuoBy over both made three. d, a, y and e must be at least as long
// as x; d and a must not overlap x, y or e.
func QuoSquares(d, a, x, y, e []float64, c float64) {
	quoSquares(d, a, x, y, e, c, false)
}

// LogQuoSquares is QuoSquares followed by math.Log of every d[i] and a[i],
// bit for bit (see Log), the values never leaving the registers between,
// and reports whether every logarithm it set is finite (checked there too,
// as Log10Quo checks its values).
func LogQuoSquares(d, a, x, y, e []float64, c float64) (finite bool) {
	return quoSquares(d, a, x, y, e, c, true)
}

func quoSquares(d, a, x, y, e []float64, c float64, logs bool) (finite bool) {
	d, a, y, e = d[:len(x)], a[:len(x)], y[:len(x)], e[:len(x)]
	n8, n := lanes(len(x))
	finite = true
	if n8 > 0 {
		finite = quoSquaresAVX512(d[:n8], a[:n8], x[:n8], y[:n8], e[:n8], c, logs)
	}
	if n > n8 {
		finite = quoSquaresAVX2(d[n8:n], a[n8:n], x[n8:n], y[n8:n], e[n8:n], c, logs) && finite
	}
	for i := n; i < len(x); i++ {
		q := x[i] / y[i]
		r := q * q
		dv, av := (r+e[i])/c, r/c
		if logs {
			dv, av = math.Log(dv), math.Log(av)
		}
		d[i], a[i] = dv, av
		finite = finite && dv-dv == 0 && av-av == 0
	}
	return finite
}
