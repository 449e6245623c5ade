// Package pvalue gives the upper-tail probabilities bandsolve's tests report
// and the words they are printed with.
//
// An upper tail taken as 1 − CDF loses everything below the rounding of 1:
// a drop far above the noise came out as p = 0 or 1.1·10⁻¹⁶, figures no
// distribution gives. The tails here are computed as tails, by the
// regularized incomplete beta and gamma functions (gonum's mathext), and so
// keep their relative accuracy down to the smallest normal float64; below
// that they are 0, printed as "p < 1e-300".
package pvalue

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mathext"
)

// FUpper is P(F > f) for Fisher's F with d1 and d2 degrees of freedom:
// I_x(d2/2, d1/2) at x = d2/(d2 + d1·f), the regularized incomplete beta
// function (Abramowitz & Stegun 26.6.2, from memory; the same identity as
// the CDF's, taken from the other end). 1 for f ≤ 0, NaN for d1 or d2 ≤ 0.
func FUpper(f, d1, d2 float64) float64 {
	if !(d1 > 0 && d2 > 0) || math.IsNaN(f) {
		return math.NaN()
	}
	if f <= 0 {
		return 1
	}
	if math.IsInf(f, 1) {
		return 0
	}
	// RegIncBeta (Cephes' incbet) computes I_x from this end whenever x is
	// below the mean d2/(d1 + d2), that is for every f > 1: the tail itself,
	// not 1 minus the CDF, as Cephes' own fdtrc does.
	x := d2 / (d2 + d1*f)
	return mathext.RegIncBeta(d2/2, d1/2, x)
}

// Smallest is the least p printed as a number; smaller ones, and 0 where a
// tail underflowed, are printed "p < 1e-300".
const Smallest = 1e-300

// Text is p as a report says it: "p = 0.032", "p = 4.7e-08", "p < 1e-300".
func Text(p float64) string {
	if p < Smallest {
		return "p < 1e-300"
	}
	return fmt.Sprintf("p = %.2g", p)
}
