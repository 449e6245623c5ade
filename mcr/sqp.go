package mcr

import "math"

// constrainedObjective is a problem minimiseSQP solves: minimise g(x)
// subject to one inequality c(x) ≤ 0. evaluate gives g and c at x (ok =
// false where they are not defined); gradients then gives both gradients
// at the x of the last evaluate.
type constrainedObjective interface {
	evaluate(x []float64) (g, c float64, ok bool)
	gradients(gg, gc []float64)
}

// sqpOptions are minimiseSQP's settings: the evaluations it may use, the
// accuracy tol asked of g and the excess feas of c above zero still taken
// as on the boundary (see minimiseSQP; 0 means tol).
type sqpOptions struct {
	maxEval int
	tol     float64
	feas    float64
}

// sqpResult is where minimiseSQP stopped: the point, g and c there, the
// evaluations used, and whether the stopping test held there (converged)
// rather than the budget or a failed line search ending the search.
type sqpResult struct {
	x         []float64
	g, c      float64
	evals     int
	converged bool
}

// minimiseSQP minimises g subject to c ≤ 0 by sequential quadratic
// programming with a damped BFGS model of the Lagrangian's Hessian and a
// line search on the ℓ₁ merit function g + ν·max(0, c) (Nocedal & Wright,
// Numerical Optimization, 2nd ed. 2006, algorithm 18.3, procedure 18.2 for
// the damping). ν is kept above the step's multiplier λ (raised to 2λ
// whenever it falls below 1.1λ): then the merit's slope along d is at most
// −dᵀBd − (ν − λ)·max(0, c) < 0 (their theorem 18.2), so the line search
// can always lower it. With one constraint the quadratic
// programme min ∇gᵀd + ½dᵀBd subject to c + ∇cᵀd ≤ 0 has a closed-form
// solution: d = −B⁻¹∇g when that keeps the linearised constraint, else
// d = −B⁻¹(∇g + λ∇c) with λ = (c − ∇cᵀB⁻¹∇g)/(∇cᵀB⁻¹∇c) > 0.
//
// It stops, converged, when the step it would take next promises less
// than tol: |∇gᵀd| + λ|c| ≤ tol, the first-order change of g to the
// constrained minimum (∇gᵀd along the step; λ|c| for putting c back to
// zero, λ being the minimum's sensitivity to c), with c ≤ feas. The sum
// is at least dᵀBd (with the constraint active ∇gᵀd = −dᵀBd + λc), so the
// test cannot pass while the model still asks for a long step. Without it
// the search ends on its budget or when the line search finds no
// decrease (converged false).
//
// Why not the penalty function and BFGS: the extreme of a range within
// the noise lies on the boundary of the allowance, and a quadratic
// penalty there is a narrow curved valley whose Hessian jumps by the
// penalty's weight where the penalty switches on; BFGS zigzags across it
// and its steps shrink to the valley's width (docs/performance-history.md). SQP
// follows the boundary through its linearisation instead.
func minimiseSQP(f constrainedObjective, x0 []float64, o sqpOptions) sqpResult {
	var sq sqpSearch
	if !sq.start(f, x0) {
		return sq.result(false)
	}
	first := true // B was just reset
	feas := o.feas
	if feas <= 0 {
		feas = o.tol
	}
	for {
		sq.factorModel()
		lambda := sq.setStep()
		gd := dot(sq.gg, sq.d)
		if math.Abs(gd)+lambda*math.Abs(sq.c) <= o.tol && sq.c <= feas {
			return sq.result(true)
		}
		if sq.evals >= o.maxEval {
			break
		}
		if sq.nu < 1.1*lambda {
			sq.nu = 2 * lambda
		}
		phi := sq.g + sq.nu*math.Max(0, sq.c)
		slope := gd - sq.nu*math.Max(0, sq.c) // directional derivative of the merit
		if !(slope < 0) {
			// No descent for the merit along d (B badly scaled, or x
			// already as good as the model can tell): one restart from
			// the gradient's scale, then give up.
			if first {
				break
			}
			sq.resetModel()
			first = true
			continue
		}
		gNew, cNew, accepted := sq.lineSearch(phi, slope, o.maxEval)
		if !accepted {
			break
		}
		first = false
		sq.moveTo(gNew, cNew, lambda)
	}
	return sq.result(false)
}

// sqpSearch is what minimiseSQP's steps share: the point with g, c and
// their gradients there, the model B of the Lagrangian's Hessian and its
// Cholesky factor, the merit's weight ν, and work vectors allocated once
// for the whole search.
type sqpSearch struct {
	f      constrainedObjective
	n      int
	x      []float64 // the current point
	g, c   float64   // g and c at x
	gg, gc []float64 // their gradients at x
	evals  int       // evaluations so far
	bm     []float64 // B, row-major n × n
	chol   []float64 // its Cholesky factor
	nu     float64   // the ℓ₁ merit's weight ν
	p, q   []float64 // B⁻¹∇g and B⁻¹∇c
	d      []float64 // the step of the quadratic programme
	xn     []float64 // the line search's trial point
	// ggn and gcn are the gradients at the accepted trial point; s the
	// step taken, y the Lagrangian's gradient's change, bs = B s.
	ggn, gcn, s, y, bs []float64
}

// start evaluates g and c at x0 and, where they are defined, their
// gradients and the first model B; false where they are not. (sq is
// filled in place, not returned, so that it stays on the caller's stack.)
func (sq *sqpSearch) start(f constrainedObjective, x0 []float64) bool {
	n := len(x0)
	*sq = sqpSearch{f: f, n: n, x: append([]float64(nil), x0...)}
	var ok bool
	sq.g, sq.c, ok = f.evaluate(sq.x)
	sq.evals = 1
	if !ok {
		return false
	}
	sq.gg, sq.gc = make([]float64, n), make([]float64, n)
	f.gradients(sq.gg, sq.gc)
	sq.bm = make([]float64, n*n)
	sq.chol = make([]float64, n*n)
	sq.resetModel()
	sq.p, sq.q, sq.d = make([]float64, n), make([]float64, n), make([]float64, n)
	sq.xn, sq.ggn, sq.gcn = make([]float64, n), make([]float64, n), make([]float64, n)
	sq.s, sq.y, sq.bs = make([]float64, n), make([]float64, n), make([]float64, n)
	return true
}

// result is where the search stands.
func (sq *sqpSearch) result(converged bool) sqpResult {
	return sqpResult{x: sq.x, g: sq.g, c: sq.c, evals: sq.evals, converged: converged}
}

// resetModel sets B to a multiple of I whose step moves x by 0.01 (the
// rotation's entries are of order 1): a unit-free start.
func (sq *sqpSearch) resetModel() {
	scale := math.Max(math.Sqrt(dot(sq.gg, sq.gg)), 1e-8) / 0.01
	clear(sq.bm)
	for i := 0; i < sq.n; i++ {
		sq.bm[i*sq.n+i] = scale
	}
}

// factorModel factors B, first resetting it when rounding has left it not
// positive definite.
func (sq *sqpSearch) factorModel() {
	if !sqpCholesky(sq.bm, sq.chol, sq.n) {
		sq.resetModel()
		sqpCholesky(sq.bm, sq.chol, sq.n)
	}
}

// setStep sets d to the quadratic programme's solution in closed form and
// returns its multiplier λ: d = −B⁻¹∇g when that keeps the linearised
// constraint (λ = 0), else d = −B⁻¹(∇g + λ∇c) on its boundary.
func (sq *sqpSearch) setStep() float64 {
	p, q, d, gc, c := sq.p, sq.q, sq.d, sq.gc, sq.c
	sqpCholSolve(sq.chol, sq.gg, p, sq.n) // B⁻¹∇g
	sqpCholSolve(sq.chol, gc, q, sq.n)    // B⁻¹∇c
	lambda := 0.0
	for i := range d {
		d[i] = -p[i]
	}
	if cq := dot(gc, q); c+dot(gc, d) > 0 && cq > 0 {
		lambda = (c - dot(gc, p)) / cq
		for i := range d {
			d[i] = -p[i] - lambda*q[i]
		}
	}
	return lambda
}

// lineSearch backtracks along d from a unit step, interpolating, until the
// merit g + ν·max(0, c) meets the Armijo condition from phi with the given
// slope (a point where g or c is not defined counts as +∞). It returns g
// and c at the point accepted (in xn) and whether one was, within 40
// trials and the budget.
func (sq *sqpSearch) lineSearch(phi, slope float64, maxEval int) (gNew, cNew float64, accepted bool) {
	x, d, xn := sq.x, sq.d, sq.xn
	step := 1.0
	for ls := 0; ls < 40 && sq.evals < maxEval; ls++ {
		for i := range xn {
			xn[i] = x[i] + step*d[i]
		}
		var okNew bool
		gNew, cNew, okNew = sq.f.evaluate(xn)
		sq.evals++
		phiNew := math.Inf(1)
		if okNew {
			phiNew = gNew + sq.nu*math.Max(0, cNew)
		}
		if phiNew <= phi+1e-4*step*slope {
			return gNew, cNew, true
		}
		step = nextStep(step, slope, phi, phiNew, true)
	}
	return gNew, cNew, false
}

// moveTo makes the accepted trial point (g and c there gNew, cNew) the
// current one, updating B with the step and the change of the
// Lagrangian's gradient at the step's multiplier lambda.
func (sq *sqpSearch) moveTo(gNew, cNew, lambda float64) {
	sq.f.gradients(sq.ggn, sq.gcn)
	for i := 0; i < sq.n; i++ {
		sq.s[i] = sq.xn[i] - sq.x[i]
		// ∇ of the Lagrangian g + λc at the new point less at the old.
		sq.y[i] = sq.ggn[i] + lambda*sq.gcn[i] - sq.gg[i] - lambda*sq.gc[i]
	}
	dampedBFGS(sq.bm, sq.s, sq.y, sq.bs, sq.n)
	copy(sq.x, sq.xn)
	copy(sq.gg, sq.ggn)
	copy(sq.gc, sq.gcn)
	sq.g, sq.c = gNew, cNew
}

// dampedBFGS updates B with the step s and the change y of the
// Lagrangian's gradient, y replaced by θy + (1 − θ)Bs where sᵀy < 0.2·sᵀBs
// so that B stays positive definite (Powell's damping; Nocedal & Wright,
// procedure 18.2).
func dampedBFGS(bm, s, y, bs []float64, n int) {
	for i := 0; i < n; i++ {
		v := 0.0
		for j := 0; j < n; j++ {
			v += bm[i*n+j] * s[j]
		}
		bs[i] = v
	}
	sbs, sy := dot(s, bs), dot(s, y)
	if !(sbs > 0) {
		return
	}
	if sy < 0.2*sbs {
		th := 0.8 * sbs / (sbs - sy)
		for i := range y {
			y[i] = th*y[i] + (1-th)*bs[i]
		}
		sy = dot(s, y)
	}
	if !(sy > 0) {
		return
	}
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			bm[i*n+j] += -bs[i]*bs[j]/sbs + y[i]*y[j]/sy
		}
	}
}

// sqpCholesky factors the symmetric n × n matrix a as L Lᵀ into l (lower
// triangle, row-major); false when a is not positive definite.
func sqpCholesky(a, l []float64, n int) bool {
	clear(l)
	for j := 0; j < n; j++ {
		s := a[j*n+j]
		for k := 0; k < j; k++ {
			s -= l[j*n+k] * l[j*n+k]
		}
		if !(s > 0) {
			return false
		}
		l[j*n+j] = math.Sqrt(s)
		for i := j + 1; i < n; i++ {
			t := a[i*n+j]
			for k := 0; k < j; k++ {
				t -= l[i*n+k] * l[j*n+k]
			}
			l[i*n+j] = t / l[j*n+j]
		}
	}
	return true
}

// sqpCholSolve sets x to the solution of L Lᵀ x = b.
func sqpCholSolve(l, b, x []float64, n int) {
	for i := 0; i < n; i++ {
		s := b[i]
		for k := 0; k < i; k++ {
			s -= l[i*n+k] * x[k]
		}
		x[i] = s / l[i*n+i]
	}
	for i := n - 1; i >= 0; i-- {
		s := x[i]
		for k := i + 1; k < n; k++ {
			s -= l[k*n+i] * x[k]
		}
		x[i] = s / l[i*n+i]
	}
}
