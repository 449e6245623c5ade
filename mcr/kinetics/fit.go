package kinetics

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"
	"sync/atomic"

	"github.com/bandsolve/bandsolve/internal/product"
	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
)

// FitOptions controls FitProfiles, AutoMap and FitData.
type FitOptions struct {
	// T0 is the time the reaction starts; c = c0 before it.
	T0 float64
	// InitialK holds starting rate constants (one per step, > 0 where free). nil chooses them
	// from the time scale of the data: a small grid of k·T values is screened and the best
	// few starts are refined.
	InitialK []float64
	// FixedK marks steps whose rate constant is held at InitialK (nil: all free).
	FixedK []bool
	// C0 holds the initial concentrations; nil means 1 for the first species, 0 for the others.
	C0 []float64
	// FitC0 also fits the non-zero entries of C0 (on a log scale); zero entries stay zero.
	FitC0 bool
	// FitT0 also fits the start time, from T0 (moved 1 % of the range
	// inside when it is on an end), within T0Lo to T0Hi, or, both zero,
	// within T0Bracket(times, T0) (t0fit.go).
	FitT0      bool
	T0Lo, T0Hi float64
	// Amplitudes scales each observed column by its own factor a_j, solved linearly inside
	// every residual evaluation (variable projection, Golub & Pereyra 1973): resolved profiles
	// have arbitrary scale.
	Amplitudes bool
	// UseExtents compares the observed columns with reaction extents ξ_j instead of
	// concentrations (difference data resolve reactions, not species).
	UseExtents bool
	// RowWeights and ColWeights, for FitData, are noise weights a_i (per
	// spectrum; 0 leaves the spectrum out) and b_j (per channel), about
	// 1/σ²: the fit then minimises
	// Σ a_i b_j (d_ij − (C Sᵀ)_ij)², the maximum-likelihood fit for noise of
	// those variances (Wentzell et al., J. Chemometrics 1997). Since S is
	// free, √B is absorbed into it: the data are scaled to √A D √B and the
	// model to √A C, and the spectra scaled back. nil = 1.
	RowWeights, ColWeights []float64
	// Reduced, for FitData, is the reduction of the same (weighted) data
	// an earlier FitData returned in FitResult.Reduced: refits of one data
	// matrix (other starting constants, other orders) then skip the
	// randomized SVD. Ignored unless it has one row per spectrum.
	Reduced *mat.Dense
	// Scaled, for FitData with noise weights, is the weighted data
	// √A D √B of the same data and weights, as an earlier FitData returned
	// it in FitResult.Scaled: refits skip the pass that forms it. Ignored
	// unless it has the data's dimensions.
	Scaled *mat.Dense
	// Common, for FitData, are error patterns shared by many rows (in
	// difference spectra, the reference's error in every row), whose
	// share of the parameters' covariance the residuals cannot show: it
	// is added to the standard errors (commonCovariance). nil = none.
	Common []CommonError
	// NoResidual, for FitData, leaves FitResult.Fitted and Residual nil:
	// two data-sized matrices a caller that reads neither (a refit from
	// another start, compared by its residual sum of squares) need not
	// pay for. The residual sum of squares, σ̂, the standard errors and
	// the residuals' lag-1 autocorrelation are computed all the same, from
	// the same residuals, a block of rows at a time.
	NoResidual bool
	// TimeUnit and RateUnits (one per step) name the units of the times and
	// of the rate constants, said beside the values the fit's warnings and
	// errors print: a caller may show its tables in other units than it fits
	// in. "" and nil say none, for times given without a unit.
	TimeUnit  string
	RateUnits []string
	// Sim tunes the simulation used inside the fit.
	Sim SimSettings
	// LM tunes the Levenberg–Marquardt iteration.
	LM LMSettings
}

// FitResult is the outcome of a kinetic fit.
type FitResult struct {
	Scheme *Scheme
	// K and KStdErr are per step, in the order written; a fixed step has KStdErr 0.
	K, KStdErr []float64
	// HalfLife per step, with HalfLifeNote saying which formula was used; 0 when none applies.
	HalfLife     []float64
	HalfLifeNote []string
	// KNotDetermined marks, per step, a free rate constant the data do not
	// determine (undetermined): its KStdErr is 0, no standard error, and its
	// correlations 0. nil when every free constant is determined.
	KNotDetermined []bool
	// KStart is the rate constants the reported Levenberg–Marquardt run
	// started from (the best of the screened starts, or InitialK).
	KStart []float64
	// SumSteps, when the constants not determined singly have a determined
	// sum (a reversible pair with free spectra: only k1 + k2 sets the
	// relaxation), lists those steps, with the sum and its standard error
	// (widened as the others are). nil when there is none.
	SumSteps         []int
	SumK, SumKStdErr float64
	// sumGrad is ∂(Σ k)/∂θ over the fit's parameters (ln k, ln c0), the
	// direction the widenings of SumKStdErr are taken along.
	sumGrad []float64
	// OrderAlternative, when the data cannot tell the order of the rate
	// constants (a slow–fast ambiguity the pipeline's order check found:
	// both orders fit alike, with free and with non-negative spectra), is
	// the other order's constants, per step; nil when the order is
	// determined or was not checked.
	OrderAlternative []float64
	// influence is each spectrum's influence on the parameters (the
	// sandwich's, robustErrors), for DifferenceErrors; nil when the
	// sandwich was not formed.
	influence *influence
	// sumSandwich: SumKStdErr is the sandwich estimate (robustErrors),
	// sumRatio times the noise-based one.
	sumSandwich bool
	sumRatio    float64
	// kWide, per step, is se(ln k) of a constant undetermined marked for
	// an error beyond wideVar rather than for a null direction (0 for the
	// others); nil when there is none.
	kWide []float64
	// jacRank and jacParams: the Jacobian's rank counting singular values
	// at or below nullTol of the largest as zero, and its columns.
	jacRank, jacParams int
	// Corr is the len(Steps) × len(Steps) correlation matrix of the rate constants (identity
	// rows for fixed steps).
	Corr *mat.Dense
	// C0 is the initial concentrations used (fitted when FitC0) and C0StdErr their standard
	// errors (0 when not fitted).
	C0, C0StdErr []float64
	// T0 is the start time used (fitted when FitT0). When fitted, T0StdErr
	// is its standard error (0 when T0NotDetermined), T0Lo and T0Hi the
	// range it was held within, and T0AtEnd −1 or +1 when it ran to the
	// range's start or end (0 when it stayed inside).
	T0, T0StdErr    float64
	T0Fitted        bool
	T0NotDetermined bool
	T0Lo, T0Hi      float64
	T0AtEnd         int
	// t0Early: T0NotDetermined from a fit that ended at the first
	// spectrum (t0Result); t0Dropped: t0's column was taken out of the
	// covariance for it (covariance), not held by Levenberg–Marquardt.
	t0Early, t0Dropped bool
	// C0Held marks, per species, an initial concentration asked to be fitted
	// that the residual does not depend on (with free spectra the spectra
	// absorb its scale): Levenberg–Marquardt held it at its start, and it has
	// no standard error. nil when none was held.
	C0Held []bool
	// Amplitudes has one factor per observed column (nil unless FitOptions.Amplitudes).
	Amplitudes []float64
	// Fitted holds the fitted observed columns (n × q), or C Sᵀ (n × m) for FitData.
	Fitted *mat.Dense
	// Model holds the model concentrations (n × species) or extents (n × steps).
	Model    *mat.Dense
	Residual *mat.Dense
	// RowSSR, of a data fit, is each spectrum's residual sum of squares
	// (in units of the noise when Weighted); nil for profile fits.
	RowSSR []float64
	// RMS is sqrt(SSR / number of data points); Sigma = sqrt(SSR / DegreesOfFreedom) is the
	// noise estimate behind the standard errors.
	RMS, SSR, Sigma float64
	// Weighted: FitData had noise weights, so Fitted, Residual, RMS and
	// Sigma are in units of the noise (Sigma ≈ 1 when the model fits).
	Weighted bool
	// Lag1 is the residuals' lag-1 autocorrelation down the time axis and
	// Inflation the factor the standard errors were multiplied by for it
	// (1 = none); see honestErrors.
	Lag1, Inflation float64
	// NoiseKStdErr are the standard errors from the noise (with Inflation)
	// before robustErrors widened any to the spectra's scatter about the
	// model, and Robust the largest widening of a rate constant's (1 =
	// none); nil and 1 when not computed.
	NoiseKStdErr []float64
	Robust       float64
	// CommonKStdErr is, per step, the part of KStdErr due to the errors
	// shared by many rows (FitOptions.Common), combined with the rest in
	// quadrature; nil without them.
	CommonKStdErr    []float64
	DegreesOfFreedom int
	// Reduced is the reduction of the (weighted) data FitData worked on
	// (reduceData), to pass back in FitOptions.Reduced.
	Reduced *mat.Dense
	// Scaled is the weighted data √A D √B FitData worked on (nil without
	// weights), to pass back in FitOptions.Scaled.
	Scaled     *mat.Dense
	Iterations int
	Converged  bool
	Stiff      bool
	Warnings   []string
	// MapNote, set by AutoMapFit on the fit it returns, says which assignment
	// with a lower residual it passed over and why (a profile moving against
	// its species); empty when the lowest residual was kept.
	MapNote string
}

type fitProblem struct {
	s      *Scheme
	times  []float64
	opt    FitOptions
	k0     []float64
	c00    []float64
	kFree  []int
	c0Free []int
	nModel int
	// t0Free: t0 is fitted (t0fit.go), within t0Lo to t0Hi from t0Start;
	// tScale, the time span, is the unit of its column in the reported
	// Jacobian.
	t0Free                      bool
	t0Lo, t0Hi, t0Start, tScale float64

	// profile mode
	observed *mat.Dense
	columns  []int
	// data mode: reduced data (same residual norm as D for any C, see FitData)
	dred *mat.Dense
	// data mode: the data were scaled by noise weights (noiseScaled)
	weighted bool

	n, q int
}

// fitScratch is the n-row matrices one residual or Jacobian evaluation
// of a fit writes and lets go: in a data fit at 2000 rows about 4 MB per
// iteration, all of it fresh memory the runtime cleared for every
// evaluation. Each Levenberg–Marquardt run has its own (solve runs its
// starts at once) and drops it when it ends. Reused, each holds the same
// values as the fresh matrix it replaces: every entry is overwritten, or
// cleared first where the writer leaves some alone.
type fitScratch struct {
	proj, res, ds, col *mat.Dense // n × w, the reduced data's width
	wc                 *mat.Dense // n × q: √A C
	wdc                []*mat.Dense
	c                  *mat.Dense // the sensitivities' C and ∂C/∂ln θ
	dc                 []*mat.Dense
}

// sized returns *m as an r × c matrix, made when it is missing or of
// another shape; its entries are whatever the last user left.
func sized(m **mat.Dense, r, c int) *mat.Dense {
	if *m != nil {
		if mr, mc := (*m).Dims(); mr == r && mc == c {
			return *m
		}
	}
	*m = mat.NewDense(r, c, nil)
	return *m
}

// sizedList is sized for each of k matrices.
func sizedList(ms *[]*mat.Dense, k, r, c int) []*mat.Dense {
	for len(*ms) < k {
		*ms = append(*ms, nil)
	}
	for a := 0; a < k; a++ {
		sized(&(*ms)[a], r, c)
	}
	return (*ms)[:k]
}

func (p *fitProblem) nParams() int {
	if p.t0Free {
		return len(p.kFree) + len(p.c0Free) + 1
	}
	return len(p.kFree) + len(p.c0Free)
}

func (p *fitProblem) unpack(theta []float64) (k, c0 []float64, err error) {
	k = append([]float64(nil), p.k0...)
	c0 = append([]float64(nil), p.c00...)
	for a, j := range p.kFree {
		if math.Abs(theta[a]) > 700 {
			return nil, nil, errors.New("log rate constant out of range")
		}
		k[j] = math.Exp(theta[a])
	}
	for b, i := range p.c0Free {
		v := theta[len(p.kFree)+b]
		if math.Abs(v) > 700 {
			return nil, nil, errors.New("log initial concentration out of range")
		}
		c0[i] = math.Exp(v)
	}
	return k, c0, nil
}

func (p *fitProblem) pack(k, c0 []float64) []float64 {
	theta := make([]float64, 0, p.nParams())
	for _, j := range p.kFree {
		theta = append(theta, math.Log(k[j]))
	}
	for _, i := range p.c0Free {
		theta = append(theta, math.Log(c0[i]))
	}
	if p.t0Free {
		theta = append(theta, p.t0Phi(p.t0Start))
	}
	return theta
}

func (p *fitProblem) model(theta []float64) (*Simulation, *mat.Dense, error) {
	k, c0, err := p.unpack(theta)
	if err != nil {
		return nil, nil, err
	}
	sim, err := p.s.SimulateWith(k, c0, p.times, p.t0At(theta), p.opt.Sim)
	if err != nil {
		return nil, nil, err
	}
	out := sim.C
	if p.opt.UseExtents {
		out = sim.Extents
	}
	if p.dred != nil && p.opt.RowWeights != nil {
		out = scaleRowsSqrt(out, p.opt.RowWeights)
	}
	return sim, out, nil
}

// scaleRowsSqrt returns diag(√w) x.
func scaleRowsSqrt(x *mat.Dense, w []float64) *mat.Dense {
	r, c := x.Dims()
	out := mat.NewDense(r, c, nil)
	scaleRowsSqrtTo(out, x, w)
	return out
}

// scaleRowsSqrtTo writes diag(√w) x into out (the shape of x), each entry
// √w_i x_ij as scaleRowsSqrt forms it.
func scaleRowsSqrtTo(out, x *mat.Dense, w []float64) {
	r, c := x.Dims()
	for i := 0; i < r; i++ {
		f := math.Sqrt(w[i])
		dst, src := out.RawRowView(i)[:c], x.RawRowView(i)[:c]
		for j, v := range src {
			dst[j] = f * v
		}
	}
}

// weightData returns √A D √B (a_i the row weights, b_j the column weights,
// nil = 1) in one pass over d, each entry √b_j (√a_i d_ij) as scaling the
// rows and then the columns would give it. FitData runs on a data matrix
// many times (starts, other orders of the rate constants): four passes and
// a transposed copy per fit were most of its time at 2000 × 3001. Blocks
// of rows are written on all processors: each entry is the same product
// whichever goroutine forms it.
func weightData(d *mat.Dense, row, col []float64) *mat.Dense {
	n, m := d.Dims()
	out := mat.NewDense(n, m, nil)
	g := colFactors(col, m)
	product.FixedBlocks(n, weightBlock, func(r0, r1 int) {
		for i := r0; i < r1; i++ {
			weightRow(out.RawRowView(i)[:m], d.RawRowView(i)[:m], rowFactor(row, i), g)
		}
	})
	return out
}

// weightBlock is the rows per block of weightData and ScaledFrom: about
// 1.5 MB of a 3000-channel matrix, so that the first touch of the fresh
// matrix is spread over the processors too.
const weightBlock = 64

// colFactors are √b_j, nil when col is nil.
func colFactors(col []float64, m int) []float64 {
	if col == nil {
		return nil
	}
	g := make([]float64, m)
	for j, b := range col {
		g[j] = math.Sqrt(b)
	}
	return g
}

// rowFactor is √a_i, 1 when row is nil.
func rowFactor(row []float64, i int) float64 {
	if row == nil {
		return 1
	}
	return math.Sqrt(row[i])
}

// weightRow writes dst = g ∘ (f src) (g nil: f src), weightData's values.
func weightRow(dst, src []float64, f float64, g []float64) {
	for j, v := range src {
		dst[j] = f * v
		if g != nil {
			dst[j] = g[j] * dst[j]
		}
	}
}

// ScaleData returns the weighted data √A D √B exactly as FitData forms
// them from d and the noise weights row and col (FitOptions.RowWeights and
// ColWeights; nil = 1), for FitOptions.Scaled: a caller that forms them
// once, before d may change, can fit them later. d must be finite, as
// FitData requires; the error names the first value that is not.
func ScaleData(d *mat.Dense, row, col []float64) (*mat.Dense, error) {
	if d == nil {
		return nil, errors.New("kinetics: scale data: no data")
	}
	n, m := d.Dims()
	if _, err := checkRowWeights(row, n); err != nil {
		return nil, fmt.Errorf("kinetics: scale data: %w", err)
	}
	if err := checkWeights(col, m, "column"); err != nil {
		return nil, fmt.Errorf("kinetics: scale data: %w", err)
	}
	if err := checkFinite(d, "data"); err != nil {
		return nil, fmt.Errorf("kinetics: scale data: %w", err)
	}
	return weightData(d, row, col), nil
}

// ScaledFrom reports whether s holds, bit for bit, the weighted data
// ScaleData forms from d, row and col: that is, whether a fit of s as
// FitOptions.Scaled is the fit of d, whatever happened to d in between.
// It reads both matrices once and writes nothing.
func ScaledFrom(s, d *mat.Dense, row, col []float64) bool {
	if s == nil || d == nil {
		return false
	}
	n, m := d.Dims()
	if r, c := s.Dims(); r != n || c != m || (row != nil && len(row) != n) || (col != nil && len(col) != m) {
		return false
	}
	g := colFactors(col, m)
	var differ atomic.Bool
	product.FixedBlocks(n, weightBlock, func(r0, r1 int) {
		buf := make([]float64, m)
		for i := r0; i < r1 && !differ.Load(); i++ {
			weightRow(buf, d.RawRowView(i)[:m], rowFactor(row, i), g)
			for j, v := range s.RawRowView(i)[:m] {
				// Compared as bits: −0 against +0 or two NaNs would
				// compare wrongly as numbers.
				if math.Float64bits(v) != math.Float64bits(buf[j]) {
					differ.Store(true)
					return
				}
			}
		}
	})
	return !differ.Load()
}

// amplitudes solves each a_j = ⟨y_j, m_j⟩/⟨m_j, m_j⟩ (one-column least squares).
func (p *fitProblem) amplitudes(m *mat.Dense) []float64 {
	a := make([]float64, p.q)
	for j, col := range p.columns {
		var num, den float64
		for i := 0; i < p.n; i++ {
			mv := m.At(i, col)
			num += mv * p.observed.At(i, j)
			den += mv * mv
		}
		if den > 0 {
			a[j] = num / den
		}
	}
	return a
}

// projector returns an orthonormal basis of the column space of m (thin SVD, numerical rank
// with tolerance 1e-10·σ_max): projecting with it stays stable when model columns are nearly
// dependent, where normal equations would not.
func projector(m *mat.Dense) (*mat.Dense, int, error) {
	r, c := m.Dims()
	var svd mat.SVD
	if !svd.Factorize(m, mat.SVDThin) {
		return nil, 0, errors.New("SVD of the model columns failed")
	}
	s := svd.Values(nil)
	rank := 0
	for _, v := range s {
		if len(s) > 0 && v > 1e-10*s[0] {
			rank++
		}
	}
	if rank == 0 {
		return mat.NewDense(r, 1, nil), 0, nil
	}
	var u mat.Dense
	svd.UTo(&u)
	_ = c
	return mat.DenseCopyOf(u.Slice(0, r, 0, rank)), rank, nil
}

// residual writes the fit's residuals at theta into r, on buffers of its
// own.
func (p *fitProblem) residual(theta, r []float64) error {
	return p.residualWith(&fitScratch{}, theta, r)
}

// residualWith is residual with its n-row matrices in sc.
func (p *fitProblem) residualWith(sc *fitScratch, theta, r []float64) error {
	_, m, err := p.model(theta)
	if err != nil {
		return err
	}
	if p.dred != nil {
		u, _, err := projector(m)
		if err != nil {
			return err
		}
		// r = (I − U Uᵀ) D_red
		// By internal/product: the sums of mat.Dense.Mul, bit for bit.
		_, w := p.dred.Dims()
		proj := sized(&sc.proj, p.n, w)
		product.MulTo(proj, u, product.MulT(u, p.dred))
		for i := 0; i < p.n; i++ {
			dr, pr, ri := p.dred.RawRowView(i)[:w], proj.RawRowView(i)[:w], r[i*w:(i+1)*w]
			for j, v := range dr {
				ri[j] = v - pr[j]
			}
		}
		return nil
	}
	var a []float64
	if p.opt.Amplitudes {
		a = p.amplitudes(m)
	}
	for i := 0; i < p.n; i++ {
		for j, col := range p.columns {
			f := m.At(i, col)
			if a != nil {
				f *= a[j]
			}
			r[i*p.q+j] = p.observed.At(i, j) - f
		}
	}
	return nil
}

// newFitProblem checks a fit's scheme, times and options against nobs
// observations, and sets its starting point and its free parameters.
func newFitProblem(s *Scheme, times []float64, opt FitOptions, nobs int) (*fitProblem, error) {
	if s == nil || len(s.Steps) == 0 {
		return nil, errors.New("empty scheme")
	}
	if len(times) != nobs {
		return nil, fmt.Errorf("%d times for %d observations", len(times), nobs)
	}
	p := &fitProblem{s: s, times: times, opt: opt, n: nobs}
	p.nModel = len(s.Species)
	if opt.UseExtents {
		p.nModel = len(s.Steps)
	}
	if opt.Sim.MaxSteps == 0 {
		p.opt.Sim.MaxSteps = 100000
	}
	// A fit of concentrations never reads the extents.
	p.opt.Sim.concentrationsOnly = !opt.UseExtents
	span, err := spanAfter(times, opt.T0, opt.TimeUnit)
	if err != nil {
		return nil, err
	}
	var cscale float64
	if p.c00, cscale, err = startingConcentrations(s, opt.C0); err != nil {
		return nil, err
	}
	if err := p.startingRates(span, cscale); err != nil {
		return nil, err
	}
	if opt.FitC0 {
		for i, v := range p.c00 {
			if v > 0 {
				p.c0Free = append(p.c0Free, i)
			}
		}
	}
	if opt.FitT0 {
		if err := p.setT0Range(times); err != nil {
			return nil, err
		}
	}
	return p, nil
}

// spanAfter checks t0 and the times, of which at least two must follow t0
// for a rate to show, and returns the time from t0 to the last; unit is
// said after t0 in the error.
func spanAfter(times []float64, t0 float64, unit string) (float64, error) {
	if math.IsNaN(t0) || math.IsInf(t0, 0) {
		return 0, fmt.Errorf("t0 is %v", t0)
	}
	tmax := math.Inf(-1)
	after := 0
	for i, t := range times {
		if math.IsNaN(t) || math.IsInf(t, 0) {
			return 0, fmt.Errorf("time %d is %v", i, t)
		}
		if t > t0 {
			after++
		}
		tmax = math.Max(tmax, t)
	}
	if after < 2 {
		return 0, fmt.Errorf("fewer than two times after t0 = %s", withUnit(fmt.Sprintf("%g", t0), unit))
	}
	return tmax - t0, nil
}

// startingConcentrations checks the initial concentrations (nil: 1 for the
// first species, 0 for the others) and returns a copy and their largest,
// which must be positive for anything to react.
func startingConcentrations(s *Scheme, c0 []float64) (c00 []float64, cscale float64, err error) {
	ns := len(s.Species)
	c00 = make([]float64, ns)
	if c0 == nil {
		c00[0] = 1
	} else {
		if len(c0) != ns {
			return nil, 0, fmt.Errorf("%d initial concentrations for %d species", len(c0), ns)
		}
		for i, v := range c0 {
			if !(v >= 0) || math.IsInf(v, 0) {
				return nil, 0, fmt.Errorf("initial concentration of %s is %v", s.Species[i], v)
			}
		}
		copy(c00, c0)
	}
	for _, v := range c00 {
		cscale = math.Max(cscale, v)
	}
	if cscale == 0 {
		return nil, 0, errors.New("all initial concentrations are zero: nothing can react")
	}
	return c00, cscale, nil
}

// startingRates sets the starting rate constants and which are free: the
// given ones, or one decay within the span, scaled to a pseudo-first-order
// rate at the largest initial concentration for higher orders.
func (p *fitProblem) startingRates(span, cscale float64) error {
	s, opt, nr := p.s, p.opt, len(p.s.Steps)
	if opt.FixedK != nil && len(opt.FixedK) != nr {
		return fmt.Errorf("FixedK has %d entries for %d steps", len(opt.FixedK), nr)
	}
	if opt.InitialK != nil && len(opt.InitialK) != nr {
		return fmt.Errorf("InitialK has %d entries for %d steps", len(opt.InitialK), nr)
	}
	p.k0 = make([]float64, nr)
	for j := range s.Steps {
		fixed := opt.FixedK != nil && opt.FixedK[j]
		switch {
		case opt.InitialK != nil:
			v := opt.InitialK[j]
			if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 || (!fixed && v == 0) {
				return fmt.Errorf("initial rate constant of step %q is %v, want > 0 (≥ 0 if fixed)", s.Steps[j].Text, v)
			}
			p.k0[j] = v
		case fixed:
			return fmt.Errorf("step %q is fixed but InitialK is nil", s.Steps[j].Text)
		default:
			p.k0[j] = 1 / span / math.Pow(cscale, float64(s.Steps[j].Order-1))
		}
		if !fixed {
			p.kFree = append(p.kFree, j)
		}
	}
	return nil
}

// starts returns starting parameter vectors: the user's InitialK, or the best few points of a
// grid of k·T ∈ {0.5, 2, 8, 32} per free step (T the time span), ranked by sum of squares
// (ties by grid order, so the choice is deterministic). Each later step's grid is 5 % slower
// (startTilt), so that no start has two equal rate constants: for consecutive steps
// (A -> B -> C) the fit is symmetric in the order of the constants with free spectra or
// amplitudes (the slow–fast ambiguity), equal constants are a saddle between the two orders,
// and the direction Levenberg–Marquardt leaves it in would be decided by rounding.
func (p *fitProblem) starts(m int) ([][]float64, error) {
	base := p.pack(p.k0, p.c00)
	if p.opt.InitialK != nil || len(p.kFree) == 0 {
		return [][]float64{base}, nil
	}
	factors := []float64{0.5, 2, 8, 32}
	nf := len(p.kFree)
	var cands [][]float64
	if nf <= 4 {
		total := 1
		for i := 0; i < nf; i++ {
			total *= len(factors)
		}
		for code := 0; code < total; code++ {
			th := append([]float64(nil), base...)
			c := code
			for a := 0; a < nf; a++ {
				th[a] += math.Log(factors[c%len(factors)]) - float64(a)*math.Log(startTilt)
				c /= len(factors)
			}
			cands = append(cands, th)
		}
	} else {
		for _, f := range factors {
			th := append([]float64(nil), base...)
			for a := 0; a < nf; a++ {
				th[a] += math.Log(f * math.Pow(1.5, -float64(a)))
			}
			cands = append(cands, th)
		}
	}
	type scored struct {
		i   int
		ssr float64
	}
	r := make([]float64, m)
	var sc []scored
	buf := &fitScratch{}
	for i, th := range cands {
		if err := p.residualWith(buf, th, r); err != nil {
			continue
		}
		var ssr float64
		for _, v := range r {
			ssr += v * v
		}
		if !math.IsNaN(ssr) && !math.IsInf(ssr, 0) {
			sc = append(sc, scored{i, ssr})
		}
	}
	if len(sc) == 0 {
		return nil, errors.New("the model could not be evaluated at any starting guess")
	}
	sort.SliceStable(sc, func(a, b int) bool { return sc[a].ssr < sc[b].ssr })
	var out [][]float64
	for a := 0; a < len(sc) && a < 3; a++ {
		out = append(out, cands[sc[a].i])
	}
	return out, nil
}

// startTilt is the factor each later step's grid of starts is slower by.
const startTilt = 1.05

// solve runs Levenberg–Marquardt from each start and keeps the lowest sum of squares (the
// earliest start on ties). The runs from several starts are independent (the problem is only
// read): they run at once (product.Each) and are then compared in the starts' order, so that the
// answer is the same whatever the number of processors.
func (p *fitProblem) solve(m int) (*LMResult, error) {
	starts, err := p.starts(m)
	if err != nil {
		return nil, err
	}
	if len(starts) > 0 && len(starts[0]) == 0 {
		return p.noFreeParameters(starts[0], m)
	}
	runs := make([]*LMResult, len(starts))
	errs := make([]error, len(starts))
	product.Each(len(starts), func(i int) {
		sc := &fitScratch{} // this run's buffers, let go when it ends
		runs[i], errs[i] = LevenbergMarquardt(func(x, r []float64) error { return p.residualWith(sc, x, r) }, p.jacobianFunc(sc), starts[i], m, p.opt.LM)
	})
	var best *LMResult
	var bestStart []float64
	var firstErr error
	for i, res := range runs {
		if errs[i] != nil {
			if firstErr == nil {
				firstErr = errs[i]
			}
			continue
		}
		if best == nil || res.SSR < best.SSR*(1-1e-12) {
			best, bestStart = res, starts[i]
		}
	}
	if best == nil {
		return nil, firstErr
	}
	best.Start = bestStart
	return best, nil
}

// noFreeParameters is the "fit" when every parameter is fixed: the
// residual at them.
func (p *fitProblem) noFreeParameters(th []float64, m int) (*LMResult, error) {
	r := make([]float64, m)
	if err := p.residual(th, r); err != nil {
		return nil, err
	}
	var ssr float64
	for _, v := range r {
		ssr += v * v
	}
	return &LMResult{X: th, Start: th, Residual: r, SSR: ssr, Jacobian: mat.NewDense(m, 1, nil), Converged: true, Reason: "no free parameters"}, nil
}

func checkFinite(d *mat.Dense, what string) error {
	r, _ := d.Dims()
	for i := 0; i < r; i++ {
		for j, v := range d.RawRowView(i) {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return fmt.Errorf("%s[%d][%d] is %v", what, i, j, v)
			}
		}
	}
	return nil
}

// FitProfiles fits observed columns (n × q): observed column j is model column columns[j]
// (a species index, or a step index with UseExtents), optionally scaled by its own amplitude.
// The rate constants are fitted as ln k so they stay positive; standard errors come from
// σ²(JᵀJ)⁻¹ in ln k and map back to k by the delta method (se_k = k·se_ln k).
func FitProfiles(s *Scheme, times []float64, observed *mat.Dense, columns []int, opt FitOptions) (*FitResult, error) {
	if observed == nil {
		return nil, errors.New("kinetics: fit profiles: no observed columns")
	}
	n, q := observed.Dims()
	p, err := newFitProblem(s, times, opt, n)
	if err != nil {
		return nil, fmt.Errorf("kinetics: fit profiles: %w", err)
	}
	if len(columns) != q {
		return nil, fmt.Errorf("kinetics: fit profiles: %d column assignments for %d observed columns", len(columns), q)
	}
	for j, c := range columns {
		if c < 0 || c >= p.nModel {
			return nil, fmt.Errorf("kinetics: fit profiles: observed column %d is mapped to %d, want 0..%d", j, c, p.nModel-1)
		}
	}
	if err := checkFinite(observed, "observed"); err != nil {
		return nil, fmt.Errorf("kinetics: fit profiles: %w", err)
	}
	p.observed, p.columns, p.q = observed, append([]int(nil), columns...), q
	m := n * q
	nLinear := 0
	if opt.Amplitudes {
		nLinear = q
	}
	if m < p.nParams()+nLinear {
		return nil, fmt.Errorf("kinetics: fit profiles: %d data points for %d parameters", m, p.nParams()+nLinear)
	}
	lm, err := p.solve(m)
	if err == nil {
		err = p.reportT0(lm)
	}
	if err != nil {
		return nil, fmt.Errorf("kinetics: fit profiles: %w", err)
	}
	sim, model, err := p.model(lm.X)
	if err != nil {
		return nil, fmt.Errorf("kinetics: fit profiles: final model: %w", err)
	}
	res := p.result(lm, sim, model, m, n*residualRank(lm.Residual, n, q), nLinear)
	fitted := mat.NewDense(n, q, nil)
	if opt.Amplitudes {
		res.Amplitudes = p.amplitudes(model)
	}
	for i := 0; i < n; i++ {
		for j, col := range columns {
			f := model.At(i, col)
			if res.Amplitudes != nil {
				f *= res.Amplitudes[j]
			}
			fitted.Set(i, j, f)
		}
	}
	res.Fitted = fitted
	var resid mat.Dense
	resid.Sub(observed, fitted)
	res.Residual = &resid
	if opt.Amplitudes && opt.FitC0 && len(p.c0Free) > 0 {
		res.Warnings = append(res.Warnings, "amplitudes and initial concentrations are confounded (a·c scales with c0): the fitted c0 is not determined by scale-free profiles")
	}
	p.undeterminedWarning(lm, res)
	return res, nil
}

// residualRank is the number of linearly independent columns of the n × q
// residual r (row-major), counting a singular value at or below
// dependentTol of the largest as zero. Profiles resolved under closure, and
// a model that keeps the same sum (A -> B: [A] + [B] = 1), leave residuals
// with Σ_k w_k r_ik = 0 in every row (r_B = −r_A for two species): only
// n·(q − 1) of the n·q are free, and σ̂² = SSR/(n·q − p) would divide the
// same sum of squares by almost twice its degrees of freedom. Rounding
// leaves such a combination near 1e-16 of the profiles, while the other
// directions hold the noise and misfit of the profiles, far above 1e-9 of
// the largest unless the fit is exact to rounding (invented profiles
// without noise, whose errors are then rounding either way). A residual of
// exactly zero, and fewer rows than columns (where rank shows no
// constraint), count as q.
func residualRank(r []float64, n, q int) int {
	if n < q || q == 0 || len(r) != n*q {
		return q
	}
	var svd mat.SVD
	if !svd.Factorize(mat.NewDense(n, q, append([]float64(nil), r...)), mat.SVDNone) {
		return q
	}
	s := svd.Values(nil)
	if len(s) == 0 || !(s[0] > 0) {
		return q
	}
	rank := 0
	for _, v := range s {
		if v > dependentTol*s[0] {
			rank++
		}
	}
	return rank
}

// dependentTol: a residual direction this far (relative) below the largest
// is taken as an exact linear constraint, not noise (residualRank).
const dependentTol = 1e-9

// held reports the parameters Levenberg–Marquardt held at their start because the residual
// does not depend on them (LMResult.Held): an initial concentration is given back as it was
// set, marked in C0Held and said; a rate constant is said. Covariance gives them no variance
// (their Jacobian columns are zero), so the others' standard errors are those of the fit
// without them. It returns how many were held.
func (p *fitProblem) held(lm *LMResult, res *FitResult) int {
	count := 0
	for a, h := range lm.Held {
		if !h {
			continue
		}
		count++
		if p.t0Free && a == p.t0Index() {
			p.t0Held(res, lm.X)
			continue
		}
		if a < len(p.kFree) {
			j := p.kFree[a]
			k := withUnit(fmt.Sprintf("%.4g", res.K[j]), p.rateUnit(j))
			res.Warnings = append(res.Warnings, fmt.Sprintf("the rate constant of step %q is not determined by the data: the residual does not depend on it at %s, where this fit started, so it stayed there; it is reported as not determined, with no standard error", p.s.Steps[j].Text, k))
			continue
		}
		i := p.c0Free[a-len(p.kFree)]
		if res.C0Held == nil {
			res.C0Held = make([]bool, len(p.s.Species))
		}
		res.C0Held[i] = true
		res.C0[i] = p.c00[i]
		res.Warnings = append(res.Warnings, fmt.Sprintf("the initial concentration of %s is not determined by the data (the residual does not depend on it; with free spectra they absorb its scale): it is held at its start, %.4g, and has no standard error", p.s.Species[i], p.c00[i]))
	}
	return count
}

// rateUnit is step j's unit from the options, "" when none is given.
func (p *fitProblem) rateUnit(j int) string {
	if j < len(p.opt.RateUnits) {
		return p.opt.RateUnits[j]
	}
	return ""
}

// withUnit is the number v followed by its unit, or alone without one.
func withUnit(v, unit string) string {
	if unit == "" {
		return v
	}
	return v + " " + unit
}

// result assembles everything but the fitted columns from m residuals, of
// which indep are linearly independent (residualRank): the degrees of
// freedom behind σ̂ count those.
func (p *fitProblem) result(lm *LMResult, sim *Simulation, model *mat.Dense, m, indep, nLinear int) *FitResult {
	k, c0, _ := p.unpack(lm.X)
	nr, ns := len(p.s.Steps), len(p.s.Species)
	res := &FitResult{
		Scheme: p.s, K: k, KStdErr: make([]float64, nr), C0: c0, C0StdErr: make([]float64, ns),
		Model: mat.DenseCopyOf(model), SSR: lm.SSR, Iterations: lm.Iterations, Converged: lm.Converged,
		Stiff: sim.Stiff, Corr: mat.NewDense(nr, nr, nil),
	}
	res.RMS = math.Sqrt(lm.SSR / float64(m))
	np := p.nParams()
	p.held(lm, res)
	res.DegreesOfFreedom = indep - np - nLinear
	if !lm.Converged {
		res.Warnings = append(res.Warnings, "Levenberg–Marquardt did not converge: "+lm.Reason)
	}
	if sim.Stiff {
		res.Warnings = append(res.Warnings, fmt.Sprintf("the rate equations are stiff (method %s, stiffness ratio %.3g)", sim.Method, sim.StiffnessRatio))
	}
	for j := 0; j < nr; j++ {
		res.Corr.Set(j, j, 1)
	}
	if res.DegreesOfFreedom <= 0 {
		res.Warnings = append(res.Warnings, "no degrees of freedom left: standard errors are not available (reported as 0)")
	} else if np > 0 {
		sigma2 := lm.SSR / float64(res.DegreesOfFreedom)
		res.Sigma = math.Sqrt(sigma2)
		cov, err := p.covariance(lm, res, sigma2)
		if err != nil {
			res.Warnings = append(res.Warnings, "covariance: "+err.Error())
		} else {
			for a, j := range p.kFree {
				res.KStdErr[j] = k[j] * math.Sqrt(math.Max(cov.At(a, a), 0))
				for b, l := range p.kFree {
					den := math.Sqrt(cov.At(a, a) * cov.At(b, b))
					if a != b && den > 0 {
						res.Corr.Set(j, l, cov.At(a, b)/den)
					}
				}
			}
			for b, i := range p.c0Free {
				a := len(p.kFree) + b
				if res.C0Held == nil || !res.C0Held[i] {
					res.C0StdErr[i] = c0[i] * math.Sqrt(math.Max(cov.At(a, a), 0))
				}
			}
			p.undetermined(lm, res, cov)
		}
	}
	for a, j := range p.kFree {
		if res.KNotDetermined != nil && res.KNotDetermined[j] {
			continue // undeterminedWarning says where it went
		}
		if math.Abs(lm.X[a]-math.Log(p.k0[j])) > 25 {
			res.Warnings = append(res.Warnings, fmt.Sprintf("rate constant of step %q moved e^25-fold from its start: it is probably not determined by the data", p.s.Steps[j].Text))
		}
	}
	if !res.T0Fitted {
		p.t0Result(lm, res, nil)
	}
	p.t0Warning(lm, res)
	res.HalfLife, res.HalfLifeNote = halfLives(p.s, k, c0, sim.C)
	if lm.Start != nil {
		res.KStart, _, _ = p.unpack(lm.Start)
	}
	return res
}

// halfLives gives t½ per step: ln 2/k for first order; for second order with the IUPAC rate
// of reaction r = k Π c^ν, 1/(2k[A]0) for 2A → … and 1/(k[A]0) for A + B → … (which assumes
// [A]0 = [B]0). [A]0 is the reactant's initial concentration, or its peak model concentration
// for an intermediate. Other orders have no single half-life (0 with a note).
func halfLives(s *Scheme, k, c0 []float64, c *mat.Dense) ([]float64, []string) {
	hl := make([]float64, len(s.Steps))
	note := make([]string, len(s.Steps))
	for j, st := range s.Steps {
		if k[j] <= 0 {
			note[j] = "k = 0: no decay"
			continue
		}
		a := st.Reactants[0].Species
		conc, src := c0[a], "initial"
		if conc <= 0 && c != nil {
			n, _ := c.Dims()
			for i := 0; i < n; i++ {
				conc = math.Max(conc, c.At(i, a))
			}
			src = "peak"
		}
		switch {
		case len(st.Reactants) == 1 && st.Reactants[0].Coef == 1:
			hl[j] = math.Ln2 / k[j]
			note[j] = "first order: ln 2 / k"
		case conc <= 0:
			note[j] = "second order: reactant never present"
		case len(st.Reactants) == 1 && st.Reactants[0].Coef == 2:
			hl[j] = 1 / (2 * k[j] * conc)
			note[j] = fmt.Sprintf("second order 2%s: 1 / (2 k [%s]0), %s [%s]", s.Species[a], s.Species[a], src, s.Species[a])
		case len(st.Reactants) == 2 && st.Reactants[0].Coef == 1 && st.Reactants[1].Coef == 1:
			hl[j] = 1 / (k[j] * conc)
			b := s.Species[st.Reactants[1].Species]
			note[j] = fmt.Sprintf("second order %s + %s: 1 / (k [%s]0) assuming [%s]0 = [%s]0, %s [%s]", s.Species[a], b, s.Species[a], s.Species[a], b, src, s.Species[a])
		default:
			note[j] = fmt.Sprintf("order %d: no single half-life", st.Order)
		}
	}
	return hl, note
}

// AutoMap chooses which model column (species, or step with UseExtents) each observed column
// is, by fitting every injective assignment (at most 5040) and keeping the lowest RMS.
// Assignments are tried in lexicographic order and a later one replaces the best only when its
// RMS is lower by more than a relative 1e-9, so ties go to the lexicographically first.
//
// Not every assignment is fitted: the model is simulated once at the
// starting rate constants, each assignment is scored by the summed cosine
// between its observed and model columns (shapes, since observed columns
// have arbitrary scale), and only the autoMapFits best-scoring ones get a
// full fit. Five species give 120 assignments but 4 fits.
func AutoMap(s *Scheme, times []float64, observed *mat.Dense, opt FitOptions) ([]int, error) {
	cols, _, err := AutoMapFit(s, times, observed, opt)
	return cols, err
}

// AutoMapFit is AutoMap that also returns the fit of the assignment chosen,
// FitProfiles(s, times, observed, cols, opt), so that a caller about to fit
// that assignment with the same options need not fit it again.
func AutoMapFit(s *Scheme, times []float64, observed *mat.Dense, opt FitOptions) ([]int, *FitResult, error) {
	if s == nil || observed == nil {
		return nil, nil, errors.New("kinetics: auto map: missing scheme or data")
	}
	n, q := observed.Dims()
	nModel := len(s.Species)
	if opt.UseExtents {
		nModel = len(s.Steps)
	}
	if err := checkAssignmentCount(q, nModel); err != nil {
		return nil, nil, err
	}
	cands := rankedAssignments(shapeScores(s, times, observed, opt, n, q, nModel), q, nModel)
	// The fits are independent: made at once, compared in score order.
	nFit := min(len(cands), autoMapFits)
	fits := make([]*FitResult, nFit)
	errs := make([]error, nFit)
	product.Each(nFit, func(i int) {
		fits[i], errs[i] = FitProfiles(s, times, observed, cands[i].cols, opt)
	})
	best, kept, err := chooseAssignment(observed, cands, fits, errs)
	if err != nil {
		return nil, nil, err
	}
	if kept == best {
		return cands[best].cols, fits[best], nil
	}
	if kept < 0 {
		if _, _, opp := opposed(observed, fits[best].Model, cands[best].cols); opp {
			fits[best].MapNote = everyOpposed(s, observed, fits[best].Model, cands[best].cols, opt.UseExtents)
		}
		return cands[best].cols, fits[best], nil
	}
	fits[kept].MapNote = passedOver(s, observed, fits[best].Model, cands[best].cols, opt.UseExtents)
	return cands[kept].cols, fits[kept], nil
}

// checkAssignmentCount refuses q observed columns for fewer model columns,
// and more than 40320 (8!) assignments of them, too many to score.
func checkAssignmentCount(q, nModel int) error {
	if q > nModel {
		return fmt.Errorf("kinetics: auto map: %d observed columns for %d model columns", q, nModel)
	}
	count := 1
	for i := 0; i < q; i++ {
		count *= nModel - i
		if count > 40320 {
			return fmt.Errorf("kinetics: auto map: more than 40320 assignments; give the map explicitly")
		}
	}
	return nil
}

// mapCandidate is one assignment of observed columns to model columns, with
// its summed shape score.
type mapCandidate struct {
	cols  []int
	score float64
}

// rankedAssignments enumerates every injective assignment of the q observed
// columns to the nModel model columns in lexicographic order, scored by
// the summed cosines cos[observed][model], best score first. The sort is
// stable: ties keep enumeration order, so the choice is deterministic.
func rankedAssignments(cos [][]float64, q, nModel int) []mapCandidate {
	var cands []mapCandidate
	cur := make([]int, q)
	used := make([]bool, nModel)
	var rec func(pos int, score float64)
	rec = func(pos int, score float64) {
		if pos == q {
			cands = append(cands, mapCandidate{append([]int(nil), cur...), score})
			return
		}
		for c := 0; c < nModel; c++ {
			if !used[c] {
				used[c] = true
				cur[pos] = c
				rec(pos+1, score+cos[pos][c])
				used[c] = false
			}
		}
	}
	rec(0, 0)
	sort.SliceStable(cands, func(a, b int) bool { return cands[a].score > cands[b].score })
	return cands
}

// chooseAssignment returns, among the fitted assignments in score order,
// best: the lowest RMS, and kept: the lowest among those whose every
// profile moves with its model column (a profile that rises cannot be a
// reactant, however low the residual of a flat fit to it), -1 when none
// does. A later fit replaces an earlier only when its RMS is lower by more
// than a relative 1e-9. It is an error when no assignment could be fitted.
func chooseAssignment(observed *mat.Dense, cands []mapCandidate, fits []*FitResult, errs []error) (best, kept int, err error) {
	best, kept = -1, -1
	var firstErr error
	for i, res := range fits {
		if errs[i] != nil {
			if firstErr == nil {
				firstErr = errs[i]
			}
			continue
		}
		if best < 0 || res.RMS < fits[best].RMS*(1-1e-9) {
			best = i
		}
		if _, _, opp := opposed(observed, res.Model, cands[i].cols); !opp && (kept < 0 || res.RMS < fits[kept].RMS*(1-1e-9)) {
			kept = i
		}
	}
	if best < 0 {
		return -1, -1, fmt.Errorf("kinetics: auto map: no assignment could be fitted: %w", firstErr)
	}
	return best, kept, nil
}

// MapNoteEveryOpposed begins FitResult.MapNote when every assignment fitted had a profile
// moving against its species, so that AutoMapFit kept the lowest residual regardless.
const MapNoteEveryOpposed = "every assignment fitted has a profile that moves against its species"

// opposed reports the first observed column j whose correlation in time with
// its model column cols[j] is below −0.5 (the two move in opposite
// directions), with that correlation. Columns constant in time have none.
func opposed(observed, model *mat.Dense, cols []int) (int, float64, bool) {
	for j, c := range cols {
		o, m := mat.Col(nil, j, observed), mat.Col(nil, c, model)
		if rho := correlation(o, m); rho < -0.5 {
			return j, rho, true
		}
	}
	return 0, 0, false
}

// correlation is Pearson's correlation coefficient of a and b, 0 when
// either is constant.
func correlation(a, b []float64) float64 {
	ma, mb := floats.Sum(a)/float64(len(a)), floats.Sum(b)/float64(len(b))
	var sab, saa, sbb float64
	for i := range a {
		da, db := a[i]-ma, b[i]-mb
		sab += da * db
		saa += da * da
		sbb += db * db
	}
	if saa == 0 || sbb == 0 {
		return 0
	}
	return sab / math.Sqrt(saa*sbb)
}

// passedOver says which assignment with a lower residual AutoMapFit passed
// over (cols, fitted as model) and which profile moves against its species.
func passedOver(s *Scheme, observed, model *mat.Dense, cols []int, extents bool) string {
	assignment, against := mapAgainst(s, observed, model, cols, extents)
	return fmt.Sprintf("the assignment with the lowest residual, %s, was passed over: %s, so it cannot be that species; kept: the lowest residual of the assignments whose profiles each move with their species. When no assignment fits well, the profiles do not start where the model does (initial concentrations, rotational ambiguity)",
		assignment, against)
}

// everyOpposed says that every assignment AutoMapFit fitted had a profile
// moving against its species, so the lowest residual (cols, fitted as
// model) was kept regardless.
func everyOpposed(s *Scheme, observed, model *mat.Dense, cols []int, extents bool) string {
	assignment, against := mapAgainst(s, observed, model, cols, extents)
	return fmt.Sprintf("%s, so the lowest residual, %s, is kept although %s: the profiles do not follow the model (another scheme, other initial concentrations, or rotational ambiguity)",
		MapNoteEveryOpposed, assignment, against)
}

// mapAgainst writes cols as an assignment (A=1, B=2) and the first of its
// profiles that moves against its model column.
func mapAgainst(s *Scheme, observed, model *mat.Dense, cols []int, extents bool) (assignment, against string) {
	name := func(c int) string {
		if extents {
			return s.Steps[c].Text
		}
		return s.Species[c]
	}
	parts := make([]string, len(cols))
	for j, c := range cols {
		parts[j] = fmt.Sprintf("%s=%d", name(c), j+1)
	}
	j, rho, _ := opposed(observed, model, cols)
	n, _ := observed.Dims()
	rises, falls := "rises", "falls"
	if observed.At(n-1, j) < observed.At(0, j) {
		rises, falls = "falls", "rises"
	}
	return strings.Join(parts, ", "), fmt.Sprintf("component %d %s where %s %s (correlation %.2f in time)", j+1, rises, name(cols[j]), falls, rho)
}

// autoMapFits is how many of the best-scoring assignments AutoMap fits.
const autoMapFits = 4

// shapeScores returns cos[j][c], the cosine between observed column j and
// model column c simulated at the starting rate constants (0 when the
// simulation fails, so every assignment ties and enumeration order rules).
func shapeScores(s *Scheme, times []float64, observed *mat.Dense, opt FitOptions, n, q, nModel int) [][]float64 {
	cos := make([][]float64, q)
	for j := range cos {
		cos[j] = make([]float64, nModel)
	}
	p, err := newFitProblem(s, times, opt, n)
	if err != nil {
		return cos
	}
	sim, err := s.SimulateWith(p.k0, p.c00, times, opt.T0, p.opt.Sim)
	if err != nil {
		return cos
	}
	model := sim.C
	if opt.UseExtents {
		model = sim.Extents
	}
	for j := 0; j < q; j++ {
		o := mat.Col(nil, j, observed)
		for c := 0; c < nModel; c++ {
			mc := mat.Col(nil, c, model)
			no, nm := floats.Norm(o, 2), floats.Norm(mc, 2)
			if no > 0 && nm > 0 {
				cos[j][c] = floats.Dot(o, mc) / (no * nm)
			}
		}
	}
	return cos
}

// FitData fits the data matrix directly, D (n × m) ≈ C(k) Sᵀ, with the spectra S solved by
// linear least squares inside each residual evaluation (variable projection, Golub & Pereyra
// 1973): the residual is (I − P_C) D with P_C the orthogonal projector on the columns of C.
// D is first replaced by its reduction U Σ on the leading singular vectors (reduceData): since
// V has orthonormal columns, ‖(I − P_C) D‖ = ‖(I − P_C) U Σ‖ for every C when nothing is left
// out, and what a truncation leaves out is noise. The reported residual, σ̂ and standard errors
// are those of the whole D at the fitted rate constants. The spectra (m × q, q = species or
// steps) are returned.
func FitData(s *Scheme, times []float64, d *mat.Dense, opt FitOptions) (*FitResult, *mat.Dense, error) {
	if d == nil {
		return nil, nil, errors.New("kinetics: fit data: no data")
	}
	n, m := d.Dims()
	p, err := newFitProblem(s, times, opt, n)
	if err != nil {
		return nil, nil, fmt.Errorf("kinetics: fit data: %w", err)
	}
	kept, err := checkDataFit(d, opt)
	if err != nil {
		return nil, nil, err
	}
	d = p.noiseScaled(d)
	if p.dred, err = reducedFor(d, opt.Reduced, p.nModel); err != nil {
		return nil, nil, fmt.Errorf("kinetics: fit data: %w", err)
	}
	// Observed points: a spectrum of row weight zero (set aside) is no data.
	nObs := kept * m
	if nParams := p.nParams() + p.nModel*m; nObs < nParams {
		return nil, nil, fmt.Errorf("kinetics: fit data: %d data points for %d parameters", nObs, nParams)
	}
	_, w := p.dred.Dims()
	lm, err := p.solve(n * w)
	if err == nil {
		err = p.reportT0(lm)
	}
	if err != nil {
		return nil, nil, fmt.Errorf("kinetics: fit data: %w", err)
	}
	return p.dataResult(lm, d, nObs)
}

// checkDataFit checks the data (unless opt.Scaled was formed from them, and
// checked then) and the noise weights, and returns how many spectra the row
// weights keep.
func checkDataFit(d *mat.Dense, opt FitOptions) (kept int, err error) {
	n, m := d.Dims()
	if r, c := dimsOrZero(opt.Scaled); r != n || c != m {
		if err := checkFinite(d, "data"); err != nil {
			return 0, fmt.Errorf("kinetics: fit data: %w", err)
		}
	}
	if opt.Amplitudes {
		return 0, errors.New("kinetics: fit data: Amplitudes does not apply (the spectra carry the scale)")
	}
	if kept, err = checkRowWeights(opt.RowWeights, n); err != nil {
		return 0, fmt.Errorf("kinetics: fit data: %w", err)
	}
	if err := checkWeights(opt.ColWeights, m, "column"); err != nil {
		return 0, fmt.Errorf("kinetics: fit data: %w", err)
	}
	return kept, nil
}

// noiseScaled returns the data the fit works on: with noise weights
// √A D √B, since Σ a_i b_j e_ij² = ‖√A (D − C Sᵀ) √B‖² (taken from
// opt.Scaled when an earlier fit formed it), else D itself. With column
// weights alone the row weights become ones.
func (p *fitProblem) noiseScaled(d *mat.Dense) *mat.Dense {
	opt := p.opt
	if opt.RowWeights == nil && opt.ColWeights == nil {
		return d
	}
	p.weighted = true
	n, m := d.Dims()
	if opt.RowWeights == nil {
		p.opt.RowWeights = ones(n)
	}
	if r, c := dimsOrZero(opt.Scaled); r == n && c == m {
		return opt.Scaled
	}
	return weightData(d, p.opt.RowWeights, opt.ColWeights)
}

// reducedFor returns the reduction of d to q model columns: given when an
// earlier fit of the same data made it (one row per spectrum), else made here.
func reducedFor(d, given *mat.Dense, q int) (*mat.Dense, error) {
	n, _ := d.Dims()
	if r, _ := dimsOrZero(given); r == n {
		return given, nil
	}
	return reduceData(d, q)
}

// dataResult completes a data fit at the fitted parameters: the model, the
// spectra Sᵀ = C⁺ D by the SVD pseudo-inverse (minimum norm when C is rank
// deficient), and the residual sum of squares of the whole data, not of its
// reduction, so that σ̂ and every figure built on it count the noise the
// reduction left out.
func (p *fitProblem) dataResult(lm *LMResult, d *mat.Dense, nObs int) (*FitResult, *mat.Dense, error) {
	n, m := d.Dims()
	sim, model, err := p.model(lm.X)
	if err != nil {
		return nil, nil, fmt.Errorf("kinetics: fit data: final model: %w", err)
	}
	_, rank, err := projector(model)
	if err != nil {
		return nil, nil, fmt.Errorf("kinetics: fit data: %w", err)
	}
	spectra, err := pseudoSolve(model, d)
	if err != nil {
		return nil, nil, fmt.Errorf("kinetics: fit data: spectra: %w", err)
	}
	var fitted, resid *mat.Dense
	if !p.opt.NoResidual {
		fitted, resid = mat.NewDense(n, m, nil), mat.NewDense(n, m, nil)
	}
	var lag lagSums
	rowSSR := make([]float64, n)
	lm.SSR, lag = residualSums(d, model, spectra, fitted, resid, rowSSR)
	res := p.result(lm, sim, model, nObs, nObs, rank*m)
	res.Reduced = p.dred
	res.RMS = math.Sqrt(lm.SSR / float64(nObs))
	if rank < p.nModel {
		res.Warnings = append(res.Warnings, fmt.Sprintf("the model columns have rank %d < %d: the spectra are a minimum-norm solution and not unique", rank, p.nModel))
	}
	res.RowSSR = rowSSR
	if fitted != nil {
		res.Fitted, res.Residual = fitted, resid
	}
	scaledSpectra := spectra
	if p.weighted {
		spectra = p.unweighted(res, sim, spectra)
		res.Weighted, res.Scaled = true, d
	}
	honestErrors(res, lag, n)
	_, w := p.dred.Dims()
	before := len(res.Warnings)
	replaced := p.robustErrors(lm, res, w, p.nModel)
	p.correlatedWarning(res, replaced, before)
	p.commonErrors(lm, res, model, scaledSpectra)
	p.undeterminedWarning(lm, res)
	return res, spectra, nil
}

// unweighted puts the model and the spectra back in the data's units: the
// spectra lose √B, the model √A. Fitted and Residual stay weighted (units
// of the noise), which is what the checks on them need.
func (p *fitProblem) unweighted(res *FitResult, sim *Simulation, spectra *mat.Dense) *mat.Dense {
	res.Model = mat.DenseCopyOf(sim.C)
	if p.opt.UseExtents {
		res.Model = mat.DenseCopyOf(sim.Extents)
	}
	if p.opt.ColWeights == nil {
		return spectra
	}
	inv := make([]float64, len(p.opt.ColWeights))
	for j, b := range p.opt.ColWeights {
		inv[j] = 1 / b
	}
	return scaleRowsSqrt(spectra, inv)
}

// checkWeights accepts nil or len positive finite weights.
// checkRowWeights checks FitData's row weights, where zero leaves a spectrum out
// (one set aside as an outlier): positive or zero, finite, at least one positive. It
// returns the number of rows with a positive weight (n when w is nil).
func checkRowWeights(w []float64, n int) (int, error) {
	if w == nil {
		return n, nil
	}
	if len(w) != n {
		return 0, fmt.Errorf("%d row weights for %d rows", len(w), n)
	}
	kept := 0
	for i, v := range w {
		if !(v >= 0) || math.IsInf(v, 0) {
			return 0, fmt.Errorf("row weight %d is %v: weights must be positive, or zero to leave a spectrum out", i+1, v)
		}
		if v > 0 {
			kept++
		}
	}
	if kept == 0 {
		return 0, errors.New("every row weight is zero: no spectrum left to fit")
	}
	return kept, nil
}

func checkWeights(w []float64, want int, what string) error {
	if w == nil {
		return nil
	}
	if len(w) != want {
		return fmt.Errorf("%d %s weights for %d %ss", len(w), what, want, what)
	}
	for i, v := range w {
		if !(v > 0) || math.IsInf(v, 0) {
			return fmt.Errorf("%s weight %d is %v: weights must be positive", what, i+1, v)
		}
	}
	return nil
}

func ones(n int) []float64 {
	o := make([]float64, n)
	for i := range o {
		o[i] = 1
	}
	return o
}

// pseudoSolve returns S (m × q) with Sᵀ = C⁺ D.
func pseudoSolve(c, d *mat.Dense) (*mat.Dense, error) {
	_, q := c.Dims()
	_, m := d.Dims()
	var svd mat.SVD
	if !svd.Factorize(c, mat.SVDThin) {
		return nil, errors.New("SVD failed")
	}
	sv := svd.Values(nil)
	var u, v mat.Dense
	svd.UTo(&u)
	svd.VTo(&v)
	// (Uᵀ D)ᵀ = Dᵀ U (m × len(sv)) by product.MulT, the sums Dgemm forms for
	// Uᵀ D bit for bit (ascending rows, each product rounded before it is
	// added; the terms Dgemm skips, u_li = 0, add ±0 to a sum that is never
	// −0, which changes no bit for finite data, as FitData's are) at a
	// fraction of Dgemm's time: one AXPY per entry of U there.
	dtu := product.MulT(d, &u)
	st := mat.NewDense(q, m, nil)
	for k := range sv {
		if sv[k] <= 1e-10*sv[0] {
			continue
		}
		for a := 0; a < q; a++ {
			f := v.At(a, k) / sv[k]
			for j := 0; j < m; j++ {
				st.Set(a, j, st.At(a, j)+f*dtu.At(j, k))
			}
		}
	}
	return mat.DenseCopyOf(st.T()), nil
}

// honestErrors widens the standard errors of a data fit whose residuals are
// correlated in time. The usual se = σ̂ √diag((JᵀJ)⁻¹) already grows with a
// residual above the noise (σ̂² = SSR/ν), but assumes independent residuals;
// for residuals that follow an AR(1) process with lag-1 autocorrelation
// ρ > 0, the variance of a least-squares estimate grows by about
// (1 + ρ)/(1 − ρ) (the effective number of observations n(1 − ρ)/(1 + ρ);
// common practice, from memory), ρ ≈ 1 − d/2 with d the Durbin–Watson
// statistic (Durbin & Watson, Biometrika 1950). Only ρ above 2/√n, twice
// its standard deviation for white noise, counts.
func honestErrors(res *FitResult, lag lagSums, n int) {
	res.Inflation = 1
	rho, ok := lag.rho(n)
	if !ok {
		return
	}
	res.Lag1 = rho
	if rho <= 2/math.Sqrt(float64(n)) {
		return
	}
	f := math.Sqrt((1 + rho) / (1 - math.Min(rho, 0.99)))
	res.Inflation = f
	for j := range res.KStdErr {
		res.KStdErr[j] *= f
	}
	for i := range res.C0StdErr {
		res.C0StdErr[i] *= f
	}
	res.T0StdErr *= f
	res.SumKStdErr *= f
}

// correlatedWarning says what the correlation in time did to the reported
// standard errors once robustErrors has kept, per rate constant, the larger
// of the errors multiplied by Inflation and the sandwich ones (replaced
// marks the steps whose sandwich error was kept): the factor is named only
// for the constants that carry it, since a warning that gave it for a figure
// the sandwich replaced would say the error is several times smaller than
// the one reported. It goes at index at of the warnings, before the
// sandwich estimate's own.
func (p *fitProblem) correlatedWarning(res *FitResult, replaced []bool, at int) {
	if !(res.Inflation > 1) {
		return
	}
	var kept, other []string
	if res.SumSteps != nil {
		if res.sumSandwich {
			other = append(other, "their sum")
		} else {
			kept = append(kept, "their sum")
		}
	}
	for _, j := range p.kFree {
		if res.KNotDetermined != nil && res.KNotDetermined[j] {
			continue // no standard error
		}
		if replaced[j] {
			other = append(other, fmt.Sprintf("step %q", p.s.Steps[j].Text))
		} else {
			kept = append(kept, fmt.Sprintf("step %q", p.s.Steps[j].Text))
		}
	}
	w := fmt.Sprintf("the residuals are correlated in time (lag-1 autocorrelation %.2f, Durbin–Watson d = %.2f; independent noise gives 0 and 2): the model does not describe the data fully", res.Lag1, 2*(1-res.Lag1))
	pull := fmt.Sprintf("the larger ones that allow for residuals correlated within a spectrum, from how much each spectrum pulls on the fit (a sandwich estimate; up to %.3g times the noise-based ones so multiplied)", math.Max(res.Robust, res.sumRatio))
	switch {
	case len(other) == 0:
		w += fmt.Sprintf(", so the standard errors were multiplied by %.2f", res.Inflation)
	case len(kept) == 0:
		w += fmt.Sprintf("; the standard errors reported are not the noise-based ones multiplied by %.2f for it but %s", res.Inflation, pull)
	default:
		w += fmt.Sprintf(", so the standard errors of %s were multiplied by %.2f; those of %s are not the noise-based ones so multiplied but %s", strings.Join(kept, ", "), res.Inflation, strings.Join(other, ", "), pull)
	}
	res.Warnings = slices.Insert(res.Warnings, at, w)
}

// lagSums are the sums behind Lag1: Σ r_ij r_(i+1)j and Σ r_ij².
type lagSums struct{ num, den float64 }

// rho is Lag1 from the sums of n rows.
func (l lagSums) rho(n int) (float64, bool) {
	if n < 10 || !(l.den > 0) {
		return 0, false
	}
	return l.num / l.den, true
}

// residualSums returns the sum of squares of E = D − C Sᵀ and its lag-1
// sums, in the order Lag1 and a row-by-row sum of squares take them,
// forming E a block of rows at a time (C Sᵀ by the matrix product, as a
// whole-matrix product would). When fitted and resid are non-nil (n × m)
// they receive C Sᵀ and E; rows (n) receives each row's sum of squares.
func residualSums(d, c, s, fitted, resid *mat.Dense, rows []float64) (float64, lagSums) {
	n, m := d.Dims()
	_, q := c.Dims()
	const block = 64
	var fb, eb *mat.Dense
	if fitted == nil {
		fb, eb = mat.NewDense(min(block, n), m, nil), mat.NewDense(min(block, n), m, nil)
	}
	var ssr float64
	var lag lagSums
	var prev []float64
	for lo := 0; lo < n; lo += block {
		hi := min(lo+block, n)
		var f, e *mat.Dense
		if fitted != nil {
			f, e = fitted.Slice(lo, hi, 0, m).(*mat.Dense), resid.Slice(lo, hi, 0, m).(*mat.Dense)
		} else {
			f, e = fb.Slice(0, hi-lo, 0, m).(*mat.Dense), eb.Slice(0, hi-lo, 0, m).(*mat.Dense)
		}
		mulByTranspose(f, c.Slice(lo, hi, 0, q).(*mat.Dense), s)
		for i := lo; i < hi; i++ {
			dr, fr, er := d.RawRowView(i), f.RawRowView(i-lo), e.RawRowView(i-lo)
			var row float64
			for j, v := range dr {
				x := v - fr[j]
				er[j] = x
				ssr += x * x
				row += x * x
			}
			rows[i] = row
			if prev != nil {
				for j, x := range er {
					lag.num += prev[j] * x
				}
			}
			prev = er
		}
		if fitted == nil && hi < n {
			// The next block overwrites eb: keep this block's last row.
			prev = append([]float64(nil), prev...)
		}
	}
	lag.den = ssr // Lag1's denominator: the same squares in the same order
	return ssr, lag
}

// mulByTranspose sets f (r × m) to c sᵀ for c (r × q) and s (m × q), each
// entry the sum f.Mul(c, s.T()) forms, bit for bit: gonum's Dgemm takes that
// product one dot product per entry (its vector kernel DotUnitary, which
// keeps four partial sums, terms l ≡ 0, 1, 2, 3 mod 4 of each run of four
// with the tail added to the first, and returns (p0 + p2) + (p1 + p3)),
// called once per entry with a vector of q, the number of species: at q = 6
// the calls cost more than the products. Here the same four sums run
// inline. Go does not fuse multiply–adds on amd64 by default, nor does
// gonum's kernel, so every product is rounded before it is added in both.
func mulByTranspose(f, c, s *mat.Dense) {
	r, q := c.Dims()
	m, _ := s.Dims()
	sr := s.RawMatrix()
	for i := 0; i < r; i++ {
		x, out := c.RawRowView(i)[:q], f.RawRowView(i)[:m]
		if q == 6 {
			// Six species (the chain of the benchmark): the row of c in
			// registers, the same sums.
			x0, x1, x2, x3, x4, x5 := x[0], x[1], x[2], x[3], x[4], x[5]
			for j := range out {
				y := sr.Data[j*sr.Stride : j*sr.Stride+6 : j*sr.Stride+6]
				s0, s1, s2, s3 := 0.0, 0.0, 0.0, 0.0
				s0 += x0 * y[0]
				s1 += x1 * y[1]
				s2 += x2 * y[2]
				s3 += x3 * y[3]
				s0 += x4 * y[4]
				s0 += x5 * y[5]
				out[j] = (s0 + s2) + (s1 + s3)
			}
			continue
		}
		for j := range out {
			y := sr.Data[j*sr.Stride : j*sr.Stride+q]
			var s0, s1, s2, s3 float64
			l := 0
			for ; l+4 <= q; l += 4 {
				s0 += x[l] * y[l]
				s1 += x[l+1] * y[l+1]
				s2 += x[l+2] * y[l+2]
				s3 += x[l+3] * y[l+3]
			}
			for ; l < q; l++ {
				s0 += x[l] * y[l]
			}
			out[j] = (s0 + s2) + (s1 + s3)
		}
	}
}

// Lag1 is the lag-1 autocorrelation of the residuals down each column,
// pooled over columns, Σ r_i r_{i+1} / Σ r_i² (Durbin & Watson 1950:
// d ≈ 2(1 − ρ)); about 0 ± 1/√n for independent noise. false when there are
// fewer than 10 rows or no residual.
func Lag1(res *mat.Dense) (float64, bool) {
	if res == nil {
		return 0, false
	}
	n, q := res.Dims()
	if n < 10 {
		return 0, false
	}
	// Row by row (the storage order: a data fit's residual is n × m, and
	// down the columns every access would miss the cache).
	var num, den float64
	for i := 0; i < n; i++ {
		row := res.RawRowView(i)
		for _, v := range row[:q] {
			den += v * v
		}
		if i+1 < n {
			next := res.RawRowView(i + 1)
			for j, v := range row[:q] {
				num += v * next[j]
			}
		}
	}
	if !(den > 0) {
		return 0, false
	}
	return num / den, true
}

func sumSquares(a *mat.Dense) float64 {
	var s float64
	r, _ := a.Dims()
	for i := 0; i < r; i++ {
		for _, v := range a.RawRowView(i) {
			s += v * v
		}
	}
	return s
}

func dimsOrZero(a *mat.Dense) (int, int) {
	if a == nil {
		return 0, 0
	}
	return a.Dims()
}
