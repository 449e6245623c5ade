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
	maxEval, stall := o.maxEval, o.stall
	n := len(x0)
	x := append([]float64(nil), x0...)
	g := make([]float64, n)
	fx := f.value(x)
	f.gradient(g)
	evals := 1
	h := make([]float64, n*n) // inverse Hessian, row-major
	resetH := func() {
		for i := range h {
			h[i] = 0
		}
		// Scale the first step so it moves about 1 % of the way to f = 0
		// along the gradient, a unit-free start (common practice).
		gn := math.Sqrt(dot(g, g))
		sc := 1.0
		if gn > 0 {
			sc = 0.01 / gn
		}
		for i := 0; i < n; i++ {
			h[i*n+i] = sc
		}
	}
	resetH()
	d := make([]float64, n)
	xn := make([]float64, n)
	gn := make([]float64, n)
	s := make([]float64, n)
	y := make([]float64, n)
	hy := make([]float64, n)
	stalled := 0
	fresh := true // h was just reset
	converged := false
	for evals < maxEval {
		for i := 0; i < n; i++ {
			v := 0.0
			for j := 0; j < n; j++ {
				v -= h[i*n+j] * g[j]
			}
			d[i] = v
		}
		slope := dot(d, g)
		if !(slope < 0) {
			// No descent direction even along the gradient: a zero
			// gradient (this point is as good as it gets, converged) or
			// a non-finite one (nothing is known there, not converged).
			if fresh {
				converged = dot(g, g) == 0
				break
			}
			resetH()
			fresh = true
			continue
		}
		fresh = false
		step, accepted := 1.0, false
		var fn float64
		for ls := 0; ls < 40 && evals < maxEval; ls++ {
			for i := range xn {
				xn[i] = x[i] + step*d[i]
			}
			fn = f.value(xn)
			evals++
			if fn <= fx+1e-4*step*slope {
				f.gradient(gn)
				accepted = true
				break
			}
			step = nextStep(step, slope, fx, fn, false)
		}
		if !accepted {
			converged = evals < maxEval
			break
		}
		for i := 0; i < n; i++ {
			s[i] = xn[i] - x[i]
			y[i] = gn[i] - g[i]
		}
		rel := math.Abs(fx-fn) / math.Max(math.Abs(fx), 1e-300)
		copy(x, xn)
		copy(g, gn)
		fx = fn
		if rel < stall {
			stalled++
			if stalled >= 3 {
				converged = true
				break
			}
		} else {
			stalled = 0
		}
		if math.Sqrt(dot(g, g)) < 1e-14 {
			converged = true
			break
		}
		sy := dot(s, y)
		if sy <= 1e-300 {
			continue
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
	return x, fx, evals, converged
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
