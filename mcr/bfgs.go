package mcr

import "math"

// minimiseBFGS minimises f from x0 by the BFGS quasi-Newton method with an
// Armijo backtracking line search (Nocedal & Wright, Numerical Optimization,
// 2nd ed. 2006, algorithm 6.1 and §3.1). It is small on purpose: the band
// searches have at most k(k−1) ≤ 30 unknowns, and a local implementation
// keeps the arithmetic order fixed (deterministic) and the dependency set
// to gonum's mat. The inverse-Hessian update is skipped when the curvature
// condition sᵀy > 0 fails, which keeps the approximation positive definite.
// It returns the best point, its value, the function evaluations used and
// whether it converged (below).
//
// It stops when three iterations in a row lower f by less than stall
// relative to |f| (a stalled search), when the gradient vanishes, when the
// line search finds no decrease, or after maxEval evaluations. The first
// three count as converged: a local minimum to the stall's accuracy, or to
// rounding where no step along a descent direction lowers f; the budget
// does not, nor a gradient that is not finite.
//
// The gradient is asked for only at the points the line search accepts
// (f.gradient after f.value there): Armijo backtracking decides on values
// alone, and on the range searches it rejects more trial points than it
// accepts.
func minimiseBFGS(f smoothObjective, x0 []float64, o bfgsOptions) ([]float64, float64, int, bool) {
	var b bfgsSearch
	b.start(f, x0)
	converged := false
	for b.evals < o.maxEval {
		b.setDirection()
		slope := dot(b.d, b.g)
		if !(slope < 0) {
			// No descent direction even along the gradient: a zero
			// gradient (this point is as good as it gets, converged) or
			// a non-finite one (nothing is known there, not converged).
			if b.fresh {
				converged = dot(b.g, b.g) == 0
				break
			}
			b.resetInverseHessian()
			b.fresh = true
			continue
		}
		b.fresh = false
		fn, accepted := b.lineSearch(slope, o.maxEval)
		if !accepted {
			converged = b.evals < o.maxEval
			break
		}
		if b.moveTo(fn, o.stall) {
			converged = true
			break
		}
		b.updateInverseHessian()
	}
	return b.x, b.fx, b.evals, converged
}

// bfgsSearch is what minimiseBFGS's steps share: the current point, its
// value and gradient, the inverse-Hessian approximation, and work vectors
// allocated once for the whole search.
type bfgsSearch struct {
	f     smoothObjective
	n     int
	x, g  []float64 // the current point and its gradient
	fx    float64   // f at x
	evals int       // function evaluations so far
	h     []float64 // inverse Hessian, row-major n × n
	d     []float64 // the search direction −H g
	xn    []float64 // the line search's trial point
	gn    []float64 // the gradient at the accepted trial point
	s, y  []float64 // the step taken and the change in the gradient
	hy    []float64 // H y
	// stalled counts the iterations in a row that lowered f by less than
	// the stall; fresh says h was just reset.
	stalled int
	fresh   bool
}

// start evaluates f and its gradient at x0 and starts from a scaled
// identity. (b is filled in place, not returned, so that it stays on the
// caller's stack.)
func (b *bfgsSearch) start(f smoothObjective, x0 []float64) {
	n := len(x0)
	*b = bfgsSearch{f: f, n: n, x: append([]float64(nil), x0...), g: make([]float64, n)}
	b.fx = f.value(b.x)
	f.gradient(b.g)
	b.evals = 1
	b.h = make([]float64, n*n)
	b.resetInverseHessian()
	b.d = make([]float64, n)
	b.xn = make([]float64, n)
	b.gn = make([]float64, n)
	b.s = make([]float64, n)
	b.y = make([]float64, n)
	b.hy = make([]float64, n)
	b.fresh = true
}

// resetInverseHessian sets H to a multiple of the identity.
func (b *bfgsSearch) resetInverseHessian() {
	h, n := b.h, b.n
	for i := range h {
		h[i] = 0
	}
	// Scale the first step so it moves about 1 % of the way to f = 0
	// along the gradient, a unit-free start (common practice).
	gn := math.Sqrt(dot(b.g, b.g))
	sc := 1.0
	if gn > 0 {
		sc = 0.01 / gn
	}
	for i := 0; i < n; i++ {
		h[i*n+i] = sc
	}
}

// setDirection sets the quasi-Newton direction d = −H g.
func (b *bfgsSearch) setDirection() {
	h, g, n := b.h, b.g, b.n
	for i := 0; i < n; i++ {
		v := 0.0
		for j := 0; j < n; j++ {
			v -= h[i*n+j] * g[j]
		}
		b.d[i] = v
	}
}

// lineSearch backtracks along d from a unit step until the Armijo
// condition holds, asking for the gradient only at the point it accepts
// (into gn). It returns the value there and whether a point was accepted
// within 40 trials and the budget.
func (b *bfgsSearch) lineSearch(slope float64, maxEval int) (float64, bool) {
	x, d, xn := b.x, b.d, b.xn
	step := 1.0
	var fn float64
	for ls := 0; ls < 40 && b.evals < maxEval; ls++ {
		for i := range xn {
			xn[i] = x[i] + step*d[i]
		}
		fn = b.f.value(xn)
		b.evals++
		if fn <= b.fx+1e-4*step*slope {
			b.f.gradient(b.gn)
			return fn, true
		}
		step = nextStep(step, slope, b.fx, fn, false)
	}
	return fn, false
}

// moveTo makes the accepted trial point (value fn) the current one,
// keeping the step and the gradient's change for the update, and says
// whether the search has converged: three stalled iterations in a row, or
// a vanishing gradient.
func (b *bfgsSearch) moveTo(fn, stall float64) bool {
	for i := 0; i < b.n; i++ {
		b.s[i] = b.xn[i] - b.x[i]
		b.y[i] = b.gn[i] - b.g[i]
	}
	rel := math.Abs(b.fx-fn) / math.Max(math.Abs(b.fx), 1e-300)
	copy(b.x, b.xn)
	copy(b.g, b.gn)
	b.fx = fn
	if rel < stall {
		b.stalled++
		if b.stalled >= 3 {
			return true
		}
	} else {
		b.stalled = 0
	}
	return math.Sqrt(dot(b.g, b.g)) < 1e-14
}

// updateInverseHessian applies the BFGS update of H from the last step,
// skipped when the curvature condition sᵀy > 0 fails so that H stays
// positive definite.
func (b *bfgsSearch) updateInverseHessian() {
	h, s, y, hy, n := b.h, b.s, b.y, b.hy, b.n
	sy := dot(s, y)
	if sy <= 1e-300 {
		return
	}
	// H ← (I − ρ s yᵀ) H (I − ρ y sᵀ) + ρ s sᵀ, expanded.
	rho := 1 / sy
	for i := 0; i < n; i++ {
		v := 0.0
		for j := 0; j < n; j++ {
			v += h[i*n+j] * y[j]
		}
		hy[i] = v
	}
	yhy := dot(y, hy)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			h[i*n+j] += -rho*(hy[i]*s[j]+s[i]*hy[j]) + (rho*rho*yhy+rho)*s[i]*s[j]
		}
	}
}

// bfgsOptions are minimiseBFGS's settings: the evaluations it may use and
// the relative decrease below which an iteration counts as stalled.
type bfgsOptions struct {
	maxEval int
	stall   float64
}

// nextStep is the line search's next trial after step was rejected with
// value fn, from fx with the given slope (< 0) along the direction: half
// of it, or with interpolate the minimiser of the quadratic q(0) = fx,
// q'(0) = slope, q(step) = fn, within [step/10, step/2] (Dennis &
// Schnabel, Numerical Methods for Unconstrained Optimization and
// Nonlinear Equations, 1983, §6.3.2; Nocedal & Wright §3.5): where the
// trial value shows the step overshot by far, the next trial comes back in
// one step instead of several halvings. A quadratic without a minimum
// (curvature ≤ 0, or fn not finite) gives half. minimiseBFGS halves (its
// exact-fit stages from the solution interpolated their way into a far
// region of cancelling components on TestBandsWideAndContainTruth's
// data); minimiseSQP interpolates.
func nextStep(step, slope, fx, fn float64, interpolate bool) float64 {
	if !interpolate {
		return step / 2
	}
	next := step / 2
	if curv := 2 * (fn - fx - slope*step); curv > 0 && !math.IsInf(curv, 0) {
		next = -slope * step * step / curv
	}
	return math.Max(step/10, math.Min(step/2, next))
}

// smoothObjective is a function minimiseBFGS minimises: value at x, and
// the gradient at the x of the last value call.
type smoothObjective interface {
	value(x []float64) float64
	gradient(g []float64)
}
