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
	X []float64
	// Start is the x0 of the run reported, set by the fits that try
	// several (nil when not set).
	Start    []float64
	Residual []float64  // residuals at X
	SSR      float64    // Σ r_i² at X
	Jacobian *mat.Dense // at X
	// Iterations counts Jacobian evaluations, Evaluations residual evaluations.
	Iterations, Evaluations int
	Converged               bool
	Reason                  string
	// Held marks the parameters whose Jacobian column was at rounding level at x0
	// (≤ nullTol = 1e-8 × the largest column norm) and still is at X: the residual does not depend
	// on them, so the iteration kept them at x0 and Jacobian holds zeros in their columns
	// (Covariance then counts them out of the rank and gives them no variance). A held
	// parameter whose column rises above that level at a later iterate (a rate whose
	// amplitude started at zero) is released there and fitted from then on. nil when none
	// is held at the end.
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
	s, err := newLMSolver(f, jac, x0, m, set)
	if err != nil {
		return nil, err
	}
	for {
		if err := s.jacobian(); err != nil {
			return nil, err
		}
		s.res.Iterations++
		if s.res.Iterations == 1 {
			s.holdFlatColumns()
		}
		s.factorJacobian()
		s.rescale(s.colNorm)
		if s.gradientConverged(s.colNorm) {
			return s.finish(), nil
		}
		if done, err := s.step(); err != nil {
			return nil, err
		} else if done {
			return s.finish(), nil
		}
	}
}

// withDefaults fills the zero fields of set with MINPACK's defaults for n parameters.
func (set LMSettings) withDefaults(n int) LMSettings {
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
	return set
}

// lmSolver is the state of one Levenberg–Marquardt minimisation: the current
// point and its residuals, the Jacobian and its QR factor, and the trust
// region. Its buffers are made once and reused by every iteration.
type lmSolver struct {
	f    ResidualFunc
	jac  JacobianFunc
	set  LMSettings
	m, n int
	res  *LMResult

	x, r  []float64 // the current point (res.X) and its residuals
	fnorm float64   // ‖r‖
	J     *mat.Dense
	// colNorm: the Euclidean norms of J's columns, formed once per
	// Jacobian for both the held columns' test and the scale D (zero in
	// the held columns, as J is).
	colNorm []float64
	held    []bool // parameters the residual did not depend on at x0, nil none
	// heldAtStart and x0: what was held at x0 and x0 itself, for the final
	// refresh (finalJacobian); nil when nothing was held.
	heldAtStart []bool
	x0          []float64

	diag               []float64 // D: the running maximum of J's column norms
	delta, xnorm, par  float64   // trust radius Δ, ‖D x‖, Marquardt λ
	iter               int       // trial steps taken, accepted or not
	qrA, tau, qtr      []float64 // J's Householder QR (LAPACK layout) and Qᵀr
	R                  *mat.Dense
	rp, rm, xnew, rnew []float64
}

// newLMSolver checks the problem's size and start, fills the settings'
// defaults and evaluates the residuals at x0 (an error there is returned,
// there being no smaller region to retreat to).
func newLMSolver(f ResidualFunc, jac JacobianFunc, x0 []float64, m int, set LMSettings) (*lmSolver, error) {
	n := len(x0)
	if n == 0 || m < n {
		return nil, fmt.Errorf("kinetics: levenberg-marquardt: %d residuals for %d parameters", m, n)
	}
	s := &lmSolver{f: f, jac: jac, set: set.withDefaults(n), m: m, n: n,
		res: &LMResult{X: append([]float64(nil), x0...)}}
	for _, v := range x0 {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, errors.New("kinetics: levenberg-marquardt: starting point is not finite")
		}
	}
	s.x = s.res.X
	s.r = make([]float64, m)
	if err := s.eval(s.x, s.r); err != nil {
		return nil, fmt.Errorf("kinetics: levenberg-marquardt: at the starting point: %w", err)
	}
	s.fnorm = norm2(s.r)
	s.J, s.colNorm = mat.NewDense(m, n, nil), make([]float64, n)
	s.rp, s.rm = make([]float64, m), make([]float64, m)
	s.diag, s.xnew, s.rnew = make([]float64, n), make([]float64, n), make([]float64, m)
	s.qrA, s.tau, s.qtr = make([]float64, m*n), make([]float64, n), make([]float64, m)
	s.R = mat.NewDense(n, n, nil)
	return s, nil
}

// eval writes the residuals at x into r, counting the evaluation; a residual
// that is not finite is an error, so that a trial point there is rejected.
func (s *lmSolver) eval(x, r []float64) error {
	s.res.Evaluations++
	if err := s.f(x, r); err != nil {
		return err
	}
	for _, v := range r {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return errors.New("residual is not finite")
		}
	}
	return nil
}

// jacobian forms J at the current point and its column norms, with the
// held columns zero.
func (s *lmSolver) jacobian() error {
	if err := s.jacobianAt(s.x); err != nil {
		return fmt.Errorf("kinetics: levenberg-marquardt: jacobian: %w", err)
	}
	columnNorms(s.J, s.colNorm)
	s.releaseHeld()
	s.zeroHeld()
	return nil
}

// finalJacobian is the refresh at the returned point. It releases nothing,
// and holds again what was held at x0 and is still exactly at its start: a
// parameter released when the iteration ended before a step moved it (the
// iteration limit, or a tolerance met on the step after its release) has
// not been fitted, so it stays held and gets no variance.
func (s *lmSolver) finalJacobian() error {
	if err := s.jacobianAt(s.x); err != nil {
		return fmt.Errorf("kinetics: levenberg-marquardt: jacobian: %w", err)
	}
	for j, h := range s.heldAtStart {
		if h && s.x[j] == s.x0[j] {
			if s.held == nil {
				s.held = make([]bool, len(s.x))
			}
			s.held[j] = true
		}
	}
	if s.heldAtStart != nil {
		s.res.Held = s.held
	}
	zeroHeld(s.J, s.held)
	return nil
}

// zeroHeld sets the held columns of J and their norms to zero.
func (s *lmSolver) zeroHeld() {
	zeroHeld(s.J, s.held)
	for j, h := range s.held {
		if h {
			s.colNorm[j] = 0
		}
	}
}

// releaseHeld lets go of the held parameters whose column in the fresh J
// (whose norms colNorm still holds) is no longer at rounding level. The
// residual can come to depend on a parameter it did not depend on at x0
// (y = a·exp(−k t) from a = 0: the column of k is a·t·exp(−k t)); held for
// good, such a parameter would stay at its start and the fit would
// converge to the wrong point. A column that stays flat (an initial
// concentration whose scale free spectra absorb) stays held.
func (s *lmSolver) releaseHeld() {
	if s.held == nil {
		return
	}
	flat := heldColumns(s.colNorm)
	anyHeld := false
	for j := range s.held {
		s.held[j] = s.held[j] && flat != nil && flat[j]
		anyHeld = anyHeld || s.held[j]
	}
	if !anyHeld {
		s.held = nil
	}
	s.res.Held = s.held
}

// jacobianAt forms J at x from the analytic Jacobian when there is one and it
// covers x, else by central differences with the relative step DiffStep.
func (s *lmSolver) jacobianAt(x []float64) error {
	if s.jac != nil {
		if err := s.jac(x, s.J); !errors.Is(err, ErrUseDifferences) {
			return err
		}
	}
	xt := append([]float64(nil), x...)
	for j := 0; j < s.n; j++ {
		h := s.set.DiffStep * math.Max(math.Abs(x[j]), 1)
		xt[j] = x[j] + h
		if err := s.eval(xt, s.rp); err != nil {
			return err
		}
		xt[j] = x[j] - h
		if err := s.eval(xt, s.rm); err != nil {
			return err
		}
		xt[j] = x[j]
		for i := 0; i < s.m; i++ {
			s.J.Set(i, j, (s.rp[i]-s.rm[i])/(2*h))
		}
	}
	return nil
}

// holdFlatColumns marks, at the start, the parameters whose Jacobian column is
// at rounding level (see heldColumns) and zeroes their columns. Nothing is
// held before, so colNorm is still the fresh J's.
func (s *lmSolver) holdFlatColumns() {
	s.held = heldColumns(s.colNorm)
	s.zeroHeld()
	s.res.Held = s.held
	if s.held != nil {
		s.heldAtStart = append([]bool(nil), s.held...)
		s.x0 = append([]float64(nil), s.x...)
	}
}

// factorJacobian forms J = QR (Householder, LAPACK geqrf), Qᵀr and the
// triangle R. J is m × n with stride n (NewDense): its raw data is qrA's
// layout.
func (s *lmSolver) factorJacobian() {
	m, n := s.m, s.n
	copy(s.qrA, s.J.RawMatrix().Data[:m*n])
	a := blas64.General{Rows: m, Cols: n, Stride: n, Data: s.qrA}
	work := make([]float64, 1)
	lapack64.Geqrf(a, s.tau, work, -1)
	work = make([]float64, int(work[0]))
	lapack64.Geqrf(a, s.tau, work, len(work))
	copy(s.qtr, s.r)
	cm := blas64.General{Rows: m, Cols: 1, Stride: 1, Data: s.qtr}
	work = make([]float64, 1)
	lapack64.Ormqr(blas.Left, blas.Trans, a, s.tau, cm, work, -1)
	work = make([]float64, int(work[0]))
	lapack64.Ormqr(blas.Left, blas.Trans, a, s.tau, cm, work, len(work))
	s.R.Zero()
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			s.R.Set(i, j, s.qrA[i*n+j])
		}
	}
}

// columnNorms writes the Euclidean norms of J's columns into norm. J is
// m × n with stride n (NewDense).
func columnNorms(J *mat.Dense, norm []float64) {
	m, n := J.Dims()
	jd := J.RawMatrix().Data
	for j := 0; j < n; j++ {
		var sum float64
		for i := 0; i < m; i++ {
			v := jd[i*n+j]
			sum += v * v
		}
		norm[j] = math.Sqrt(sum)
	}
}

// rescale updates the scale D: the column norms at the start (and the
// initial trust radius Factor·‖D x0‖), their running maximum after, so that
// a parameter's scale never shrinks back (Moré 1978).
func (s *lmSolver) rescale(colNorm []float64) {
	if s.res.Iterations > 1 {
		for j := range s.diag {
			s.diag[j] = math.Max(s.diag[j], colNorm[j])
		}
		return
	}
	// A held column (zeroed) gets scale 1, as MINPACK gives a zero column.
	for j := range s.diag {
		s.diag[j] = colNorm[j]
		if s.diag[j] == 0 {
			s.diag[j] = 1
		}
	}
	s.xnorm = scaledNorm(s.diag, s.x)
	s.delta = s.set.Factor * s.xnorm
	if s.delta == 0 {
		s.delta = s.set.Factor
	}
}

// gradientConverged tests a zero residual and the gradient: the largest
// cosine between r and a column of J at most GTol. It sets the reason.
func (s *lmSolver) gradientConverged(colNorm []float64) bool {
	if s.fnorm == 0 {
		s.res.Converged, s.res.Reason = true, "zero residual"
		return true
	}
	g := mat.NewVecDense(s.n, nil)
	g.MulVec(s.J.T(), mat.NewVecDense(s.m, s.r))
	var gnorm float64
	for j := 0; j < s.n; j++ {
		if colNorm[j] != 0 {
			gnorm = math.Max(gnorm, math.Abs(g.AtVec(j))/(colNorm[j]*s.fnorm))
		}
	}
	if gnorm <= s.set.GTol {
		s.res.Converged, s.res.Reason = true, "gradient orthogonal to the residual (gtol)"
		return true
	}
	return false
}

// step tries steps from x, shrinking the trust region after each that does
// not lower the sum of squares enough, until one is accepted or the
// iteration is done (converged, or at the iteration limit). When done, the
// Jacobian is refreshed at x: the last one may belong to an earlier iterate,
// and covariances from the result must refer to the returned point.
func (s *lmSolver) step() (done bool, err error) {
	for {
		if s.iter >= s.set.MaxIter {
			s.res.Reason = "iteration limit"
			return true, s.finalJacobian()
		}
		s.iter++
		t := s.trial()
		s.testConvergence(t)
		if s.res.Converged {
			return true, s.finalJacobian()
		}
		if t.accepted {
			return false, nil
		}
	}
}

// lmTrial is the outcome of one trial step: the actual and the predicted
// relative reductions of the sum of squares, their ratio, and whether the
// step was taken.
type lmTrial struct {
	actred, prered, ratio float64
	dirder                float64 // the directional derivative of the scaled sum of squares along the step
	accepted              bool
}

// trial solves for the step in the current trust region, evaluates the
// residuals there, updates the region and λ from how well the linear model
// predicted the reduction, and takes the step when the ratio is at least 1e-4.
func (s *lmSolver) trial() lmTrial {
	var step []float64
	s.par, step = lmPar(s.R, s.diag, s.qtr[:s.n], s.delta, s.par)
	for j := range s.held {
		if s.held[j] {
			step[j] = 0 // rounding in the QR may leave a trace along a zero column
		}
	}
	for j := range s.x {
		s.xnew[j] = s.x[j] - step[j] // the step solves J δ ≈ −r with δ = −step
	}
	pnorm := scaledNorm(s.diag, step)
	if s.res.Iterations == 1 {
		s.delta = math.Min(s.delta, pnorm)
	}
	fnorm1 := math.Inf(1)
	if err := s.eval(s.xnew, s.rnew); err == nil {
		fnorm1 = norm2(s.rnew)
	}
	t := s.reductions(step, pnorm, fnorm1)
	s.updateRegion(t, pnorm, fnorm1)
	if t.ratio >= 1e-4 {
		copy(s.x, s.xnew)
		copy(s.r, s.rnew)
		s.fnorm = fnorm1
		s.xnorm = scaledNorm(s.diag, s.x)
		t.accepted = true
	}
	return t
}

// reductions compares the actual reduction of the sum of squares at the
// trial point (−1 when it grew tenfold or more) with the one the linear
// model predicts from ‖J δ‖ = ‖R δ‖ and the damping.
func (s *lmSolver) reductions(step []float64, pnorm, fnorm1 float64) lmTrial {
	var t lmTrial
	fnorm := s.fnorm
	t.actred = -1.0
	if 0.1*fnorm1 < fnorm {
		t.actred = 1 - (fnorm1/fnorm)*(fnorm1/fnorm)
	}
	rs := mat.NewVecDense(s.n, nil)
	rs.MulVec(s.R, mat.NewVecDense(s.n, step))
	t1 := mat.Norm(rs, 2) / fnorm
	t2 := math.Sqrt(s.par) * pnorm / fnorm
	t.prered = t1*t1 + 2*t2*t2
	t.dirder = -(t1*t1 + t2*t2)
	if t.prered != 0 {
		t.ratio = t.actred / t.prered
	}
	return t
}

// updateRegion shrinks the trust radius (and raises λ) after a poor
// prediction, by MINPACK's factor from the directional derivative, and
// widens it after a good one.
func (s *lmSolver) updateRegion(t lmTrial, pnorm, fnorm1 float64) {
	switch {
	case t.ratio <= 0.25:
		temp := 0.5
		if t.actred < 0 {
			temp = 0.5 * t.dirder / (t.dirder + 0.5*t.actred)
		}
		if 0.1*fnorm1 >= s.fnorm || temp < 0.1 {
			temp = 0.1
		}
		s.delta = temp * math.Min(s.delta, pnorm/0.1)
		s.par /= temp
	case s.par == 0 || t.ratio >= 0.75:
		s.delta = pnorm / 0.5
		s.par *= 0.5
	}
}

// testConvergence sets the result converged when the actual and predicted
// relative reductions are both at most FTol, or the trust radius has shrunk
// to XTol relative to the scaled parameters.
func (s *lmSolver) testConvergence(t lmTrial) {
	if math.Abs(t.actred) <= s.set.FTol && t.prered <= s.set.FTol && 0.5*t.ratio <= 1 {
		s.res.Converged, s.res.Reason = true, "relative reduction of the sum of squares (ftol)"
	}
	if s.delta <= s.set.XTol*s.xnorm || s.delta <= 1e-300 {
		s.res.Converged, s.res.Reason = true, "relative step size (xtol)"
	}
}

// finish fills the result at the current point.
func (s *lmSolver) finish() *LMResult {
	return finishLM(s.res, s.x, s.r, s.fnorm, s.J)
}

// heldColumns marks the columns of J at rounding level from their norms, ≤ nullTol (1e-8) ×
// the largest column norm (the level at which a direction counts as not determined,
// undetermined): parameters the residual does not depend on (ln c0 of a first-order model
// with free spectra, whose spectra absorb its scale; a rate constant run to zero). Left in,
// such a column's rounding-level gradient walks its parameter anywhere (c0 = 1e+230 and
// 1e-96 from the same data), and scaled by its own norm it made the damped system singular
// for every λ, closing the trust region on the start. The level was 1e-12 of the largest,
// and a column just above it did the same: a data fit of A -> B -> C -> D started from
// k3 = 2.3e-15 s⁻¹ (column about 1e-11 of the largest) returned its start, k1 and k2
// included, as converged after one iteration. nil when none is.
// The norms are columnNorms', the scale D's: the overflow that the scaled norm2 would
// avoid (a column norm above 1e154) makes D infinite whatever this test finds.
func heldColumns(norm []float64) []bool {
	maxNorm := 0.0
	for _, v := range norm {
		maxNorm = math.Max(maxNorm, v)
	}
	var held []bool
	for j, v := range norm {
		if maxNorm > 0 && v <= nullTol*maxNorm {
			if held == nil {
				held = make([]bool, len(norm))
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
	d := dampedStep{R: R, diag: diag, qtr: qtr, delta: delta}
	gn, rl0, phi, ok := d.at(0)
	if ok && phi <= 0.1*delta {
		return 0, gn // the Gauss–Newton step is inside the region
	}
	// Lower bound from the Newton step at λ = 0 (only when J has full rank).
	parl := 0.0
	if ok {
		parl = d.newtonCorrection(rl0, gn, phi)
	}
	gnorm := d.gradientNorm()
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
	par, best := d.iterate(par, parl, paru)
	if best == nil {
		// Fall back to a short steepest-descent-like step (always solvable for large λ).
		par = math.Max(paru, 1)
		best, _, _ = solveDamped(R, diag, qtr, par)
		if best == nil {
			best = make([]float64, len(diag))
		}
	}
	return par, best
}

// dwarf stands in for MINPACK's dwarf (the smallest positive magnitude) as the floor of λ.
const dwarf = 1e-300

// dampedStep is the damped least-squares problem of one trust region: the
// step δ(λ) minimising ‖R δ − qtr‖² + λ‖D δ‖², and its distance φ(λ) = ‖D δ‖ − Δ
// from the region's edge.
type dampedStep struct {
	R     *mat.Dense
	diag  []float64
	qtr   []float64
	delta float64
}

// at solves for δ(λ); ok is false when the system is singular.
func (d dampedStep) at(lambda float64) (step []float64, rl *mat.Dense, phi float64, ok bool) {
	step, rl, ok = solveDamped(d.R, d.diag, d.qtr, lambda)
	if !ok {
		return nil, rl, 0, false
	}
	return step, rl, scaledNorm(d.diag, step) - d.delta, true
}

// newtonCorrection is the Newton step on φ in λ from δ, with Rλ the
// triangular factor of the damped system there: (φ/Δ)/‖Rλ⁻ᵀ D² δ/‖D δ‖‖².
func (d dampedStep) newtonCorrection(rl *mat.Dense, step []float64, phi float64) float64 {
	n := len(d.diag)
	w := make([]float64, n)
	dx := scaledNorm(d.diag, step)
	for j := 0; j < n; j++ {
		w[j] = d.diag[j] * (d.diag[j] * step[j]) / dx
	}
	t := triSolveT(rl, w)
	tn := norm2(t)
	return ((phi / d.delta) / tn) / tn
}

// gradientNorm is ‖D⁻¹ Rᵀ qtr‖, which over Δ bounds λ from above.
func (d dampedStep) gradientNorm() float64 {
	n := len(d.diag)
	g := make([]float64, n)
	for j := 0; j < n; j++ {
		var s float64
		for i := 0; i <= j; i++ {
			s += d.R.At(i, j) * d.qtr[i]
		}
		g[j] = s / d.diag[j]
	}
	return norm2(g)
}

// iterate runs at most ten safeguarded Newton steps on φ from par, keeping λ
// inside the bracket [parl, paru] it narrows. best is the last solvable step,
// nil when none was.
func (d dampedStep) iterate(par, parl, paru float64) (float64, []float64) {
	var best []float64
	prevPhi := math.Inf(1)
	for it := 0; it < 10; it++ {
		if par == 0 {
			par = math.Max(dwarf, 1e-3*paru)
		}
		step, rl, phi, ok := d.at(par)
		if !ok {
			par = math.Max(par*10, dwarf)
			continue
		}
		best = step
		// MINPACK's stopping rule: close enough to Δ, or λ pinned at the lower bound 0 with
		// the step already inside the region and shrinking.
		if math.Abs(phi) <= 0.1*d.delta || (parl == 0 && phi <= prevPhi && prevPhi < 0) {
			break
		}
		prevPhi = phi
		parc := d.newtonCorrection(rl, step, phi)
		if phi > 0 {
			parl = math.Max(parl, par)
		}
		if phi < 0 {
			paru = math.Min(paru, par)
		}
		par = math.Max(parl, par+parc)
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
