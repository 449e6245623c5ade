package vecmath

import "math"

// AllPositiveFinite reports whether every x[i] is positive and finite
// (0 < x[i] < +Inf; NaN is neither), four at a time with one test for the
// four on amd64 with AVX2.
func AllPositiveFinite(x []float64) bool {
	n := 0
	if useAVX2 {
		n = len(x) &^ 3
		if !allPositiveFiniteAVX2(x[:n]) {
			return false
		}
	}
	inf := math.Inf(1)
	for _, v := range x[n:] {
		if !(v > 0 && v < inf) {
			return false
		}
	}
	return true
}

// RaiseAndStep raises a[i] and b[i] to x[i] wherever x[i] is larger, and
// returns the largest x[i] (−Inf for none) and the smallest positive
// |x[i] − p[i]| (+Inf for none), for x, p, a and b without NaN: maxima and
// a minimum, the same whatever order they are taken in, so four lanes at
// a time give the values one at a time gives. One exception: when the
// largest x[i] is a zero and x holds both −0 and +0, the lanes may return
// +0 where the loop returns the first zero met (−0 > +0 is false either
// way); a and b are raised bit for bit as the loop raises them. The noise
// model passes positive beams. a, b and p must be at least as long as x.
func RaiseAndStep(a, b, x, p []float64) (largest, step float64) {
	a, b, p = a[:len(x)], b[:len(x)], p[:len(x)]
	largest, step = math.Inf(-1), math.Inf(1)
	n := 0
	if useAVX2 {
		n = len(x) &^ 3
		if n > 0 {
			largest, step = raiseAndStepAVX2(a[:n], b[:n], x[:n], p[:n])
		}
	}
	for i := n; i < len(x); i++ {
		v := x[i]
		if v > a[i] {
			a[i] = v
		}
		if v > b[i] {
			b[i] = v
		}
		if v > largest {
			largest = v
		}
		if d := math.Abs(v - p[i]); d > 0 && d < step {
			step = d
		}
	}
	return largest, step
}

// NextAtOrBelow returns the least i with x[i] ≤ a[i] and x[i] < b[i] (both
// comparisons false for NaN), or len(x) when there is none: four values to
// a test on amd64 with AVX2, for a search whose hits are rare. a and b must
// be at least as long as x.
func NextAtOrBelow(x, a, b []float64) int {
	a, b = a[:len(x)], b[:len(x)]
	n := 0
	if useAVX2 {
		n = len(x) &^ 3
		if n > 0 {
			if k := nextAtOrBelowAVX2(x[:n], a[:n], b[:n]); k < n {
				return k
			}
		}
	}
	for i := n; i < len(x); i++ {
		if x[i] <= a[i] && x[i] < b[i] {
			return i
		}
	}
	return len(x)
}
