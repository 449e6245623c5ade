package mcr

import (
	"errors"
	"fmt"
	"math"

	"github.com/bandsolve/bandsolve/internal/product"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"
)

// Mode says what the columns of the resolved model are.
type Mode int

const (
	// Species: D = C Sᵀ with concentrations C ≥ 0 and pure spectra S ≥ 0.
	Species Mode = iota
	// Reactions: ΔD = X Rᵀ with extents X ≥ 0 and signed reaction spectra R.
	Reactions
)

func (m Mode) String() string {
	if m == Reactions {
		return "reactions"
	}
	return "species"
}

// Data is the matrix being resolved, seen only through the two products ALS
// needs, so that a truncated SVD can stand in for the full matrix.
type Data interface {
	Dims() (n, m int)
	// MulSpectra returns D S (n × k).
	MulSpectra(s *mat.Dense) *mat.Dense
	// MulProfiles returns Dᵀ C (m × k).
	MulProfiles(c *mat.Dense) *mat.Dense
	// FrobeniusSq returns ‖D‖²_F.
	FrobeniusSq() float64
}

// Dense is Data held in full.
type Dense struct{ D *mat.Dense }

func (d Dense) Dims() (int, int) { return d.D.Dims() }
func (d Dense) MulSpectra(s *mat.Dense) *mat.Dense {
	return product.Mul(d.D, s)
}
func (d Dense) MulProfiles(c *mat.Dense) *mat.Dense {
	return product.MulT(d.D, c)
}
func (d Dense) FrobeniusSq() float64 { return frobSq(d.D) }

// Compressed is Data as a truncated SVD D ≈ U diag(Σ) Vᵀ. Products cost
// O((n + m)·r·k) instead of O(n·m·k); FrobSq keeps the full ‖D‖² so the lack
// of fit from the trace identity still counts the discarded noise.
type Compressed struct {
	U      *mat.Dense // n × r
	Sigma  []float64
	V      *mat.Dense // m × r
	FrobSq float64
}

func (c Compressed) Dims() (int, int) {
	n, _ := c.U.Dims()
	m, _ := c.V.Dims()
	return n, m
}

// MulSpectra and MulProfiles form their products with package product
// (the same sums as gonum's, bit for bit, without a vector-kernel call per
// entry of U or V): called twice per ALS iteration with k columns, where
// gonum spent more time calling its kernel than multiplying.
func (c Compressed) MulSpectra(s *mat.Dense) *mat.Dense {
	vs := product.MulT(c.V, s) // r × k
	scaleRowsBy(vs, c.Sigma)
	return product.Mul(c.U, vs)
}
func (c Compressed) MulProfiles(p *mat.Dense) *mat.Dense {
	uc := product.MulT(c.U, p) // r × k
	scaleRowsBy(uc, c.Sigma)
	return product.Mul(c.V, uc)
}

// scaleRowsBy multiplies row i of x by f[i] in place.
func scaleRowsBy(x *mat.Dense, f []float64) {
	for i, v := range f {
		row := x.RawRowView(i)
		for j := range row {
			row[j] *= v
		}
	}
}
func (c Compressed) FrobeniusSq() float64 { return c.FrobSq }

// Options configure one ALS resolution.
type Options struct {
	Mode Mode
	// Closure: Σ_k w_k c_k(t) = Total for every row (species mode).
	Closure        bool
	Total          []float64 // one value for all rows, or one per row
	ClosureWeights []float64 // nil = all 1
	// NonNegProfiles / NonNegSpectra per component; nil = the mode's default
	// (profiles ≥ 0 in both modes; spectra ≥ 0 in species mode only).
	NonNegProfiles []bool
	NonNegSpectra  []bool
	// ZeroProfiles[k][i] pins c_k(t_i) = 0 (reference row, pre-reaction rows,
	// windows where evolving factor analysis found the component absent).
	ZeroProfiles [][]bool
	// ZeroSpectra[k][j] pins s_k at channel j to zero (an axis range where
	// the component is known not to absorb).
	ZeroSpectra [][]bool
	// KnownSpectra[k], when non-nil, fixes component k's spectrum.
	KnownSpectra [][]float64
	// KnownWeights[k] > 0 makes KnownSpectra[k] a soft equality: the
	// spectra step minimises ‖D − C Sᵀ‖² + λ_k ‖s_k − r_k‖² with
	// λ_k = KnownWeights[k]·‖c_k‖², so the weight is the reference's worth
	// relative to the data's information on that component, unit-free. Zero
	// or missing = exact.
	KnownWeights []float64
	// Unimodal[k] asks for a unimodal profile (Bro & Sidiropoulos 1998),
	// within each experiment's block of rows, with UnimodalTolerance (see
	// UnimodalTolerance).
	Unimodal          []bool
	UnimodalTolerance float64
	// Blocks holds the first row of each experiment of a column-wise
	// augmented matrix (rows of one experiment are contiguous); nil = one.
	Blocks []int
	// HardModel, when set, replaces profiles by a model fit inside each
	// cycle (hard–soft MCR, de Juan et al. 2000). It gets the soft profiles
	// and returns the profiles to use.
	HardModel func(c *mat.Dense) (*mat.Dense, error)
	// HardKept, when set with HardModel, is told after every iteration
	// whether ALS kept the profiles HardModel returned in it (an
	// extrapolated iteration that does not lower the residual is undone,
	// and so is one that starts a degenerate drift), so that the caller's
	// record of the model matches the profiles ALS goes on from. It returns
	// true when the model has settled (its parameters no longer change
	// beyond their uncertainty); ALS then stops, converged. With HardKept
	// set, hard–soft ALS extrapolates between iterations as soft ALS does;
	// without it, it cannot (the caller could not tell which fit was kept).
	HardKept func(kept bool) (settled bool)
	// Ridge, when positive, adds Ridge·tr(SᵀS)/k to the diagonal of the
	// profiles step's Gram matrix (Tikhonov regularisation). Reactions mode
	// uses it: with signed spectra and only X ≥ 0, ALS can drift toward a
	// degenerate pair of nearly equal extents with huge, cancelling spectra
	// that fits no better; a tiny ridge makes that drift uphill (the
	// "swamp" remedy of Navasca, De Lathauwer & Kindermann 2008, from
	// memory) while changing a well-conditioned solution by far less than
	// the noise.
	Ridge float64
	// NoExtrapolation turns off the line search between iterations (plain
	// ALS, for comparison and tests).
	NoExtrapolation bool
	MaxIter         int     // default 1000
	Tolerance       float64 // relative change of the residual sum of squares, default 1e-8
	// Observe, when set, is told the lack of fit after every iteration.
	Observe func(iter int, lackOfFitPercent float64)
	// AsideRows lists (ascending) rows the caller filled with a model's own values
	// (spectra set aside): they are fitted as every other row, but the
	// lack of fit reported (History, LackOfFitPercent, ExplainedPercent)
	// leaves them out, as a figure of the data (see asideFigure);
	// ResidualSS, the objective, stays over every row.
	AsideRows []int
	// Baseline, when set (m × b), adds b baseline terms with these fixed
	// shapes and free-sign coefficients per spectrum, fitted jointly with
	// the components (see baseline.go); Result.Baseline holds the
	// coefficients and C, S only the components.
	Baseline *mat.Dense
	// BaselineAnchors marks the spectra whose baseline is zero (nil: none):
	// the reference state the drift is counted from.
	BaselineAnchors []bool
	// FreeSplitFirst, with BaselineAnchors, resolves first with the split
	// between spectra and baseline free (every species lowered onto zero),
	// moves that fit exactly to the anchored split, and resolves anchored
	// from there: for a cold start. Anchored from the start alone, the
	// resolution of a real series with invented vapour lines subtracted
	// stopped at a worse fit (lack of fit 1.1603 against 1.1594 %) with the
	// reactant at 0.85 of the first spectrum, against 1.00 without the lines.
	FreeSplitFirst bool
	// LeastOthers marks spectra held at the lower edge of their feasible range: after
	// every spectra step they give up as much of the other spectra as non-negativity
	// allows (see lowest.go; for a minor species beside major ones, species mode).
	LeastOthers []bool
	// stopAt: stop (converged) once the residual is at or below it (0: never); the
	// refits of minor factors stop where an earlier refit got to (TestMinorFactors).
	stopAt float64
	// baselineTerms: the last baselineTerms components are baseline terms
	// (set by resolveWithBaseline; they may vanish without a warning).
	baselineTerms  int
	baselineBasis  *mat.Dense // orthonormal basis of the baseline shapes (species mode)
	baselineLanes  []float64  // envelopeLanes(baselineBasis), formed once for every iteration
	presentAtStart []bool     // the species present at the anchors in the start (presentAtAnchors): not lowered
	// stopAtRoundingFloor ends ALS at the first plain iteration that
	// raises the residual (see exactSteps in Resolve).
	stopAtRoundingFloor bool
}

// Result of a resolution.
type Result struct {
	C, S             *mat.Dense // n × k profiles, m × k spectra
	LackOfFitPercent float64    // 100 ‖D − C Sᵀ‖_F / ‖D‖_F, computed directly at the end
	ExplainedPercent float64    // 100 (1 − ‖E‖²/‖D‖²)
	ResidualSS       float64
	Iterations       int
	Converged        bool
	History          []float64 // lack of fit % of each accepted iteration
	// HistoryAt is the iteration number of each History entry: an
	// extrapolated step that did not lower the residual is undone and
	// leaves a gap, so the last number, not len(History), is Iterations.
	HistoryAt []int
	Warnings  []string
	// Degenerate: ALS was stopped because the components grew far beyond
	// the data's size while cancelling each other (see driftLimit).
	Degenerate bool
	// HardCreep: hard–soft ALS stopped because its residual no longer
	// reached a new low (see hardRises); the last iterate is kept, and
	// Converged is set.
	HardCreep bool
	// Baseline holds the n × b baseline coefficients when Options.Baseline
	// was set (nil otherwise).
	Baseline *mat.Dense
}

// hardRises and hardCreep define the creep of hard–soft ALS (see
// Resolve): that many kept iterations without a new lowest residual, the
// last within that fraction of the lowest (a transient rise while the
// model's parameters move far is larger).
const (
	hardRises = 20
	hardCreep = 1e-4
)

// driftLimit is the ratio Σ_k ‖c_k‖‖s_k‖ / ‖D‖_F above which components are
// taken to cancel each other: a resolution of real data has each component
// no larger than the data (ratio about k at most). With weights both sides
// are taken in the weighted metric (componentSizeW over √(Σ a_i b_j d²_ij)):
// the weighted norm of noise-scaled data is ‖D‖/σ, so an unweighted size
// over it moved the limit by 1/σ (to about 10⁶ at σ = 10⁻³).
const driftLimit = 1e3

// componentSize returns Σ_k ‖c_k‖ ‖s_k‖, which bounds ‖C Sᵀ‖_F.
func componentSize(c, s *mat.Dense) float64 { return componentSizeW(c, s, nil, nil) }

// componentSizeW returns Σ_k ‖√A c_k‖ ‖√B s_k‖, which bounds the weighted
// norm ‖√A C Sᵀ √B‖_F (triangle inequality and ‖x yᵀ‖_F = ‖x‖‖y‖); nil
// weights are ones.
func componentSizeW(c, s *mat.Dense, row, col []float64) float64 {
	_, k := c.Dims()
	sum := 0.0
	for j := 0; j < k; j++ {
		sum += normW(c, j, row) * normW(s, j, col)
	}
	return sum
}

// normW returns ‖√W x_j‖ for column j of x (‖x_j‖ when w is nil).
func normW(x *mat.Dense, j int, w []float64) float64 {
	if w == nil {
		return mat.Norm(x.ColView(j), 2)
	}
	r, _ := x.Dims()
	raw := x.RawMatrix()
	ss := 0.0
	for i, wi := range w[:r] {
		v := raw.Data[i*raw.Stride+j] // x.At(i, j) without its checks per value
		ss += wi * v * v
	}
	return math.Sqrt(ss)
}

// directResidual is implemented by Data that can form D − C Sᵀ itself.
type directResidual interface {
	ResidualSS(c, s *mat.Dense) float64
}

// ResidualSS returns ‖D − C Sᵀ‖²_F summed directly, row block by row block.
func (d Dense) ResidualSS(c, s *mat.Dense) float64 { return residualSSDense(d.D, c, s) }

// ResidualSS returns Σ a_i b_j (D − C Sᵀ)²_ij summed directly.
func (w WeightedDense) ResidualSS(c, s *mat.Dense) float64 {
	return residualSSWeighted(w.D, c, s, w.Row, w.Col)
}

// residualSS returns ‖D − C Sᵀ‖²_F (weighted for Weighted data): directly
// when the data can form it, else through orthonormal bases of the factors,
// C = Q_c R_c and S = Q_s R_s (QR), as ‖D‖² − 2⟨Q_cᵀ D Q_s, M⟩ + ‖M‖² with
// M = R_c R_sᵀ. M holds C Sᵀ in those bases, so its rounding scales with
// ‖C Sᵀ‖ and not with the factors' sizes as the trace identity's
// tr(CᵀC SᵀS) does. With weights the same holds for √A C and √B S; a zero
// weight leaves no such form, and then fallback (the identity's value) is
// returned.
func residualSS(d Data, c, s *mat.Dense, total, fallback float64) float64 {
	if dr, ok := d.(directResidual); ok {
		return dr.ResidualSS(c, s)
	}
	row, col := weightsOf(d)
	for _, w := range append(append([]float64(nil), row...), col...) {
		if !(w > 0) {
			return math.Max(fallback, 0)
		}
	}
	cw, sw := c, s
	if row != nil {
		cw, sw = scaleRows(c, row, 0.5), scaleRows(s, col, 0.5)
	}
	qc, rc := thinQR(cw)
	qs, rs := thinQR(sw)
	var mm mat.Dense
	mm.Mul(rc, rs.T())
	if row != nil {
		// d.MulProfiles(X) = Dᵀ A X; √B Dᵀ √A Q_c = √B · d.MulProfiles(A^{-1/2} Q_c).
		qc = scaleRows(qc, row, -0.5)
	}
	dq := d.MulProfiles(qc) // m × k
	if col != nil {
		dq = scaleRows(dq, col, 0.5)
	}
	var p mat.Dense
	p.Mul(qs.T(), dq) // k × k: (Q_cᵀ D Q_s)ᵀ, weighted
	ssr := total - 2*traceProd(p.T(), &mm) + frobSq(&mm)
	return math.Max(ssr, 0)
}

// thinQR returns the thin QR factors of a tall r × k matrix: Q (r × k)
// generated from the k Householder reflectors alone, O(r·k²). (mat.QR's
// QTo forms the full r × r Q, O(r²·k) time and r² memory: quadratic in the
// number of spectra and of points.)
func thinQR(a *mat.Dense) (*mat.Dense, *mat.Dense) {
	q := mat.DenseCopyOf(a)
	return q, thinQRInPlace(q)
}

// thinQRInPlace is thinQR overwriting a with Q; it returns R.
func thinQRInPlace(q *mat.Dense) *mat.Dense {
	_, k := q.Dims()
	raw := q.RawMatrix()
	tau := make([]float64, k)
	work := []float64{0}
	lapack64.Geqrf(raw, tau, work, -1)
	work = make([]float64, max(int(work[0]), k))
	lapack64.Geqrf(raw, tau, work, len(work))
	rr := mat.NewDense(k, k, nil)
	for i := 0; i < k; i++ {
		for j := i; j < k; j++ {
			rr.Set(i, j, raw.Data[i*raw.Stride+j])
		}
	}
	work = []float64{0}
	lapack64.Orgqr(raw, tau, work, -1)
	work = make([]float64, max(int(work[0]), k))
	lapack64.Orgqr(raw, tau, work, len(work))
	return rr
}

// eachResidualRow hands visit each row of D and of C Sᵀ in turn, computing
// C Sᵀ a row at a time (modelRow: the values of mat.Dense.Mul) so that no
// data-sized model is held. Every residual sum goes through it, so all of
// them add in the same order.
func eachResidualRow(d, c, s *mat.Dense, visit func(i int, drow, model []float64)) {
	n, m := d.Dims()
	_, k := c.Dims()
	if k > maxModelK {
		eachResidualRowGemm(d, c, s, visit)
		return
	}
	e := make([]float64, m)
	rs := s.RawMatrix()
	for i := 0; i < n; i++ {
		modelRow(e, c.RawRowView(i)[:k], rs.Data, rs.Stride)
		visit(i, d.RawRowView(i)[:m], e)
	}
}

// maxModelK is the most components modelRow takes: gonum's Dgemm sums the
// inner index in blocks of 64 terms, each block's dot product added to the
// entry in turn, which modelRow does not copy.
const maxModelK = 64

// eachResidualRowGemm is eachResidualRow with C Sᵀ from mat.Dense.Mul in
// blocks of rows, for more than maxModelK components.
func eachResidualRowGemm(d, c, s *mat.Dense, visit func(i int, drow, model []float64)) {
	n, m := d.Dims()
	const block = 256
	var e mat.Dense
	for lo := 0; lo < n; lo += block {
		hi := min(n, lo+block)
		e.Reset()
		e.Mul(c.Slice(lo, hi, 0, c.RawMatrix().Cols), s.T())
		for i := lo; i < hi; i++ {
			visit(i, d.RawRowView(i)[:m], e.RawRowView(i-lo))
		}
	}
}

// residualSSWeighted sums a_i b_j (D − C Sᵀ)²_ij in row blocks.
func residualSSWeighted(d, c, s *mat.Dense, row, col []float64) float64 {
	ssr := 0.0
	eachResidualRow(d, c, s, func(i int, drow, erow []float64) {
		r := 0.0
		for j, v := range drow {
			x := v - erow[j]
			r += col[j] * x * x
		}
		ssr += row[i] * r
	})
	return ssr
}

// residualSSDense sums (D − C Sᵀ)² in row blocks, in the same order as
// LackOfFit, so the two agree to the bit.
func residualSSDense(d, c, s *mat.Dense) float64 {
	ssr := 0.0
	eachResidualRow(d, c, s, func(_ int, drow, erow []float64) {
		for j, v := range drow {
			r := v - erow[j]
			ssr += r * r
		}
	})
	return ssr
}

// Resolve runs alternating least squares from the initial profiles c0
// (n × k): S = argmin ‖D − C Sᵀ‖ under the spectra's constraints, then
// C = argmin ‖D − C Sᵀ‖ under the profiles' constraints, until the residual
// sum of squares changes by less than Tolerance (relative) or MaxIter.
// Each half step is the exact constrained least-squares solution for its
// block (SolveMany), so the residual never increases except through the
// normalisation, which leaves C Sᵀ unchanged.
func Resolve(d Data, c0 *mat.Dense, opt Options) (*Result, error) {
	if opt.Baseline != nil {
		return resolveWithBaseline(d, c0, opt)
	}
	r, err := newALSRun(d, c0, opt)
	if err != nil {
		return nil, err
	}
	for it := 1; it <= r.opt.MaxIter; it++ {
		done, err := r.iterate(it)
		if err != nil {
			return nil, err
		}
		if done {
			break
		}
	}
	return r.finish(), nil
}

// alsRun is one resolution between its iterations: the data, the
// constraints, the current iterate and what the stopping tests remember.
type alsRun struct {
	d       Data
	opt     Options
	cs      *alsConstraints
	n, m, k int
	total   float64 // ‖D‖²_F (weighted)
	c, s    *mat.Dense
	// cPrev: the profiles the last kept iteration started from, for the
	// extrapolation (nil: the next iteration takes a plain step).
	cPrev *mat.Dense
	prev  float64 // the residual of the last kept iteration
	ext   extrapolation
	// accelerate: extrapolate between iterations; exactSteps: see newALSRun.
	accelerate, exactSteps bool
	// best and sinceBest follow hard–soft ALS's creep (see accept).
	best      float64
	sinceBest int
	// Passive sets carried from one iteration to the next (warm start).
	passS, passC []uint64
	res          *Result
	w            alsWork
	aside        *asideFigure // Options.AsideRows, nil without
}

// newALSRun checks the shapes, sets the defaults and forms the constraints
// of a resolution from c0.
func newALSRun(d Data, c0 *mat.Dense, opt Options) (*alsRun, error) {
	n, m := d.Dims()
	rc, k := c0.Dims()
	if rc != n {
		return nil, fmt.Errorf("resolve: initial profiles have %d rows, data has %d", rc, n)
	}
	if k < 1 {
		return nil, errors.New("resolve: need at least one component")
	}
	if k > min(n, m) {
		return nil, fmt.Errorf("resolve: %d components but the data is only %d × %d; ask for at most %d", k, n, m, min(n, m))
	}
	if opt.MaxIter <= 0 {
		opt.MaxIter = 1000
	}
	if opt.Tolerance <= 0 {
		opt.Tolerance = 1e-8
	}
	total := d.FrobeniusSq()
	if !(total > 0) {
		return nil, errors.New("resolve: the data matrix is all zeros: nothing to resolve")
	}
	cs, err := resolveConstraints(&opt, n, m, k)
	if err != nil {
		return nil, err
	}
	r := &alsRun{d: d, opt: opt, cs: cs, n: n, m: m, k: k, total: total,
		c: mat.DenseCopyOf(c0), prev: math.Inf(1), best: math.Inf(1),
		passS: make([]uint64, m), passC: make([]uint64, n), res: &Result{}}
	r.w = newALSWork(d, k)
	r.aside = newAsideFigure(d, opt.AsideRows)
	// A hard model is handed the profiles and may keep them.
	r.w.recycle = opt.HardModel == nil
	clampColumns(r.c, cs.nnP)
	// Extrapolation: each iteration starts from the profiles pushed further
	// along the last update, C + step·(C − C_prev), clipped to the
	// constraints' cone; the exact half-steps that follow restore every
	// constraint. The iteration is kept only if it lowers the residual, so
	// the residual still decreases monotonically; otherwise the next one
	// starts again from C with step 1. This is the line search used to leave
	// the slow valleys of ALS (Bro, PhD thesis 1998; Rajih, Comon & Harshman,
	// SIAM J. Matrix Anal. Appl. 2008): on the demo data it needs 43
	// iterations instead of 560 for the same lack of fit. How far the step
	// may grow is learnt in long runs (see extrapolation).
	r.ext = extrapolation{step: 1, cap: stepCap}
	r.accelerate = (opt.HardModel == nil || opt.HardKept != nil) && !opt.NoExtrapolation
	// exactSteps: both half steps minimise the residual itself (no
	// projection, model, ridge or soft reference in the objective), and the
	// caller asked to stop at the rounding floor (constraint checks: a
	// refit without a constraint can free a rotation whose Gram blocks are
	// so ill-conditioned that it never meets the tolerance). A resolution
	// proper keeps iterating there, since in a flat valley tiny genuine
	// decreases alternate with rounding rises and decide between starts.
	r.exactSteps = opt.stopAtRoundingFloor && opt.HardModel == nil && cs.softRef == nil && opt.Ridge == 0
	for _, u := range opt.Unimodal {
		r.exactSteps = r.exactSteps && !u
	}
	return r, nil
}

// iterate runs ALS's iteration it: the extrapolated start, both half
// steps, the residual, and whether the iteration is kept; done when the
// resolution stops.
func (r *alsRun) iterate(it int) (done bool, err error) {
	cPlain, sPlain := r.c, r.s
	extrapolated := r.extrapolate()
	if err := r.spectraHalf(it); err != nil {
		return false, err
	}
	ds, g, err := r.profilesHalf(it, cPlain)
	if err != nil {
		return false, err
	}
	ssr := r.traceResidual(ds, g)
	if r.drifted(it, cPlain, sPlain, extrapolated) {
		return r.res.Degenerate, nil
	}
	if extrapolated && !(ssr < r.prev) {
		// Rejected: back to the last accepted iterate, plain step next.
		r.kept(false)
		r.ext.rejected(it)
		r.c, r.s, r.cPrev = cPlain, sPlain, nil
		r.res.Iterations = it
		return false, nil
	}
	if !extrapolated && r.exactSteps && it > 1 && ssr > r.prev {
		// Each half step is the exact constrained minimiser for its
		// block, so a plain iteration cannot raise the residual: a rise
		// means the changes have sunk below rounding (ill-conditioned
		// Gram blocks, as when a dropped constraint frees a rotation)
		// and more iterations would only stir rounding noise. Keep the
		// last iterate, which fits better.
		r.c, r.s = cPlain, sPlain
		r.res.Converged = true
		r.res.Iterations = it
		return true, nil
	}
	if extrapolated {
		r.ext.accepted(it)
	}
	return r.accept(it, ssr, cPlain), nil
}

// kept tells the hard model's caller whether the iteration's profiles were
// kept; true when the model has settled.
func (r *alsRun) kept(k bool) bool {
	if r.opt.HardModel == nil || r.opt.HardKept == nil {
		return false
	}
	return r.opt.HardKept(k)
}

// extrapolate replaces the profiles by C + step·(C − C_prev), clipped to
// the constraints' cone, when the last iteration was kept; it reports
// whether it did.
func (r *alsRun) extrapolate() bool {
	if !r.accelerate || r.cPrev == nil {
		return false
	}
	// ce lives until the profiles step replaces it (or the iteration is
	// undone), so one buffer serves every iteration.
	if r.w.ce == nil {
		r.w.ce = mat.NewDense(r.n, r.k, nil)
	}
	ce := r.w.ce
	ce.Sub(r.c, r.cPrev)
	ce.Scale(r.ext.step, ce)
	ce.Add(r.c, ce)
	clampColumns(ce, r.cs.nnP)
	r.c = ce
	return true
}

// spectraHalf is the spectra's half step and what follows it: the baseline
// split, the spectra held low, and the spectra's normalisation.
func (r *alsRun) spectraHalf(it int) error {
	s, err := r.spectraStep(it)
	if err != nil {
		return err
	}
	r.s = s
	if r.opt.baselineBasis != nil {
		lowerSpectra(s, r.k-r.opt.baselineTerms, withoutPresent(lowerable(r.cs.nnS, r.cs.knownMask), r.opt.presentAtStart), r.opt.baselineBasis, r.opt.baselineLanes)
	}
	if r.opt.LeastOthers != nil {
		takeOthers(s, r.opt.LeastOthers, r.k-r.opt.baselineTerms)
	}
	if !r.opt.Closure {
		// The profiles would take each spectrum's scale, but the profiles
		// step that follows replaces them whatever their scale (and c may
		// still be cPlain, the profiles that go with sPlain if this
		// iteration is undone): only the spectra are scaled.
		normaliseSpectra(s, r.cs.scaleSet)
	}
	return nil
}

// profilesHalf is the profiles' half step (Gram SᵀBS, right-hand sides
// Sᵀ B Dᵀ), then unimodality and the hard model. It returns D B S and SᵀBS
// for the residual's trace identity. cPlain: the profiles the iteration
// started from, kept in case it is undone.
func (r *alsRun) profilesHalf(it int, cPlain *mat.Dense) (*mat.Dense, *mat.SymDense, error) {
	g, ds := r.w.spectraProducts(r.d, r.s) // SᵀBS, D B S (n × k)
	gp := g
	if r.opt.Ridge > 0 {
		gp = ridged(g, r.opt.Ridge)
	}
	pr := Problem{G: gp, NonNeg: r.cs.nnP, FixMask: r.cs.zeroMask, Fixed: r.cs.zerosKN, Passive: r.passC}
	if r.opt.Closure {
		pr.Equality, pr.Total = r.cs.eq, r.opt.Total
	}
	c, err := solveRows(pr, ds, r.w.output(r.w.cOut[:], r.n, r.k, cPlain))
	if err != nil {
		return nil, nil, fmt.Errorf("resolve: profiles step, iteration %d: %w", it, err)
	}
	r.c = c
	if r.opt.Unimodal != nil {
		unimodalProfiles(r.c, r.opt.Unimodal, r.cs.blocks, r.opt.UnimodalTolerance)
	}
	if r.opt.HardModel != nil {
		hc, err := r.opt.HardModel(r.c)
		if err != nil {
			return nil, nil, fmt.Errorf("resolve: hard model, iteration %d: %w", it, err)
		}
		r.c = hc
	}
	return ds, g, nil
}

// unimodalProfiles makes the profiles asked for unimodal within each
// experiment's block of rows (blocks: each block's first row).
func unimodalProfiles(c *mat.Dense, unimodal []bool, blocks []int, tol float64) {
	n, k := c.Dims()
	for j := 0; j < k && j < len(unimodal); j++ {
		if !unimodal[j] {
			continue
		}
		col := mat.Col(nil, j, c)
		for bi, lo := range blocks {
			hi := n
			if bi+1 < len(blocks) {
				hi = blocks[bi+1]
			}
			copy(col[lo:hi], UnimodalTolerance(col[lo:hi], tol))
		}
		c.SetCol(j, col)
	}
}

// traceResidual returns the residual sum of squares of the current C and S
// from the trace identity ‖D − C Sᵀ‖² = ‖D‖² − 2 tr(Cᵀ D S) + tr(CᵀC SᵀS)
// (D S and SᵀS from the profiles step, valid for the current S); weighted,
// Σ a_i b_j e_ij² = ‖D‖²_w − 2 tr(Cᵀ A D B S) + tr(CᵀAC SᵀBS).
func (r *alsRun) traceResidual(ds *mat.Dense, g *mat.SymDense) float64 {
	tcd := traceScaled(r.c, r.w.rowW, ds)
	tcs := traceProd(r.w.profilesGram(r.c), g)
	ssr := r.total - 2*tcd + tcs
	if ssr < 1e-6*(r.total+2*math.Abs(tcd)+math.Abs(tcs)) {
		// The identity's terms cancel to within a millionth: rounding
		// could be most of what is left, so compute the residual in a
		// form whose error scales with the fit, not with the factors.
		ssr = r.w.residualSS(r.d, r.c, r.s, r.total, ssr)
	}
	return ssr
}

// drifted reports whether the components of iteration it grew far larger
// than the data while cancelling in C Sᵀ: a degenerate drift (the fit
// gains nothing by it; Navasca, De Lathauwer & Kindermann 2008, from
// memory). The last iterate before it is kept; an extrapolated iteration
// is undone and the next takes a plain step, a plain one stops the
// resolution (Result.Degenerate).
func (r *alsRun) drifted(it int, cPlain, sPlain *mat.Dense, extrapolated bool) bool {
	drift := componentSizeW(r.c, r.s, r.w.rowW, r.w.colW) / math.Sqrt(r.total)
	if !(drift > driftLimit) || sPlain == nil {
		return false
	}
	r.kept(false)
	r.c, r.s = cPlain, sPlain
	r.res.Iterations = it
	if extrapolated {
		r.cPrev, r.ext.step = nil, 1
		return true
	}
	r.res.Degenerate = true
	r.res.Warnings = append(r.res.Warnings, fmt.Sprintf("components grew to %.3g times the data's size and cancel each other (a degenerate drift): stopped at iteration %d, where they were still of the data's size", drift, it))
	return true
}

// accept keeps iteration it with residual ssr (cPlain: the profiles it
// started from before any extrapolation) and reports whether ALS stops:
// converged, settled hard model, or hard–soft creep.
func (r *alsRun) accept(it int, ssr float64, cPlain *mat.Dense) bool {
	settled := r.kept(true)
	if r.opt.HardKept != nil {
		// Hard–soft ALS is no descent method (the model is fitted to
		// the soft profiles, not to the data), and once it has passed
		// its best fit it can creep for hundreds of iterations along a
		// direction the data hardly determine, extrapolated steps
		// down and plain ones up. hardRises kept iterations without a
		// new lowest residual, all within hardCreep of it, are that
		// creep: stop there.
		if ssr < r.best {
			r.best, r.sinceBest = ssr, 0
		} else {
			r.sinceBest++
		}
		if r.sinceBest >= hardRises && ssr-r.best < hardCreep*ssr {
			settled = true
			r.res.HardCreep = true
		}
	}
	r.cPrev = cPlain
	lof := 100 * math.Sqrt(r.keptShare(ssr))
	r.res.History = append(r.res.History, lof)
	r.res.HistoryAt = append(r.res.HistoryAt, it)
	r.res.Iterations = it
	if r.opt.Observe != nil {
		r.opt.Observe(it, lof)
	}
	prev := r.prev
	r.prev = ssr
	if settled || math.Abs(prev-ssr) <= r.opt.Tolerance*math.Max(ssr, 1e-300*r.total) || ssr <= 1e-28*r.total || ssr <= r.opt.stopAt {
		r.res.Converged = true
		return true
	}
	return false
}

// finish returns the result: the last kept iterate, its residual computed
// directly, and the warnings.
func (r *alsRun) finish() *Result {
	res := r.res
	res.C, res.S = r.c, r.s
	// The reported residual is computed directly, never carried over from
	// the trace identity: it is what a chemist quotes.
	ss := r.w.residualSS(r.d, r.c, r.s, r.total, r.prev)
	res.ResidualSS = ss
	share := r.keptShare(ss)
	res.LackOfFitPercent = 100 * math.Sqrt(share)
	res.ExplainedPercent = 100 * (1 - share)
	for j := 0; j < r.k-r.opt.baselineTerms; j++ {
		if floatsMaxAbs(mat.Col(nil, j, r.c)) == 0 {
			res.Warnings = append(res.Warnings, fmt.Sprintf("component %d vanished: its profile is zero everywhere; try one component fewer", j+1))
		}
	}
	if !res.Converged {
		res.Warnings = append(res.Warnings, fmt.Sprintf("not converged after %d iterations (last relative change above %.1g)", res.Iterations, r.opt.Tolerance))
	}
	return res
}

// alsConstraints are the constraints of Resolve in the form its half steps
// take them: non-negativity per component, the closure row, fixed values
// (known spectra, zero windows) and the soft references.
type alsConstraints struct {
	nnP, nnS        []bool
	eq              []float64
	knownS, softRef *mat.Dense
	knownMask       [][]bool
	softW           []float64
	scaleSet        [][]bool // components whose scale is set from outside
	blocks          []int
	zeroMask        [][]bool
	zerosKN         *mat.Dense
}

// resolveConstraints checks opt's constraints against the data's shape
// (n × m, k components) and forms them; it also sets opt.Total's default.
func resolveConstraints(opt *Options, n, m, k int) (*alsConstraints, error) {
	cs := &alsConstraints{nnP: boolsOr(opt.NonNegProfiles, k, true), nnS: boolsOr(opt.NonNegSpectra, k, opt.Mode == Species)}
	if opt.Closure {
		cs.eq = opt.ClosureWeights
		if cs.eq == nil {
			cs.eq = ones(k)
		}
		if len(opt.Total) == 0 {
			opt.Total = []float64{1}
		}
	}
	known, err := cs.knownSpectra(opt, m, k)
	if err != nil {
		return nil, err
	}
	if err := cs.zeroWindows(opt, m, k, known); err != nil {
		return nil, err
	}
	// normaliseSpectra must leave alone only the components whose scale is
	// set from outside (known spectra, exact or soft), not the ones that
	// merely have zero windows.
	if known {
		cs.scaleSet = make([][]bool, k)
		for j, s := range opt.KnownSpectra {
			if s != nil && j < k {
				cs.scaleSet[j] = cs.knownMask[j]
			}
		}
	}
	cs.blocks = opt.Blocks
	if len(cs.blocks) == 0 {
		cs.blocks = []int{0}
	}
	for b, f := range cs.blocks {
		if f < 0 || f >= n || b > 0 && f <= cs.blocks[b-1] {
			return nil, fmt.Errorf("resolve: experiment blocks %v are not increasing row indices below %d", cs.blocks, n)
		}
	}
	if opt.ZeroProfiles != nil {
		cs.zeroMask = make([][]bool, k)
		for j := 0; j < k && j < len(opt.ZeroProfiles); j++ {
			cs.zeroMask[j] = opt.ZeroProfiles[j]
		}
	}
	cs.zerosKN = mat.NewDense(k, n, nil)
	return cs, nil
}

// knownSpectra forms the known spectra of opt: exact ones as fixed values
// (knownS under knownMask), soft ones as references (softRef, softW). It
// reports whether any spectrum is known.
func (cs *alsConstraints) knownSpectra(opt *Options, m, k int) (bool, error) {
	known := false
	for _, s := range opt.KnownSpectra {
		if s != nil {
			known = true
		}
	}
	if !known {
		return false, nil
	}
	cs.knownS = mat.NewDense(k, m, nil)
	cs.knownMask = make([][]bool, k)
	for j, s := range opt.KnownSpectra {
		if s == nil {
			continue
		}
		if j >= k {
			return true, fmt.Errorf("resolve: known spectrum for component %d but only %d components", j+1, k)
		}
		if len(s) != m {
			return true, fmt.Errorf("resolve: known spectrum %d has %d points, data has %d", j+1, len(s), m)
		}
		if j < len(opt.KnownWeights) && opt.KnownWeights[j] > 0 {
			if cs.softRef == nil {
				cs.softRef, cs.softW = mat.NewDense(k, m, nil), make([]float64, k)
			}
			cs.softW[j] = opt.KnownWeights[j]
			cs.softRef.SetRow(j, s)
			// Soft: keep the component out of normalisation, since
			// the reference sets its scale.
			cs.knownMask[j] = make([]bool, m)
			continue
		}
		cs.knownMask[j] = make([]bool, m)
		for i, v := range s {
			cs.knownS.Set(j, i, v)
			cs.knownMask[j][i] = true
		}
	}
	return true, nil
}

// zeroWindows adds opt's zero windows of the spectra to the fixed values
// (at zero), except on spectra known exactly, which are fixed throughout.
func (cs *alsConstraints) zeroWindows(opt *Options, m, k int, known bool) error {
	if opt.ZeroSpectra == nil {
		return nil
	}
	if cs.knownMask == nil {
		cs.knownMask = make([][]bool, k)
		cs.knownS = mat.NewDense(k, m, nil)
	}
	for j := 0; j < k && j < len(opt.ZeroSpectra); j++ {
		z := opt.ZeroSpectra[j]
		if z == nil || (known && j < len(opt.KnownSpectra) && opt.KnownSpectra[j] != nil && (cs.softW == nil || cs.softW[j] == 0)) {
			continue
		}
		if len(z) != m {
			return fmt.Errorf("resolve: zero window of spectrum %d has %d points, data has %d", j+1, len(z), m)
		}
		if cs.knownMask[j] == nil {
			cs.knownMask[j] = make([]bool, m)
		}
		for i, v := range z {
			cs.knownMask[j][i] = cs.knownMask[j][i] || v
		}
	}
	return nil
}

// spectraStep is ALS's half step for the spectra: S = argmin ‖D − C Sᵀ‖
// (weighted) under the spectra's constraints, with the Gram matrix CᵀAC and
// the right-hand sides Cᵀ A D (as the rows of Dᵀ A C).
func (r *alsRun) spectraStep(it int) (*mat.Dense, error) {
	cs := r.cs
	g, bt := r.w.profilesProducts(r.d, r.c) // m × k
	if cs.softRef != nil {
		g, bt = softKnown(g, bt, cs.softRef, cs.softW)
	}
	out := r.w.output(r.w.sOut[:], r.m, r.k, r.s)
	s, err := solveRows(Problem{G: g, NonNeg: cs.nnS, FixMask: cs.knownMask, Fixed: cs.knownS, Passive: r.passS}, bt, out)
	if err != nil {
		return nil, fmt.Errorf("resolve: spectra step, iteration %d: %w", it, err)
	}
	return s, nil
}

// extrapolation is the step of ALS's extrapolation (see Resolve). Each kept
// extrapolated iteration lets the step grow by stepGrowth up to cap (at most
// stepCap); a rejected one sends the next iteration back to a plain step and
// the step to 1.
//
// In a long run the cap is learnt: from iteration stepLearnFrom on, a
// rejected step s caps the following ones at the last kept step, s/stepGrowth
// (not below stepCapFloor), and every step kept at the cap raises it by
// stepCapRise. With the cap fixed at 20, the curved valleys of the
// noise-weighted problem rejected steps of 3–5 every few iterations, each
// rejection cost a whole iteration and sent the growth back to 1, so most
// iterations ran at steps 1–2: on the demo both starts took over 500
// iterations (52 and 107 with --weights off), on the six-species benchmark
// 501 and 1000, the second stopped unconverged. Learnt, they take 147 and
// 169 (both at the same minimum, which neither start reached before), and
// 351 and 809, both converged and lower (docs/performance-history.md; a rise of 5 or
// 10 % per step took 490 and 547 on the demo). The learning waits for
// iteration 100 because early rejections follow the first iterations' large
// moves, not the valley (on the demo the first rejections fell within the
// first 40 iterations), and so that runs that end sooner keep their path
// bit for bit: on the ATR series every resolution and refit does, while a
// cap learnt from the first iteration moved the split between species and
// baseline there (lack of fit 1.516 → 1.27 %) and made the minor-factor
// test count a third species at catalyst 0.01.
type extrapolation struct {
	step, cap float64
}

const (
	stepGrowth    = 1.3
	stepCap       = 20
	stepLearnFrom = 100
	stepCapFloor  = 1.2
	stepCapRise   = 1.025
)

// accepted is told that the extrapolated iteration it, at the current step,
// was kept.
func (e *extrapolation) accepted(it int) {
	if it > stepLearnFrom && e.step >= e.cap {
		e.cap *= stepCapRise
	}
	top := math.Min(e.cap, stepCap)
	e.step *= stepGrowth
	if e.step > top*(1-1e-9) {
		// At the cap, also when the growth from 1 lands a rounding below
		// it (a cap learnt as s/1.3 is a power of 1.3, as the steps are).
		e.step = top
	}
}

// rejected is told that the extrapolated iteration it was undone.
func (e *extrapolation) rejected(it int) {
	if it > stepLearnFrom {
		e.cap = math.Max(stepCapFloor, e.step/stepGrowth)
	}
	e.step = 1
}

// softKnown adds the soft equality λ_k ‖s_k − r_k‖² to the spectra step:
// G + diag(λ) and B + diag(λ) R, with λ_k = w_k·G_kk so the weight does
// not depend on the units of the data or the scale of the profiles.
func softKnown(g *mat.SymDense, bt, ref *mat.Dense, w []float64) (*mat.SymDense, *mat.Dense) {
	m, k := bt.Dims()
	g2 := mat.NewSymDense(k, nil)
	g2.CopySym(g)
	b2 := mat.DenseCopyOf(bt)
	for j := 0; j < k; j++ {
		if w[j] <= 0 {
			continue
		}
		lam := w[j] * math.Max(g.At(j, j), 1e-300)
		g2.SetSym(j, j, g.At(j, j)+lam)
		for i := 0; i < m; i++ {
			b2.Set(i, j, bt.At(i, j)+lam*ref.At(j, i))
		}
	}
	return g2, b2
}

// Residuals returns D − C Sᵀ on the full data and its lack of fit %.
func Residuals(d *mat.Dense, c, s *mat.Dense) (*mat.Dense, float64) {
	var e mat.Dense
	e.Mul(c, s.T())
	e.Sub(d, &e)
	tot := frobSq(d)
	if tot == 0 {
		return &e, 0
	}
	return &e, 100 * math.Sqrt(frobSq(&e)/tot)
}

// LackOfFit returns 100 ‖D − C Sᵀ‖_F / ‖D‖_F on the full data without
// storing the residual matrix: rows are taken in blocks, so the extra memory
// is one block, not another data-sized matrix. The squares are summed in
// the same row-by-row order as frobSq, so the value is the same to the bit
// as Residuals'.
func LackOfFit(d, c, s *mat.Dense) float64 {
	ssr := residualSSDense(d, c, s)
	tot := frobSq(d)
	if tot == 0 {
		return 0
	}
	return 100 * math.Sqrt(ssr/tot)
}

func boolsOr(b []bool, k int, def bool) []bool {
	out := make([]bool, k)
	for j := range out {
		out[j] = def
		if j < len(b) {
			out[j] = b[j]
		}
	}
	return out
}

func ones(k int) []float64 {
	o := make([]float64, k)
	for i := range o {
		o[i] = 1
	}
	return o
}

func clampColumns(c *mat.Dense, nonneg []bool) {
	n, k := c.Dims()
	for j := 0; j < k; j++ {
		if !nonneg[j] {
			continue
		}
		for i := 0; i < n; i++ {
			if c.At(i, j) < 0 {
				c.Set(i, j, 0)
			}
		}
	}
}

// normaliseSpectra fixes the scale ambiguity (c_k s_kᵀ = (a c_k)(s_k/a)ᵀ) by
// unit Euclidean norm of each free spectrum. The profile would take the
// scale, but ALS's profiles step, which follows, sets the profiles anew.
func normaliseSpectra(s *mat.Dense, known [][]bool) {
	m, k := s.Dims()
	raw := s.RawMatrix()
	for j := 0; j < k; j++ {
		if known != nil && known[j] != nil {
			continue
		}
		norm := 0.0
		for i := 0; i < m; i++ {
			v := raw.Data[i*raw.Stride+j]
			norm += v * v
		}
		norm = math.Sqrt(norm)
		if norm == 0 {
			continue
		}
		for i := 0; i < m; i++ {
			raw.Data[i*raw.Stride+j] /= norm
		}
	}
}

// ScaleExtentsToOne makes each profile's largest value 1, the spectrum
// taking the scale: in reactions mode a reaction spectrum then reads as the
// absorbance change at the largest extent reached.
func ScaleExtentsToOne(c, s *mat.Dense) {
	n, k := c.Dims()
	for j := 0; j < k; j++ {
		mx := 0.0
		for i := 0; i < n; i++ {
			mx = math.Max(mx, c.At(i, j))
		}
		if mx != 0 {
			moveScale(c, s, j, mx)
		}
	}
}

// moveScale divides column j of a by f and multiplies column j of b by f,
// which leaves the product a_j b_jᵀ unchanged (the scale ambiguity of a
// bilinear model).
func moveScale(a, b *mat.Dense, j int, f float64) {
	na, _ := a.Dims()
	nb, _ := b.Dims()
	for i := 0; i < na; i++ {
		a.Set(i, j, a.At(i, j)/f)
	}
	for i := 0; i < nb; i++ {
		b.Set(i, j, b.At(i, j)*f)
	}
}

// gram returns aᵀa. Its upper triangle is summed as gonum's SymOuterK (Dsyrk)
// sums it, row by row of a with each product rounded before it is added, and
// the lower one mirrors it; product.MulT forms the k × k sums without a
// vector-kernel call per entry of a (twice the products, a third of the time
// at k = 6).
func gram(a *mat.Dense) *mat.SymDense {
	_, k := a.Dims()
	full := product.MulT(a, a)
	g := mat.NewSymDense(k, nil)
	for i := 0; i < k; i++ {
		for j := i; j < k; j++ {
			g.SetSym(i, j, full.At(i, j))
		}
	}
	return g
}

// transpose returns aᵀ as a new matrix, each row of a read once and its
// entries set down a column: mat.DenseCopyOf of a.T() copies a transposed
// matrix one strided vector at a time through gonum's copy routine, which
// at the few rows of ALS's factors (k × 3001 and back, four times an
// iteration) cost more than the copying (7 ms CPU a resolution at
// 2000 × 3001).
func transpose(a *mat.Dense) *mat.Dense {
	r, c := a.Dims()
	out := mat.NewDense(c, r, nil)
	src, dst := a.RawMatrix(), out.RawMatrix()
	for i := 0; i < r; i++ {
		for j, v := range src.Data[i*src.Stride : i*src.Stride+c] {
			dst.Data[j*dst.Stride+i] = v
		}
	}
	return out
}

// traceProd returns tr(Aᵀ B) = Σ a_ij b_ij (for symmetric B also tr(A B)).
func traceProd(a, b mat.Matrix) float64 {
	r, c := a.Dims()
	s := 0.0
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			s += a.At(i, j) * b.At(i, j)
		}
	}
	return s
}

func frobSq(a mat.Matrix) float64 {
	r, c := a.Dims()
	s := 0.0
	if d, ok := a.(*mat.Dense); ok {
		// Same order as below, without At's bounds checks per value.
		for i := 0; i < r; i++ {
			for _, v := range d.RawRowView(i)[:c] {
				s += v * v
			}
		}
		return s
	}
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			v := a.At(i, j)
			s += v * v
		}
	}
	return s
}

func floatsMaxAbs(x []float64) float64 {
	m := 0.0
	for _, v := range x {
		m = math.Max(m, math.Abs(v))
	}
	return m
}

// ridged returns g + λ·(tr g / k)·I.
func ridged(g *mat.SymDense, lambda float64) *mat.SymDense {
	k, _ := g.Dims()
	tr := 0.0
	for i := 0; i < k; i++ {
		tr += g.At(i, i)
	}
	out := mat.NewSymDense(k, nil)
	out.CopySym(g)
	for i := 0; i < k; i++ {
		out.SetSym(i, i, g.At(i, i)+lambda*tr/float64(k))
	}
	return out
}

// presentAtAnchors marks the species of c (the start's profiles) present
// in an anchor spectrum: above anchorShare of their largest amount there.
// nil without anchors. The mask is made once, from the start: taken from
// each iterate, it would switch a species' lowering on and off as its
// amount crosses the share.
func presentAtAnchors(c *mat.Dense, anchors []bool) []bool {
	if anchors == nil || c == nil {
		return nil
	}
	n, k := c.Dims()
	out := make([]bool, k)
	for j := range k {
		top := 0.0
		for i := range n {
			top = math.Max(top, c.At(i, j))
		}
		for i, a := range anchors {
			if a && i < n && c.At(i, j) > anchorShare*top {
				out[j] = true
			}
		}
	}
	return out
}

// withoutPresent clears in ok the species marked present (ok itself for nil).
func withoutPresent(ok, present []bool) []bool {
	for j, p := range present {
		if p && j < len(ok) {
			ok[j] = false
		}
	}
	return ok
}

// anchorShare is the share of its largest concentration above which a
// species counts as present in an anchor spectrum.
const anchorShare = 0.05

// lowerable marks the non-negative spectra that the baseline split may lower: not those
// with values held fixed (a known spectrum, a zero window), which lowering would move off
// the values they are held at.
func lowerable(nonneg []bool, fixed [][]bool) []bool {
	out := append([]bool(nil), nonneg...)
	for j := range out {
		if j < len(fixed) {
			for _, f := range fixed[j] {
				if f {
					out[j] = false
					break
				}
			}
		}
	}
	return out
}
