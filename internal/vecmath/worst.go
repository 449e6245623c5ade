package vecmath

import "math"

// WorstOffset returns the largest |a[i] − g[i] − b[i]| over the i of g,
// each formed as (a[i] − g[i]) − b[i] as Go forms it, the NaNs left out
// (a NaN is larger than nothing): +0 when g is empty or every value is NaN.
// A maximum is the same whatever order it is taken in, and an absolute
// value has no sign to lose, so four lanes at a time on amd64 with AVX2
// give the value one at a time gives. a and b must be at least as long as
// g.
func WorstOffset(a, b, g []float64) float64 {
	a, b = a[:len(g)], b[:len(g)]
	worst := 0.0
	n := 0
	if useAVX2 {
		n = len(g) &^ 3
		if n > 0 {
			worst = worstOffsetAVX2(a[:n], b[:n], g[:n])
		}
	}
	for j := n; j < len(g); j++ {
		if x := math.Abs(a[j] - g[j] - b[j]); x > worst {
			worst = x
		}
	}
	return worst
}

// MaxAbs returns the largest |x[i]|, the NaNs left out: +0 when x is empty
// or all NaN. Four lanes at a time on amd64 with AVX2, the same value (see
// WorstOffset).
func MaxAbs(x []float64) float64 {
	mx := 0.0
	n := 0
	if useAVX2 {
		n = len(x) &^ 3
		if n > 0 {
			mx = maxAbsAVX2(x[:n])
		}
	}
	for _, v := range x[n:] {
		if a := math.Abs(v); a > mx {
			mx = a
		}
	}
	return mx
}
