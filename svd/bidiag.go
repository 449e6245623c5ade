package svd

import (
	"math"

	"gonum.org/v1/gonum/blas"
	lapackgonum "gonum.org/v1/gonum/lapack/gonum"
)

// bidiagonalize reduces the p × p row-major matrix a to upper bidiagonal
// form B = Qᵀ A P by Householder reflections from alternate sides, the
// steps of LAPACK's unblocked Dgebd2 for m = n (Golub & Kahan, SIAM J.
// Numer. Anal. B 2, 1965; Golub & Van Loan, Matrix Computations, 4th ed.
// 2013, algorithm 5.4.2): the diagonal into d (p), the superdiagonal into
// e (p − 1). work holds at least p values. The reflectors are applied by
// gonum's Dlarf, as Dgebd2 does; only their generation differs from
// gonum's Dlarfg (see reflector), so the bidiagonal is Dgebd2's to
// rounding, not to the bit.
//
// a's largest |entry| must lie in [1e−100, 1e100] (squareValues.bidiagonal
// sees to it): every sum of squares a reflector forms then stays far from
// overflow, and one that falls below reflectorSafe is left to Dlarfg's
// scaled norm.
func bidiagonalize(p int, a, d, e, work []float64) {
	var impl lapackgonum.Implementation
	for i := 0; i < p; i++ {
		// H_i annihilates A[i+1:p, i] (a column: stride p).
		var tq float64
		a[i*p+i], tq = reflector(p-i, a[i*p+i], a[min(i+1, p-1)*p+i:], p)
		d[i] = a[i*p+i]
		if i == p-1 {
			break
		}
		a[i*p+i] = 1
		impl.Dlarf(blas.Left, p-i, p-i-1, a[i*p+i:], p, tq, a[i*p+i+1:], p, work)
		a[i*p+i] = d[i]
		// G_i annihilates A[i, i+2:p] (a row: stride 1).
		var tp float64
		a[i*p+i+1], tp = reflector(p-i-1, a[i*p+i+1], a[i*p+min(i+2, p-1):], 1)
		e[i] = a[i*p+i+1]
		a[i*p+i+1] = 1
		impl.Dlarf(blas.Right, p-i-1, p-i-1, a[i*p+i+1:], 1, tp, a[(i+1)*p+i+1:], p, work)
		a[i*p+i+1] = e[i]
	}
}

// reflectorSafe bounds the sums of squares reflector forms itself: below
// it (or at +Inf, NaN) the generation is left to Dlarfg, whose scaled norm
// and rescaling loop keep tiny entries exact.
const reflectorSafe = 1e-250

// reflector is gonum's Dlarfg (LAPACK's DLARFG): the elementary reflector
// H = I − τ (1, v)(1, v)ᵀ with H (α, x) = (β, 0), v written over x (n − 1
// values at stride inc). It takes ‖x‖ as the square root of a plain sum of
// squares and β as −sign(α)·√(α² + ‖x‖²), where Dlarfg forms ‖x‖ by the
// scaled recurrence of Dnrm2 (a division per entry) and β by math.Hypot:
// the same quantities to within a few ulps (Higham, Accuracy and Stability
// of Numerical Algorithms, 2nd ed. 2002, §3.1 and §27.5), and a Householder
// reduction from either is backward stable alike (Golub & Van Loan §5.1.3).
// Over EFA's 47 reflectors a window the divisions were two thirds of the
// reduction's time (docs/performance-history.md, twenty-fourth round).
func reflector(n int, alpha float64, x []float64, inc int) (beta, tau float64) {
	if n <= 1 {
		return alpha, 0
	}
	var s0, s1 float64 // two chains of additions, each in index order
	i, last := 0, (n-2)*inc
	for ; i+inc <= last; i += 2 * inc {
		s0 += x[i] * x[i]
		s1 += x[i+inc] * x[i+inc]
	}
	if i <= last {
		s0 += x[i] * x[i]
	}
	ss := s0 + s1
	if ss == 0 {
		return alpha, 0 // Dlarfg's case xnorm = 0: H = I
	}
	if !(ss >= reflectorSafe && ss <= math.MaxFloat64) {
		var impl lapackgonum.Implementation
		return impl.Dlarfg(n, alpha, x, inc)
	}
	beta = -math.Copysign(math.Sqrt(alpha*alpha+ss), alpha)
	tau = (beta - alpha) / beta
	scale := 1 / (alpha - beta)
	for i := 0; i <= last; i += inc {
		x[i] *= scale
	}
	return beta, tau
}
