package vecmath

import "math"

// ScaleObserved sets, for every i of o, o[i] = a·w[i]·o[i] where o[i] is
// positive and finite, and a NaN elsewhere (its payload unspecified), each
// product rounded as Go rounds (a·w[i])·o[i]; it returns the largest value set that
// is above 0 (0 when none is) and whether any value set is NaN. It is the
// noise model's scale pass over a stretch of a row without blind channels:
// the variances left out of a fit marked, their products with the weights
// formed, and those products' bound taken, in one pass where three loops
// made three. A maximum of values without NaN is the same in any order
// (products of positive numbers are never −0), so lanes give the loop's
// answer. w must be at least as long as o.
func ScaleObserved(o, w []float64, a float64) (peak float64, nan bool) {
	w = w[:len(o)]
	n := 0
	if useAVX512 {
		n = len(o) &^ 7
		if n > 0 {
			peak, nan = scaleObservedAVX512(o[:n], w[:n], a)
		}
	}
	inf, qnan := math.Inf(1), math.NaN()
	for i, v := range o[n:] {
		t := a * w[n+i] * v
		if !(v > 0 && v < inf) {
			//lint:ignore SA4012 a NaN formed as the vector lanes form it (the product with qnan), not compared
			t = a * w[n+i] * qnan
		}
		o[n+i] = t
		if t > peak {
			peak = t
		} else if t != t {
			nan = true
		}
	}
	return peak, nan
}
