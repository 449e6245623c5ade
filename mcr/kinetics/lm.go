package kinetics

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"
)

// ResidualFunc writes the m residuals at x into r. An error at a trial point makes the
// Levenberg–Marquardt iteration shrink its trust region and try again; at the starting point
// it is returned.
type ResidualFunc func(x, r []float64) error

// JacobianFunc writes ∂r_i/∂x_j into jac (m × n). Returning ErrUseDifferences
// asks for central differences at this x instead (a model whose exact
// derivatives do not cover every point).
type JacobianFunc func(x []float64, jac *mat.Dense) error

// ErrUseDifferences, from a JacobianFunc, makes LevenbergMarquardt form that
// Jacobian by central differences.
var ErrUseDifferences = errors.New("kinetics: no analytic jacobian here: use central differences")

// LMSettings tunes LevenbergMarquardt; zero fields take the defaults of MINPACK's lmder.
type LMSettings struct {
	MaxIter int     // accepted + rejected steps (default 200·(n+1))
	FTol    float64 // relative reduction of the sum of squares (default 1e-10)
	XTol    float64 // relative step in the scaled parameters (default 1e-10)
	GTol    float64 // cosine between residual and Jacobian columns (default 1e-12)
	Factor  float64 // initial trust radius = Factor·‖D x‖ (default 100)
	// DiffStep is the relative step of the central differences used when no Jacobian is
	// given (default 1e-6, about eps^(1/3) which balances truncation against rounding).
	DiffStep float64
}

// LMResult is the outcome of LevenbergMarquardt.
type LMResult struct {
	X        []float64
	Residual []float64  // residuals at X
	SSR      float64    // Σ r_i² at X
	Jacobian *mat.Dense // at X
	// Iterations counts Jacobian evaluations, Evaluations residual evaluations.
	Iterations, Evaluations int
	Converged               bool
	Reason                  string
	// Held marks the parameters whose Jacobian column was at rounding level at x0
	// (≤ 1e-12 × the largest column norm): the residual does not depend on them, so the
	// iteration kept them at x0 and Jacobian holds zeros in their columns (Covariance then
	// counts them out of the rank and gives them no variance). nil when none was.
	Held []bool
}

// LevenbergMarquardt minimises Σ r_i(x)² from x0 with Moré's (1978) trust-region form of the
// Levenberg–Marquardt method: the step δ solves min ‖J δ + r‖ subject to ‖D δ‖ ≤ Δ, with D the
// running maximum of the Jacobian column norms (scale invariance) and the Marquardt parameter
// λ found by Hebden–Moré iteration. J = QR once per iteration; each trial λ then needs only
// the QR of the small stacked matrix [R; √λ D], so JᵀJ is never formed (forming it would square
// the condition number). jac may be nil: central differences are used. m is the number of
// residuals.
func LevenbergMarquardt(f ResidualFunc, jac JacobianFunc, x0 []float64, m int, set LMSettings) (*LMResult, error) {
	n := len(x0)
	if n == 0 || m < n {
		return nil, fmt.Errorf("kinetics: levenberg-marquardt: %d residuals for %d parameters", m, n)
	}
	if set.MaxIter <= 0 {
		set.MaxIter = 200 * (n + 1)
	}
	if set.FTol <= 0 {
		set.FTol = 1e-10
	}
	if set.XTol <= 0 {
		set.XTol = 1e-10
	}
	if set.GTol <= 0 {
		set.GTol = 1e-12
	}
	if set.Factor <= 0 {
		set.Factor = 100
	}
	if set.DiffStep <= 0 {
		set.DiffStep = 1e-6
	}
	res := &LMResult{X: append([]float64(nil), x0...)}
	for _, v := range x0 {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, errors.New("kinetics: levenberg-marquardt: starting point is not finite")
		}
	}
	eval := func(x, r []float64) error {
		res.Evaluations++
		if err := f(x, r); err != nil {
			return err
		}
		for _, v := range r {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return errors.New("residual is not finite")
			}
		}
		return nil
	}
	x := res.X
	r := make([]float64, m)
	if err := eval(x, r); err != nil {
		return nil, fmt.Errorf("kinetics: levenberg-marquardt: at the starting point: %w", err)
	}
	fnorm := norm2(r)
	J := mat.NewDense(m, n, nil)
	rp := make([]float64, m)
	rm := make([]float64, m)
	var held []bool
	jacobianAt := func(x []float64) error {
		if jac != nil {
			if err := jac(x, J); !errors.Is(err, ErrUseDifferences) {
				return err
			}
		}
		xt := append([]float64(nil), x...)
		for j := 0; j < n; j++ {
			h := set.DiffStep * math.Max(math.Abs(x[j]), 1)
			xt[j] = x[j] + h
			if err := eval(xt, rp); err != nil {
				return err
			}
			xt[j] = x[j] - h
			if err := eval(xt, rm); err != nil {
				return err
			}
			xt[j] = x[j]
			for i := 0; i < m; i++ {
				J.Set(i, j, (rp[i]-rm[i])/(2*h))
			}
		}
		return nil
	}

	jacobian := func(x []float64) error {
		if err := jacobianAt(x); err != nil {
			return err
		}
		zeroHeld(J, held)
		return nil
	}

	diag := make([]float64, n)
	xnew := make([]float64, n)
	rnew := make([]float64, m)
	var delta, xnorm, par float64
	qrA := make([]float64, m*n)
	tau := make([]float64, n)
	qtr := make([]float64, m)
	R := mat.NewDense(n, n, nil)
	iter := 0
	for {
		if err := jacobian(x); err != nil {
			return nil, fmt.Errorf("kinetics: levenberg-marquardt: jacobian: %w", err)
		}
		res.Iterations++
		// QR of J (Householder, LAPACK geqrf) and Qᵀr.
		// J is m × n with stride n (NewDense): its raw data is qrA's layout.
		if res.Iterations == 1 {
			held = heldColumns(J)
			zeroHeld(J, held)
			res.Held = held
		}
		copy(qrA, J.RawMatrix().Data[:m*n])
		a := blas64.General{Rows: m, Cols: n, Stride: n, Data: qrA}
		work := make([]float64, 1)
		lapack64.Geqrf(a, tau, work, -1)
		work = make([]float64, int(work[0]))
		lapack64.Geqrf(a, tau, work, len(work))
		copy(qtr, r)
		cm := blas64.General{Rows: m, Cols: 1, Stride: 1, Data: qtr}
		work = make([]float64, 1)
		lapack64.Ormqr(blas.Left, blas.Trans, a, tau, cm, work, -1)
		work = make([]float64, int(work[0]))
		lapack64.Ormqr(blas.Left, blas.Trans, a, tau, cm, work, len(work))
		R.Zero()
		for i := 0; i < n; i++ {
			for j := i; j < n; j++ {
				R.Set(i, j, qrA[i*n+j])
			}
		}
		colNorm := make([]float64, n)
		jd := J.RawMatrix().Data
		for j := 0; j < n; j++ {
			var s float64
			for i := 0; i < m; i++ {
				v := jd[i*n+j]
				s += v * v
			}
			colNorm[j] = math.Sqrt(s)
		}
		if res.Iterations == 1 {
			// A held column (zeroed above) gets scale 1, as MINPACK gives a zero column.
			for j := range diag {
				diag[j] = colNorm[j]
				if diag[j] == 0 {
					diag[j] = 1
				}
			}
			xnorm = scaledNorm(diag, x)
			delta = set.Factor * xnorm
			if delta == 0 {
				delta = set.Factor
			}
		} else {
			for j := range diag {
				diag[j] = math.Max(diag[j], colNorm[j])
			}
		}
		// Gradient test: largest cosine between r and a column of J.
		if fnorm == 0 {
			res.Converged, res.Reason = true, "zero residual"
			break
		}
		g := mat.NewVecDense(n, nil)
		g.MulVec(J.T(), mat.NewVecDense(m, r))
		var gnorm float64
		for j := 0; j < n; j++ {
			if colNorm[j] != 0 {
				gnorm = math.Max(gnorm, math.Abs(g.AtVec(j))/(colNorm[j]*fnorm))
			}
		}
		if gnorm <= set.GTol {
			res.Converged, res.Reason = true, "gradient orthogonal to the residual (gtol)"
			break
		}

		accepted := false
		for !accepted {
			if iter >= set.MaxIter {
				res.Reason = "iteration limit"
				// The last Jacobian may belong to an earlier iterate: refresh it at x so that
				// covariances computed from the result refer to the returned point.
				if err := jacobian(x); err != nil {
					return nil, fmt.Errorf("kinetics: levenberg-marquardt: jacobian: %w", err)
				}
				return finishLM(res, x, r, fnorm, J), nil
			}
			iter++
			var step []float64
			par, step = lmPar(R, diag, qtr[:n], delta, par)
			for j := range held {
				if held[j] {
					step[j] = 0 // rounding in the QR may leave a trace along a zero column
				}
			}
			for j := range x {
				xnew[j] = x[j] - step[j] // the step solves J δ ≈ −r with δ = −step
			}
			pnorm := scaledNorm(diag, step)
			if res.Iterations == 1 {
				delta = math.Min(delta, pnorm)
			}
			fnorm1 := math.Inf(1)
			if err := eval(xnew, rnew); err == nil {
				fnorm1 = norm2(rnew)
			}
			actred := -1.0
			if 0.1*fnorm1 < fnorm {
				actred = 1 - (fnorm1/fnorm)*(fnorm1/fnorm)
			}
			// Predicted reduction from ‖J δ‖ = ‖R δ‖.
			rs := mat.NewVecDense(n, nil)
			rs.MulVec(R, mat.NewVecDense(n, step))
			t1 := mat.Norm(rs, 2) / fnorm
			t2 := math.Sqrt(par) * pnorm / fnorm
			prered := t1*t1 + 2*t2*t2
			dirder := -(t1*t1 + t2*t2)
			ratio := 0.0
			if prered != 0 {
				ratio = actred / prered
			}
			if ratio <= 0.25 {
				temp := 0.5
				if actred < 0 {
					temp = 0.5 * dirder / (dirder + 0.5*actred)
				}
				if 0.1*fnorm1 >= fnorm || temp < 0.1 {
					temp = 0.1
				}
				delta = temp * math.Min(delta, pnorm/0.1)
				par /= temp
			} else if par == 0 || ratio >= 0.75 {
				delta = pnorm / 0.5
				par *= 0.5
			}
			if ratio >= 1e-4 {
				copy(x, xnew)
				copy(r, rnew)
				fnorm = fnorm1
				xnorm = scaledNorm(diag, x)
				accepted = true
			}
			if math.Abs(actred) <= set.FTol && prered <= set.FTol && 0.5*ratio <= 1 {
				res.Converged, res.Reason = true, "relative reduction of the sum of squares (ftol)"
			}
			if delta <= set.XTol*xnorm || delta <= 1e-300 {
				res.Converged, res.Reason = true, "relative step size (xtol)"
			}
			if res.Converged {
				if err := jacobian(x); err != nil {
					return nil, fmt.Errorf("kinetics: levenberg-marquardt: jacobian: %w", err)
				}
				return finishLM(res, x, r, fnorm, J), nil
			}
		}
	}
	return finishLM(res, x, r, fnorm, J), nil
}

// heldColumns marks the columns of J at rounding level, ≤ 1e-12 × the largest column norm
// (Covariance's threshold for a zero singular value): parameters the residual does not
// depend on (ln c0 of a first-order model with free spectra, whose spectra absorb its
// scale). Left in, such a column's rounding-level gradient walks its parameter anywhere
// (c0 = 1e+230 and 1e-96 from the same data), and scaled by its own norm it made the damped
// system singular for every λ, closing the trust region on the start. nil when none is.
func heldColumns(J *mat.Dense) []bool {
	m, n := J.Dims()
	norm := make([]float64, n)
	maxNorm := 0.0
	for j := 0; j < n; j++ {
		col := make([]float64, m)
		mat.Col(col, j, J)
		norm[j] = norm2(col)
		maxNorm = math.Max(maxNorm, norm[j])
	}
	var held []bool
	for j, v := range norm {
		if maxNorm > 0 && v <= 1e-12*maxNorm {
			if held == nil {
				held = make([]bool, n)
			}
			held[j] = true
		}
	}
	return held
}

// zeroHeld sets the held columns of J to zero.
func zeroHeld(J *mat.Dense, held []bool) {
	m, _ := J.Dims()
	for j, h := range held {
		if h {
			for i := 0; i < m; i++ {
				J.Set(i, j, 0)
			}
		}
	}
}

// finishLM fills res at x. The residuals and the Jacobian are handed over,
// not copied: LevenbergMarquardt made them and reads neither once it
// returns (at 2000 × 31 reduced data points and five parameters a copy was
// 2.5 MB per run).
func finishLM(res *LMResult, x, r []float64, fnorm float64, J *mat.Dense) *LMResult {
	res.X = append([]float64(nil), x...)
	res.Residual = r
	res.SSR = fnorm * fnorm
	res.Jacobian = J
	return res
}

func norm2(v []float64) float64 {
	// Scaled to avoid overflow in the sum of squares (as MINPACK's enorm does in spirit).
	var scale, ssq float64 = 0, 1
	for _, x := range v {
		if x == 0 {
			continue
		}
		a := math.Abs(x)
		if scale < a {
			ssq = 1 + ssq*(scale/a)*(scale/a)
			scale = a
		} else {
			ssq += (a / scale) * (a / scale)
		}
	}
	return scale * math.Sqrt(ssq)
}

func scaledNorm(d, x []float64) float64 {
	v := make([]float64, len(x))
	for i := range x {
		v[i] = d[i] * x[i]
	}
	return norm2(v)
}

// solveDamped returns δ minimising ‖R δ − qtr‖² + λ‖D δ‖² and the triangular factor Rλ of
// [R; √λ D] (RλᵀRλ = RᵀR + λD²). ok is false when the system is singular.
func solveDamped(R *mat.Dense, diag, qtr []float64, lambda float64) (delta []float64, rl *mat.Dense, ok bool) {
	n := len(diag)
	a := mat.NewDense(2*n, n, nil)
	a.Slice(0, n, 0, n).(*mat.Dense).Copy(R)
	sl := math.Sqrt(lambda)
	for j := 0; j < n; j++ {
		a.Set(n+j, j, sl*diag[j])
	}
	b := mat.NewDense(2*n, 1, nil)
	for j := 0; j < n; j++ {
		b.Set(j, 0, qtr[j])
	}
	var qr mat.QR
	qr.Factorize(a)
	var rr mat.Dense
	qr.RTo(&rr)
	rl = mat.DenseCopyOf(rr.Slice(0, n, 0, n))
	var maxd, mind float64 = 0, math.Inf(1)
	for j := 0; j < n; j++ {
		v := math.Abs(rl.At(j, j))
		maxd = math.Max(maxd, v)
		mind = math.Min(mind, v)
	}
	if maxd == 0 || mind <= 1e-14*maxd {
		return nil, rl, false
	}
	var x mat.Dense
	if err := qr.SolveTo(&x, false, b); err != nil {
		return nil, rl, false
	}
	delta = make([]float64, n)
	for j := 0; j < n; j++ {
		delta[j] = x.At(j, 0)
	}
	return delta, rl, true
}

// lmPar finds λ ≥ 0 with ‖D δ(λ)‖ within 10 % of Δ (or λ = 0 when the Gauss–Newton step is
// inside the region) by Moré's (1978) safeguarded Newton iteration on 1/‖Dδ‖ − 1/Δ.
// δ here solves R δ ≈ Qᵀr, so the parameter step is −δ.
func lmPar(R *mat.Dense, diag, qtr []float64, delta, parIn float64) (float64, []float64) {
	n := len(diag)
	const dwarf = 1e-300
	phiAt := func(lambda float64) ([]float64, *mat.Dense, float64, bool) {
		d, rl, ok := solveDamped(R, diag, qtr, lambda)
		if !ok {
			return nil, rl, 0, false
		}
		return d, rl, scaledNorm(diag, d) - delta, true
	}
	// Gauss–Newton step.
	gn, rl0, phi, ok := phiAt(0)
	if ok && phi <= 0.1*delta {
		return 0, gn
	}
	// Lower bound from the Newton step at λ = 0 (only when J has full rank).
	parl := 0.0
	if ok {
		w := make([]float64, n)
		dx := scaledNorm(diag, gn)
		for j := 0; j < n; j++ {
			w[j] = diag[j] * (diag[j] * gn[j]) / dx
		}
		t := triSolveT(rl0, w)
		tn := norm2(t)
		parl = ((phi / delta) / tn) / tn
	}
	// Upper bound ‖D⁻¹ Rᵀ qtr‖ / Δ.
	g := make([]float64, n)
	for j := 0; j < n; j++ {
		var s float64
		for i := 0; i <= j; i++ {
			s += R.At(i, j) * qtr[i]
		}
		g[j] = s / diag[j]
	}
	gnorm := norm2(g)
	paru := gnorm / delta
	if paru == 0 {
		paru = dwarf / math.Min(delta, 0.1)
	}
	par := math.Max(parIn, parl)
	par = math.Min(par, paru)
	if par == 0 && ok {
		par = gnorm / scaledNorm(diag, gn)
	}
	if !(par > 0) || math.IsInf(par, 0) {
		par = paru * 1e-3
	}
	var best []float64
	prevPhi := math.Inf(1)
	for it := 0; it < 10; it++ {
		if par == 0 {
			par = math.Max(dwarf, 1e-3*paru)
		}
		d, rl, phi, ok := phiAt(par)
		if !ok {
			par = math.Max(par*10, dwarf)
			continue
		}
		best = d
		// MINPACK's stopping rule: close enough to Δ, or λ pinned at the lower bound 0 with
		// the step already inside the region and shrinking.
		if math.Abs(phi) <= 0.1*delta || (parl == 0 && phi <= prevPhi && prevPhi < 0) {
			break
		}
		prevPhi = phi
		w := make([]float64, n)
		dx := scaledNorm(diag, d)
		for j := 0; j < n; j++ {
			w[j] = diag[j] * (diag[j] * d[j]) / dx
		}
		t := triSolveT(rl, w)
		tn := norm2(t)
		parc := ((phi / delta) / tn) / tn
		if phi > 0 {
			parl = math.Max(parl, par)
		}
		if phi < 0 {
			paru = math.Min(paru, par)
		}
		par = math.Max(parl, par+parc)
	}
	if best == nil {
		// Fall back to a short steepest-descent-like step (always solvable for large λ).
		par = math.Max(paru, 1)
		best, _, _ = solveDamped(R, diag, qtr, par)
		if best == nil {
			best = make([]float64, n)
		}
	}
	return par, best
}

// triSolveT solves Rᵀ z = w for upper-triangular R (forward substitution).
func triSolveT(r *mat.Dense, w []float64) []float64 {
	n := len(w)
	z := make([]float64, n)
	for i := 0; i < n; i++ {
		s := w[i]
		for k := 0; k < i; k++ {
			s -= r.At(k, i) * z[k]
		}
		d := r.At(i, i)
		if d == 0 {
			z[i] = 0
			continue
		}
		z[i] = s / d
	}
	return z
}

// Covariance returns σ²(JᵀJ)⁻¹ from the SVD J = U Σ Vᵀ as σ² V Σ⁻² Vᵀ, which avoids forming
// JᵀJ (squaring the condition number). Singular values below 1e-12·σ_max are treated as zero
// (pseudo-inverse); rank reports how many were kept, so rank < n means some parameter
// combinations are not determined by the data.
func Covariance(j *mat.Dense, sigma2 float64) (cov *mat.Dense, rank int, err error) {
	_, n := j.Dims()
	var svd mat.SVD
	if !svd.Factorize(j, mat.SVDThin) {
		return nil, 0, errors.New("kinetics: covariance: SVD failed")
	}
	s := svd.Values(nil)
	var v mat.Dense
	svd.VTo(&v)
	cov = mat.NewDense(n, n, nil)
	if len(s) == 0 || s[0] == 0 {
		return cov, 0, nil
	}
	for a := 0; a < n; a++ {
		for b := 0; b < n; b++ {
			var sum float64
			for k := range s {
				if s[k] > 1e-12*s[0] {
					sum += v.At(a, k) * v.At(b, k) / (s[k] * s[k])
				}
			}
			cov.Set(a, b, sigma2*sum)
		}
	}
	for k := range s {
		if s[k] > 1e-12*s[0] {
			rank++
		}
	}
	return cov, rank, nil
}
