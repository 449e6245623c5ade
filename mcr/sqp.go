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

// sqpOptions are minimiseSQP's settings: the evaluations it may use and
// the accuracy tol asked of g (see minimiseSQP).
type sqpOptions struct {
	maxEval int
	tol     float64
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
// zero, λ being the minimum's sensitivity to c), with c ≤ tol. The sum
// is at least dᵀBd (with the constraint active ∇gᵀd = −dᵀBd + λc), so the
// test cannot pass while the model still asks for a long step. Without it
// the search ends on its budget or when the line search finds no
// decrease (converged false).
//
// Why not the penalty function and BFGS: the extreme of a range within
// the noise lies on the boundary of the allowance, and a quadratic
// penalty there is a narrow curved valley whose Hessian jumps by the
// penalty's weight where the penalty switches on; BFGS zigzags across it
// and its steps shrink to the valley's width (docs/performance.md). SQP
// follows the boundary through its linearisation instead.
func minimiseSQP(f constrainedObjective, x0 []float64, o sqpOptions) sqpResult {
	n := len(x0)
	x := append([]float64(nil), x0...)
	g, c, ok := f.evaluate(x)
	evals := 1
	if !ok {
		return sqpResult{x: x, g: g, c: c, evals: evals}
	}
	gg, gc := make([]float64, n), make([]float64, n)
	f.gradients(gg, gc)
	bm := make([]float64, n*n)   // B, row-major
	chol := make([]float64, n*n) // its Cholesky factor
	// B starts as a multiple of I whose step moves x by 0.01 (the
	// rotation's entries are of order 1): a unit-free start.
	resetB := func(scale float64) {
		clear(bm)
		for i := 0; i < n; i++ {
			bm[i*n+i] = scale
		}
	}
	gn := math.Sqrt(dot(gg, gg))
	resetB(math.Max(gn, 1e-8) / 0.01)
	p, q, d := make([]float64, n), make([]float64, n), make([]float64, n)
	xn, ggn, gcn := make([]float64, n), make([]float64, n), make([]float64, n)
	s, y, bs := make([]float64, n), make([]float64, n), make([]float64, n)
	nu := 0.0
	first := true
	for {
		if !sqpCholesky(bm, chol, n) {
			resetB(math.Max(math.Sqrt(dot(gg, gg)), 1e-8) / 0.01)
			sqpCholesky(bm, chol, n)
		}
		sqpCholSolve(chol, gg, p, n) // B⁻¹∇g
		sqpCholSolve(chol, gc, q, n) // B⁻¹∇c
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
		gd := dot(gg, d)
		if math.Abs(gd)+lambda*math.Abs(c) <= o.tol && c <= o.tol {
			return sqpResult{x: x, g: g, c: c, evals: evals, converged: true}
		}
		if evals >= o.maxEval {
			break
		}
		if nu < 1.1*lambda {
			nu = 2 * lambda
		}
		phi := g + nu*math.Max(0, c)
		slope := gd - nu*math.Max(0, c) // directional derivative of the merit
		if !(slope < 0) {
			// No descent for the merit along d (B badly scaled, or x
			// already as good as the model can tell): one restart from
			// the gradient's scale, then give up.
			if first {
				break
			}
			resetB(math.Max(math.Sqrt(dot(gg, gg)), 1e-8) / 0.01)
			first = true
			continue
		}
		step, accepted := 1.0, false
		var gNew, cNew float64
		for ls := 0; ls < 40 && evals < o.maxEval; ls++ {
			for i := range xn {
				xn[i] = x[i] + step*d[i]
			}
			var okNew bool
			gNew, cNew, okNew = f.evaluate(xn)
			evals++
			phiNew := math.Inf(1)
			if okNew {
				phiNew = gNew + nu*math.Max(0, cNew)
			}
			if phiNew <= phi+1e-4*step*slope {
				accepted = true
				break
			}
			step = nextStep(step, slope, phi, phiNew, true)
		}
		if !accepted {
			break
		}
		first = false
		f.gradients(ggn, gcn)
		for i := 0; i < n; i++ {
			s[i] = xn[i] - x[i]
			// ∇ of the Lagrangian g + λc at the new point less at the old.
			y[i] = ggn[i] + lambda*gcn[i] - gg[i] - lambda*gc[i]
		}
		dampedBFGS(bm, s, y, bs, n)
		copy(x, xn)
		copy(gg, ggn)
		copy(gc, gcn)
		g, c = gNew, cNew
	}
	return sqpResult{x: x, g: g, c: c, evals: evals}
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
