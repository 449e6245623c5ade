package mcr

import (
	"errors"
	"fmt"
	"math"
	"runtime"
	"sync"
	"sync/atomic"

	"github.com/bandsolve/bandsolve/internal/fanout"
	"github.com/bandsolve/bandsolve/internal/vecmath"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// BandOptions are the constraints a feasible rotation must keep. They mirror
// the Options of the resolution that produced C and S.
type BandOptions struct {
	Mode           Mode
	NonNegProfiles []bool // nil = the mode's default (as in Options)
	NonNegSpectra  []bool
	Closure        bool
	ClosureWeights []float64 // nil = all 1
	ZeroProfiles   [][]bool  // [k][n]
	ZeroSpectra    [][]bool  // [k][m]
	Known          []bool    // components whose spectrum is fixed exactly
	// Tolerance is the largest relative violation ‖min(0, x_k)‖/‖x_k‖ of a
	// component's non-negativity (or zero window) still counted as feasible;
	// default 1e-3.
	Tolerance float64
	// MaxEvaluations bounds the function evaluations of each of the 2k
	// searches; default 4000.
	MaxEvaluations int
	// ResidualSS is ‖D − C Sᵀ‖²_F of the solution on its n·m data values.
	// When positive, a rotation counts when its fit is statistically no
	// worse than the solution's (see FeasibleBands); zero keeps the exact
	// fit (the noise-free ranges).
	ResidualSS float64
	// Alpha is the significance level of that comparison; default 0.05.
	Alpha float64
	// Found, when set, is called once for each component j as soon as both
	// ends of its range are known, with the Band FeasibleBands returns for
	// it, while the searches of the other components go on: a caller can
	// take up one component's range (write it out, say) before the last is
	// found. It is called on the goroutine that found the second end, so
	// it must return soon and hand longer work on; it must not change the
	// band's slices. It is not called for a component whose search failed.
	Found func(j int, b Band)
}

// Band is one component's range of signal contribution
// f_k = ‖c_k s_kᵀ‖_F / ‖C Sᵀ‖_F over the feasible rotations.
type Band struct {
	Min, Max, Value float64 // Value at the solution given
	// The component's profile and spectrum at the minimum and at the maximum,
	// scaled as described at FeasibleBands.
	MinProfile, MinSpectrum, MaxProfile, MaxSpectrum []float64
	// Feasible says whether both extremes satisfy the constraints within
	// Tolerance (false means the search could not stay feasible and the band
	// is only the part it reached).
	Feasible bool
	// Reason says why the range is not determined when Feasible is false.
	Reason string
	// MinConverged and MaxConverged say whether the search for each end
	// met its stopping test rather than its budget (see FeasibleBands):
	// false means the end is only as far out as the search got, an
	// inner estimate of the range.
	MinConverged, MaxConverged bool
}

// SearchLeftConstraints is the Reason of a band whose search ended outside
// the constraints or the noise allowance.
const SearchLeftConstraints = "the search could not stay within the constraints and the noise allowance"

// BandsResult holds the bands of every component.
type BandsResult struct {
	Bands       []Band
	Evaluations int
	// Allowance is the rise of the residual sum of squares a rotation may
	// cause and still count (0 for the exact-fit ranges).
	Allowance float64
}

// FeasibleBands computes, for every component k, the smallest and largest
// signal contribution f_k = ‖c_k‖‖s_k‖/‖C Sᵀ‖_F among all resolutions
// (C T, S T⁻ᵀ) that reproduce C Sᵀ exactly (so keep the fit) and keep every
// constraint in opt (Tauler, J. Chemometrics 2001). For two components the
// feasible set is the Lawton & Sylvestre (Technometrics 1971) region.
//
// Parametrisation: T = I + Δ. Without closure the diagonal of Δ is zero,
// fixing the scale that f_k does not depend on; with closure Σ_j w_j c_j = t
// the rows of Δ are orthogonal to w (then C T w = C w and closure holds
// exactly); a known spectrum k fixes row k of T to e_kᵀ, since the k-th
// column of S T⁻ᵀ equals s_k exactly when Tᵀ e_k = e_k. That leaves at most
// k(k−1) unknowns. Non-negativity and zero windows enter as the quadratic
// penalty μ Σ min(0, x)² (each component scaled by its norm at the given
// solution), minimised by BFGS (minimiseBFGS) for μ = 10², 10⁴, … 10⁸,
// each stage starting where the last ended, the first at the given
// solution — a sequential penalty method (Fiacco & McCormick 1968). The
// gradient is analytic: with A = C T and B = S T⁻ᵀ, ∂/∂T of a function of A
// is Cᵀ ∂A and of B is −T⁻ᵀ ∂Bᵀ B.
//
// Cost: each evaluation is O((n + m)k²) on the n × k profiles and m × k
// spectra only; the data matrix is not needed because C Sᵀ is unchanged.
// Unimodality and hard kinetic models are not imposed on the rotations.
//
// Within the noise (opt.ResidualSS > 0): the solution itself is noisy, so
// the true resolution is not one of its exact rotations. A rotation T then
// counts when the pair it gives with the constraints imposed — A₊ = C T and
// B₊ = S T⁻ᵀ with negative entries (where non-negative) and zero-window
// entries set to zero — fits no worse than the solution by an F test: the
// rise ‖C Sᵀ − A₊B₊ᵀ‖² may be at most RSS·p/(N−p)·F_{1−α}(p, N−p), with
// N = n·m data values and p = k(n+m−k) parameters of a rank-k bilinear
// model. This is the likelihood-ratio confidence region of a nonlinear
// least-squares fit (Beale, J. R. Stat. Soc. B 1960; Draper & Smith,
// Applied Regression Analysis, 3rd ed. 1998, §24.5). The rise of the
// residual is taken as ‖C Sᵀ − A₊B₊ᵀ‖², leaving out the cross term
// 2⟨E, C Sᵀ − A₊B₊ᵀ⟩ with the residual E, which is zero to first order at
// a least-squares solution (E is orthogonal to the model's tangent space);
// that keeps every evaluation free of the data. From the exact-fit
// extreme, the search then minimises sign·log f_k subject to the one
// constraint √(rise/allowance) ≤ 1 by sequential quadratic programming
// (minimiseSQP; Nocedal & Wright 2006, algorithm 18.3), and the extremes
// returned are the pair with the constraints imposed, its f_k
// recomputed. Closure holds for C T exactly and for A₊ to within the
// allowance. Rotations keep each component's amplitude, and noise moves it
// too: each extreme is widened by scaling component k alone, c_k → (1+ε)c_k
// with ε²‖c_k s_kᵀ‖² ≤ allowance (the same F bound on that move alone), in
// the direction that moves f_k outwards; f_k(ε) is evaluated exactly on the
// Gram matrices. The range is thus the union of two moves each within the
// bound, an outer estimate of the region's extremes.
//
// Convergence: each end records whether its search met its stopping test
// (MinConverged, MaxConverged). Within the noise that test is that the
// next step of the search promises to move f_k by less than sqpTol
// (10⁻⁵) of itself, counting the return to the allowance's boundary;
// for the exact fit, that the last penalty stage stopped on its own
// stalling rule (minimiseBFGS) rather than its budget. An end that did
// not converge is where the budget ran out: the range is at least that
// wide. Both are local: a search ends at the extreme of the region it
// starts in, and a feasible region of several pieces, or a share with
// several local extremes, may hold ends further out.
//
// The extreme profiles and spectra are returned with the scale of the
// given solution: with closure as they come (closure fixes the scale);
// otherwise the spectrum is rescaled to the norm of the given s_k and the
// profile takes the inverse factor, which leaves c_k s_kᵀ unchanged.
func FeasibleBands(c, s *mat.Dense, opt BandOptions) (*BandsResult, error) {
	n, k := c.Dims()
	m, ks := s.Dims()
	if ks != k {
		return nil, fmt.Errorf("bands: %d profiles but %d spectra", k, ks)
	}
	if k < 1 {
		return nil, errors.New("bands: no components")
	}
	if k > 64 {
		// The search marks a row's clipped entries in one 64-bit word.
		return nil, fmt.Errorf("bands: %d components; at most 64", k)
	}
	if opt.Tolerance <= 0 {
		opt.Tolerance = 1e-3
	}
	if opt.MaxEvaluations <= 0 {
		opt.MaxEvaluations = 4000
	}
	if opt.Alpha <= 0 || opt.Alpha >= 1 {
		opt.Alpha = 0.05
	}
	p := &bandProblem{c: c, s: s, n: n, m: m, k: k, opt: opt}
	if err := p.setup(); err != nil {
		return nil, err
	}
	p.newWork()
	if opt.ResidualSS > 0 {
		p.allow = noiseAllowance(opt.ResidualSS, n, m, k, opt.Alpha)
	}
	out := &BandsResult{Allowance: p.allow}
	// Each component's share at the solution, before the searches: Found
	// gives the band as it is returned here.
	values := make([]float64, k)
	for j := range values {
		values[j] = p.contribution(identity(k), j)
	}
	ends, err := p.allExtremes(values)
	if err != nil {
		return nil, err
	}
	// Each round's new ends are new feasible points, which may seed others
	// in turn; k rounds at most.
	for round := 0; round < k; round++ {
		moved, err := p.crossSeed(ends)
		if err != nil {
			return nil, err
		}
		if !moved {
			break
		}
	}
	for j := 0; j < k; j++ {
		lo, hi := ends[2*j], ends[2*j+1]
		out.Evaluations += lo.evals + hi.evals
		out.Bands = append(out.Bands, bandOf(values[j], lo, hi))
	}
	return out, nil
}

// bandOf is a component's band from its share at the solution and the two
// ends of its range.
func bandOf(value float64, lo, hi bandEnd) Band {
	b := Band{Value: value}
	b.Min, b.MinProfile, b.MinSpectrum = math.Min(lo.f, b.Value), lo.profile, lo.spectrum
	b.Max, b.MaxProfile, b.MaxSpectrum = math.Max(hi.f, b.Value), hi.profile, hi.spectrum
	b.MinConverged, b.MaxConverged = lo.converged, hi.converged
	// The search's last stage ending infeasible means the band is only
	// the feasible part it reached (an inner estimate).
	b.Feasible = lo.ok && hi.ok
	if !b.Feasible {
		b.Reason = SearchLeftConstraints
	}
	return b
}

// bandEnd is one end of one component's range: the extreme share f and the
// profile and spectrum that reach it.
type bandEnd struct {
	f                 float64
	theta             []float64 // the rotation's unknowns at the end
	profile, spectrum []float64
	ok, converged     bool
	evals             int
	err               error
	// shares are every component's f at the end's constrained pair, when
	// the search that found it formed that pair (noiseSQP; see crossSeed).
	shares []float64
}

// allExtremes searches the 2k ends (component j's minimum at 2j, maximum at
// 2j+1) on up to GOMAXPROCS workers. Each worker has its own copy of the
// problem and work buffers, and each search starts from them reset
// (bandWork.reset) as a fresh copy would be, so its result depends on
// nothing but (j, sign): the ranges are the same bytes whatever the number
// of workers or the order they run in. With opt.Found, the worker that
// ends a component's second search gives its band (values are the
// components' shares at the solution).
func (p *bandProblem) allExtremes(values []float64) ([]bandEnd, error) {
	ends := make([]bandEnd, 2*p.k)
	// left counts each component's searches not yet ended; the atomic
	// decrement that reaches zero orders the other end's write before
	// the reads of both.
	left := make([]atomic.Int32, p.k)
	for j := range left {
		left[j].Store(2)
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	var fault fanout.Fault // a search's panic, raised again below
	for range min(runtime.GOMAXPROCS(0), len(ends)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			t := 0
			defer fault.Catch(&t)
			q := *p
			q.newWork()
			for t = int(next.Add(1)) - 1; t < len(ends); t = int(next.Add(1)) - 1 {
				q.work.reset()
				sign := 1.0
				if t%2 == 1 {
					sign = -1
				}
				ends[t] = q.end(t/2, sign)
				if j := t / 2; p.opt.Found != nil && left[j].Add(-1) == 0 {
					if lo, hi := ends[2*j], ends[2*j+1]; lo.err == nil && hi.err == nil {
						p.opt.Found(j, bandOf(values[j], lo, hi))
					}
				}
			}
		}()
	}
	wg.Wait()
	fault.Raise()
	for _, e := range ends {
		if e.err != nil {
			return nil, e.err
		}
	}
	return ends, nil
}

// end searches one end of component j's range: sign +1 the minimum share,
// −1 the maximum. Within the noise, the profile is rescaled to the
// amplitude that keeps the fit inside the allowance.
func (p *bandProblem) end(j int, sign float64) bandEnd {
	theta, f, ok, evals, conv := p.extreme(j, sign)
	t := p.rotation(theta)
	prof, spec, err := p.component(t, j)
	if err != nil {
		return bandEnd{err: err}
	}
	var shares []float64
	if p.allow > 0 {
		shares = p.work.shares
		var amp float64
		f, amp = p.amplitude(t, j, -sign)
		for i := range prof {
			prof[i] *= amp
		}
	}
	return bandEnd{f: f, theta: theta, profile: prof, spectrum: spec, ok: ok, evals: evals, converged: conv, shares: shares}
}

// crossSeed searches an end again from another end's rotation when that
// rotation, which keeps every constraint and the allowance for all
// components alike, already gives the component a share beyond the end
// found: each search is local (a feasible region of several pieces, or a
// share with several local extremes, may hold ends further out), and the
// 2k ends are 2k feasible points spread over the region, found anyway.
// A reagent spiked into a stirred cell gave a range of 0.057–0.167 for the
// reagent from the solution's side, while the fit from the other start,
// as good, had 0.249 (the truth of the invented data: 0.243). The ends
// are searched again one after another in a fixed order, each from the
// point with the most extreme share (the lowest end index on a tie): the
// result does not depend on the number of workers.
func (p *bandProblem) crossSeed(ends []bandEnd) (moved bool, err error) {
	if p.allow <= 0 || p.k < 2 {
		return false, nil
	}
	// Each end's shares of every component, at its constrained pair: as
	// its search left them, or formed here.
	pts := make([][]float64, len(ends))
	for t, e := range ends {
		if len(e.theta) == 0 || !e.ok {
			continue
		}
		if e.shares != nil {
			pts[t] = e.shares
			continue
		}
		a, b, _, ok := p.rotate(p.rotation(e.theta))
		if !ok || p.rise(a, b, nil, nil) > p.allow*(1+p.opt.Tolerance) {
			continue
		}
		pts[t] = p.shares(p.constrainedPair(a, b))
	}
	for t := range ends {
		j, sign := t/2, 1.0
		if t%2 == 1 {
			sign = -1
		}
		from, best := -1, ends[t].f
		for u, pt := range pts {
			if pt == nil || u == t {
				continue
			}
			if f := pt[j]; sign*f < sign*best*(1+1e-6) {
				from, best = u, f
			}
		}
		if from < 0 {
			continue
		}
		p.work.reset()
		theta, f, ok, evals, conv := p.noiseSQP(j, sign, ends[from].theta)
		shares := p.work.shares
		if !ok || sign*f >= sign*ends[t].f {
			ends[t].evals += evals
			continue
		}
		tr := p.rotation(theta)
		prof, spec, err := p.component(tr, j)
		if err != nil {
			return false, err
		}
		f, amp := p.amplitude(tr, j, -sign)
		for i := range prof {
			prof[i] *= amp
		}
		if sign*f < sign*ends[t].f {
			ends[t] = bandEnd{f: f, theta: theta, profile: prof, spectrum: spec, ok: true, evals: ends[t].evals + evals, converged: conv, shares: shares}
			moved = true
		}
	}
	return moved, nil
}

type bandProblem struct {
	c, s    *mat.Dense
	n, m, k int
	opt     BandOptions
	nnC     []bool
	nnS     []bool
	// free lists, for each unknown, the row of Δ it belongs to and the
	// direction of that row it moves along.
	free []struct {
		row int
		dir []float64
	}
	wc, ws []float64 // 1/‖c_j‖², 1/‖s_j‖² at the given solution
	norm   float64   // ‖C Sᵀ‖_F
	allow  float64   // rise of the residual allowed (0: exact fit)
	base   *bandBase // shared by the searches (newWork)
	work   *bandWork
}

// noiseAllowance is RSS·p/(N−p)·F_{1−α}(p, N−p), the rise of the residual
// sum of squares inside the F confidence region (Beale 1960; see
// FeasibleBands), with N = n·m and p = k(n+m−k). With no degrees of freedom
// left it is 0 (the exact-fit ranges).
func noiseAllowance(rss float64, n, m, k int, alpha float64) float64 {
	nObs, par := float64(n)*float64(m), float64(k)*float64(n+m-k)
	if par <= 0 || nObs-par < 1 {
		return 0
	}
	q := distuv.F{D1: par, D2: nObs - par}.Quantile(1 - alpha)
	if math.IsNaN(q) || math.IsInf(q, 0) {
		return 0
	}
	return rss * par / (nObs - par) * q
}

// SameModelAllowance is the rise of the residual sum of squares rss that
// two fits of one rank-k bilinear model to n × m data may differ by and
// still not be told apart at level alpha: RSS·p/(N−p)·F_{1−α}(p, N−p), the
// F confidence region of the least-squares fit (Beale 1960; the allowance
// the uniqueness ranges use, see FeasibleBands). 0 with no degrees of
// freedom left.
func SameModelAllowance(rss float64, n, m, k int, alpha float64) float64 {
	return noiseAllowance(rss, n, m, k, alpha)
}

func identity(k int) *mat.Dense {
	t := mat.NewDense(k, k, nil)
	for i := 0; i < k; i++ {
		t.Set(i, i, 1)
	}
	return t
}

func (p *bandProblem) setup() error {
	k := p.k
	p.nnC = boolsOr(p.opt.NonNegProfiles, k, true)
	p.nnS = boolsOr(p.opt.NonNegSpectra, k, p.opt.Mode == Species)
	// ‖C Sᵀ‖² = tr(CᵀC SᵀS), on the small Gram matrices.
	ss := traceProd(gram(p.c), gram(p.s))
	if !(ss > 0) {
		return errors.New("bands: the resolved model C Sᵀ is zero")
	}
	p.norm = math.Sqrt(ss)
	for j := 0; j < k; j++ {
		cj, sj := colNormSq(p.c, j), colNormSq(p.s, j)
		if cj == 0 || sj == 0 {
			return fmt.Errorf("bands: component %d is zero", j+1)
		}
		p.wc = append(p.wc, 1/cj)
		p.ws = append(p.ws, 1/sj)
	}
	var dirs [][]float64
	if p.opt.Closure {
		w := p.opt.ClosureWeights
		if w == nil {
			w = ones(k)
		}
		dirs = orthoComplement(w)
	}
	for r := 0; r < k; r++ {
		if r < len(p.opt.Known) && p.opt.Known[r] {
			continue
		}
		if p.opt.Closure {
			for _, d := range dirs {
				p.free = append(p.free, struct {
					row int
					dir []float64
				}{r, d})
			}
			continue
		}
		for col := 0; col < k; col++ {
			if col == r {
				continue
			}
			d := make([]float64, k)
			d[col] = 1
			p.free = append(p.free, struct {
				row int
				dir []float64
			}{r, d})
		}
	}
	return nil
}

// orthoComplement returns an orthonormal basis of the vectors orthogonal to
// w, by modified Gram–Schmidt of w, e_1, …, e_k (stable enough for k ≤ 64
// and well-separated inputs; unit vectors that fall in the span are skipped).
func orthoComplement(w []float64) [][]float64 {
	k := len(w)
	basis := [][]float64{normalised(w)}
	for i := 0; i < k && len(basis) < k; i++ {
		v := make([]float64, k)
		v[i] = 1
		for pass := 0; pass < 2; pass++ {
			for _, b := range basis {
				d := dot(v, b)
				for j := range v {
					v[j] -= d * b[j]
				}
			}
		}
		if math.Sqrt(dot(v, v)) > 1e-8 {
			basis = append(basis, normalised(v))
		}
	}
	return basis[1:]
}

func normalised(v []float64) []float64 {
	n := math.Sqrt(dot(v, v))
	out := make([]float64, len(v))
	for i := range v {
		out[i] = v[i] / n
	}
	return out
}

func dot(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}

func colNormSq(a *mat.Dense, j int) float64 {
	r, _ := a.Dims()
	s := 0.0
	for i := 0; i < r; i++ {
		v := a.At(i, j)
		s += v * v
	}
	return s
}

func (p *bandProblem) rotation(theta []float64) *mat.Dense {
	t := identity(p.k)
	for q, f := range p.free {
		for col, d := range f.dir {
			if d != 0 {
				t.Set(f.row, col, t.At(f.row, col)+theta[q]*d)
			}
		}
	}
	return t
}

// rotate returns A = C T, B = S T⁻ᵀ and T⁻ᵀ, or ok = false when T is too
// close to singular for its inverse to mean anything. The last rotation is
// kept (rotMemo): the callers must not change what it returns.
func (p *bandProblem) rotate(t *mat.Dense) (a, b, tinvT *mat.Dense, ok bool) {
	memo := p.memo()
	// Bits, not mat.Equal: it takes −0 for +0, and the products may then differ in sign.
	if memo != nil && memo.t != nil && vecmath.SameBitsMatrix(memo.t, t) {
		return memo.a, memo.b, memo.tinvT, memo.ok
	}
	a, b, tinvT, ok = p.rotateNew(t)
	if memo != nil {
		*memo = rotMemo{t: mat.DenseCopyOf(t), a: a, b: b, tinvT: tinvT, ok: ok}
	}
	return a, b, tinvT, ok
}

// rotMemo is the last rotation rotate formed, its pair with the
// constraints imposed and the rise between the two: a search asks for
// them at its stages' ends and again for its end (stages, component,
// amplitude), at the same T, and each costs products and copies of the
// n × k and m × k matrices. The same T gives the same matrices, so
// keeping them changes nothing.
type rotMemo struct {
	t, a, b, tinvT *mat.Dense
	ok             bool
	ap, bp         *mat.Dense // constrainedPair(a, b), nil until asked
	rise           float64
	haveRise       bool
}

// memo is the search's rotMemo, nil before newWork.
func (p *bandProblem) memo() *rotMemo {
	if p.work == nil {
		return nil
	}
	return &p.work.memo
}

func (p *bandProblem) rotateNew(t *mat.Dense) (a, b, tinvT *mat.Dense, ok bool) {
	var lu mat.LU
	lu.Factorize(t)
	if lu.Cond() > 1e10 {
		return nil, nil, nil, false
	}
	var inv mat.Dense
	if err := lu.SolveTo(&inv, false, identity(p.k)); err != nil {
		return nil, nil, nil, false
	}
	tinvT = mat.DenseCopyOf(inv.T())
	if w := p.work; w != nil && p.base.xpC != nil && p.base.xpS != nil {
		return w.timesPanels(p.c, p.base.c, p.base.xpC, t), w.timesPanels(p.s, p.base.s, p.base.xpS, tinvT), tinvT, true
	}
	return rowsTimes(p.c, t), rowsTimes(p.s, tinvT), tinvT, true
}

// timesPanels returns xm·v as rowsTimes does, from x, xm's entries
// row-major, and xp, its rows in panels (rowPanels): four rows at a time
// in the vector lanes (rotatedPanels, with no column clipped), the last
// rows by
// rotatedRows: each entry summed over l in order from +0, each product
// rounded before it is added, as rowsTimes sums it; the terms rowsTimes
// leaves out, whose first factor is ±0, are ±0 (T's entries are finite)
// and leave such a sum as it is. The same bits in half the scalar loop's
// time, the new matrix's clearing included (docs/performance-history.md).
func (w *bandWork) timesPanels(xm *mat.Dense, x, xp []float64, v *mat.Dense) *mat.Dense {
	rows, k := xm.Dims()
	if vr, vc := v.Dims(); vr != k || vc != k || len(x) != rows*k {
		panic(mat.ErrShape) // as rowsTimes
	}
	out := mat.NewDense(rows, k, nil)
	o := out.RawMatrix().Data
	vt := w.panelVT[:k*k]
	for l := 0; l < k; l++ {
		for j := 0; j < k; j++ {
			vt[j*k+l] = v.At(l, j)
		}
	}
	if len(w.panelMinus) < len(x) {
		w.panelMinus, w.panelClip = make([]float64, len(x)), make([]uint64, rows)
	}
	minus, clip := w.panelMinus[:len(x)], w.panelClip[:rows]
	panels := rows / 4
	if panels > 0 {
		rotatedPanels(&o[0], &minus[0], &clip[0], &xp[0], &vt[0], &w.noClip[0], &spreadBits[0], k, panels)
	}
	at := 4 * panels * k
	rotatedRows(o[at:], minus[at:], clip[4*panels:], x[at:], vt, w.noClip, k)
	return out
}

// rowsTimes returns x·v (x r × k, v k × k), each entry summed over l in
// order, from +0, of the products x_il·v_lj whose first factor is not
// zero: gonum's order for X·V (dgemmSerialNotNot, each row whole; it
// formed them before, on goroutines of its own), so the same bits,
// without the goroutines.
func rowsTimes(x, v *mat.Dense) *mat.Dense {
	r, k := x.Dims()
	if vr, vc := v.Dims(); vr != k || vc != k {
		panic(mat.ErrShape) // as gonum's product
	}
	xm, vm := x.RawMatrix(), v.RawMatrix()
	out := mat.NewDense(r, k, nil)
	o := out.RawMatrix().Data
	for i := 0; i < r; i++ {
		orow := o[i*k : i*k+k]
		for l, xv := range xm.Data[i*xm.Stride : i*xm.Stride+k] {
			if xv == 0 {
				continue
			}
			vr := vm.Data[l*vm.Stride : l*vm.Stride+k]
			vr = vr[:len(orow)]
			for j, w := range vr {
				orow[j] += xv * w
			}
		}
	}
	return out
}

func (p *bandProblem) contribution(t *mat.Dense, j int) float64 {
	a, b, _, ok := p.rotate(t)
	if !ok {
		return math.NaN()
	}
	return math.Sqrt(colNormSq(a, j)*colNormSq(b, j)) / p.norm
}

// violation is the largest relative constraint violation of any component.
func (p *bandProblem) violation(a, b *mat.Dense) float64 {
	worst := 0.0
	side := func(x *mat.Dense, nn []bool, zero [][]bool) {
		r, k := x.Dims()
		for j := 0; j < k; j++ {
			z := zeroColumn(zero, j)
			bad, all := 0.0, 0.0
			for i := 0; i < r; i++ {
				v := x.At(i, j)
				all += v * v
				if clippedOut(v, i, nn[j], z) {
					bad += v * v
				}
			}
			if all > 0 {
				worst = math.Max(worst, math.Sqrt(bad/all))
			}
		}
	}
	side(a, p.nnC, p.opt.ZeroProfiles)
	side(b, p.nnS, p.opt.ZeroSpectra)
	return worst
}

// extreme minimises sign·f_j and returns the end point, f_j there,
// whether it is feasible, the evaluations used and whether the search
// converged (sqpTol within the noise; see stages for the exact fit).
//
// Exact fit (no allowance): the penalty sequence of stages.
//
// Within the noise the exact-fit extreme comes first (it lies inside the
// allowance) and minimiseSQP carries it out to the boundary of the
// allowance (noiseSQP). The exact-fit extreme is then only that search's
// start, and its sequence stops at the first stage ending feasible,
// converged or not (stagePlan.seed), with stages stopped once three
// iterations in a row lower the objective by less than 10⁻⁸ of it
// (seedStall): the stiffer stages and the last digits only move the
// start (docs/performance-history.md, fifth and eighth rounds of issue 15). The
// seed also picks the local extreme the search ends in: started from the
// solution itself SQP ended elsewhere on three of the demo's six ends,
// two of them further in.
//
// Until the ninth round the noise stage was a quadratic penalty
// μ·max(0, rise/allowance − 1)², μ = 10⁵, minimised by BFGS within a
// sixteenth of the budget: the extreme lies on the allowance's boundary,
// where that penalty is a narrow curved valley, and BFGS zigzagged across
// it in steps of 10⁻⁴ of the rotation and stopped on its budget 0.3–2.1 %
// of f_j short of the extreme on the urethane series (docs/performance-history.md).
func (p *bandProblem) extreme(j int, sign float64) ([]float64, float64, bool, int, bool) {
	theta := make([]float64, len(p.free))
	if len(theta) == 0 {
		return theta, p.contribution(identity(p.k), j), true, 0, true
	}
	allow := p.allow
	p.allow = 0
	exact := stagePlan{mus: []float64{1e2, 1e4, 1e6, 1e8}, budget: p.opt.MaxEvaluations / 4, seed: allow > 0, stall: endStall}
	if allow > 0 {
		exact.stall = seedStall
	}
	th, f, ok, evals, conv := p.stages(j, sign, theta, exact)
	p.allow = allow
	if allow == 0 {
		return th, f, ok, evals, conv
	}
	th, f, ok, more, conv := p.noiseSQP(j, sign, th)
	return th, f, ok, evals + more, conv
}

// sqpTol is the accuracy asked of sign·log f_j at a range's end within the
// noise (minimiseSQP's tol): the search stops when its next step promises
// to move f_j by less than 10⁻⁵ of itself. The ranges are printed to four
// digits, a resolution of 10⁻⁴ of f_j or coarser, so the last printed
// digit is the converged one but at a rounding boundary. The test is of
// first order; measured, the ends it stops at lie within 5·10⁻⁷ of f_j of
// a search run to 10⁻¹⁰ on the urethane series and on 2000 × 3001 and
// within 4.4·10⁻⁶ on the demo (docs/performance-history.md).
const sqpTol = 1e-5

// sqpFeas is how far above the allowance's boundary a range's end within
// the noise may stop (minimiseSQP's feas, on c = √(rise/allowance) − 1):
// 10⁻⁴, the rise within 2·10⁻⁴ of the allowance, a fifth of the Tolerance
// (10⁻³ by default) to which the end is judged to keep it. What stopping
// there instead of at c ≤ sqpTol can move the end is already in the
// stopping test's λ|c| ≤ sqpTol; the last ten or so steps of a search
// took c from about 10⁻³ to 10⁻⁵ at a near-constant f_j. On the four
// reference runs the ends moved by at most 2.1·10⁻⁶ of themselves, and
// the 2000 × 3001 run's ten searches took 203 steps instead of 264
// (docs/performance-history.md, twenty-fourth round).
const sqpFeas = 1e-4

// noiseSQP carries the exact-fit end theta0 out to the boundary of the
// noise allowance by minimiseSQP within a sixteenth of the budget, and
// returns the end (theta0 itself when the search ends no further out),
// f_j of its constrained pair, whether it keeps the allowance within
// Tolerance, the evaluations and whether the search converged.
//
// When it returns the search's own end it leaves every component's share
// there in p.work.shares (nil otherwise), which crossSeed would otherwise
// form again from the end's rotation, to the same bits.
func (p *bandProblem) noiseSQP(j int, sign float64, theta0 []float64) ([]float64, float64, bool, int, bool) {
	p.work.shares = nil
	startF := p.startShare(theta0, j)
	r := minimiseSQP(bandNoise{p, j, sign}, theta0, sqpOptions{maxEval: p.opt.MaxEvaluations / 16, tol: sqpTol, feas: sqpFeas})
	a, b, _, ok := p.rotate(p.rotation(r.x))
	if !ok || p.rise(a, b, nil, nil) > p.allow*(1+p.opt.Tolerance) {
		return theta0, startF, false, r.evals, false
	}
	a, b = p.constrainedPair(a, b)
	if f := math.Sqrt(colNormSq(a, j)*colNormSq(b, j)) / p.norm; sign*f < sign*startF {
		p.work.shares = p.shares(a, b)
		return r.x, f, true, r.evals, r.converged
	}
	return theta0, startF, true, r.evals, r.converged
}

// shares are every component's f_j = ‖a_j‖‖b_j‖/‖C Sᵀ‖ of the pair a, b.
func (p *bandProblem) shares(a, b *mat.Dense) []float64 {
	out := make([]float64, p.k)
	for j := range out {
		out[j] = math.Sqrt(colNormSq(a, j)*colNormSq(b, j)) / p.norm
	}
	return out
}

// stagePlan is a penalty sequence: its weights μ, the evaluations of each
// stage, and seed: the end only starts a later search, so the sequence
// stops at the first feasible end even when that stage used its whole
// budget.
type stagePlan struct {
	mus    []float64
	budget int
	seed   bool
	stall  float64 // minimiseBFGS's stall
}

// The relative decrease of the objective per iteration below which a
// stage counts as stalled (minimiseBFGS; three in a row end it): endStall
// for the stages whose end is reported, seedStall for the exact-fit seed
// of a range within the noise (see extreme).
const (
	endStall  = 1e-12
	seedStall = 1e-8
)

// stages runs the penalty sequence of plan from theta (see extreme):
// non-negativity and zero windows as the quadratic penalty μ Σ min(0, x)²,
// minimised by BFGS for each μ in turn, each stage starting where the last
// ended (a sequential penalty method, Fiacco & McCormick 1968).
//
// The sequence stops at the first stage that converges (ends within its
// budget) at a point keeping the constraints within Tolerance, or with
// plan.seed at the first such point. The
// minimisers of a quadratic penalty approach the constrained extreme from
// outside as μ grows (Nocedal & Wright, Numerical Optimization, 2nd ed.,
// §17.1, Framework 17.1 stops once the tolerance is met), so a larger μ
// would only pull that point back towards the interior, and the most
// extreme feasible end, which is what is kept, is the one in hand. On
// data whose resolution is nearly unique the first stage already ends
// feasible, and the three stiffer ones took two thirds of the evaluations
// for the same ranges to the last digit (docs/performance-history.md).
//
// The end counts as converged when the last stage run stopped on
// minimiseBFGS's own rule (stall, vanishing gradient, no decrease), not on
// its budget: a minimum of that stage's penalty function to the stall's
// accuracy, which is the constrained extreme to within the violation that
// Tolerance allows.
func (p *bandProblem) stages(j int, sign float64, theta0 []float64, plan stagePlan) ([]float64, float64, bool, int, bool) {
	theta := append([]float64(nil), theta0...)
	evals, lastOK := 0, false
	bestTheta := append([]float64(nil), theta...)
	bestF := p.startShare(theta, j)
	lastConv := false
	for _, mu := range plan.mus {
		x, _, used, conv := minimiseBFGS(bandObjective{p, j, sign, mu}, theta, bfgsOptions{maxEval: plan.budget, stall: plan.stall})
		evals += used
		lastConv = conv
		theta = append(theta[:0], x...)
		t := p.rotation(theta)
		a, b, _, ok := p.rotate(t)
		if !ok {
			// The stage ended where the rotation is singular: its
			// convergence is not the returned end's.
			lastConv = false
			break
		}
		if p.allow > 0 {
			lastOK = p.rise(a, b, nil, nil) <= p.allow*(1+p.opt.Tolerance)
			a, b = p.constrainedPair(a, b)
		} else {
			lastOK = p.violation(a, b) <= p.opt.Tolerance
		}
		if lastOK {
			f := math.Sqrt(colNormSq(a, j)*colNormSq(b, j)) / p.norm
			if sign*f < sign*bestF {
				bestF = f
				bestTheta = append(bestTheta[:0], theta...)
			}
			if used < plan.budget || plan.seed {
				break
			}
		}
	}
	return bestTheta, bestF, lastOK, evals, lastConv && lastOK
}

// startShare is f_j at the stages' start theta. At θ = 0 (every first
// stage) T is the identity, C T = C and S T⁻ᵀ = S exactly (the products
// add only zero terms to each entry and the inverse of I is I), so f_j is
// taken from C and S without forming the two products.
func (p *bandProblem) startShare(theta []float64, j int) float64 {
	for _, v := range theta {
		if v != 0 {
			return p.contribution(p.rotation(theta), j)
		}
	}
	return math.Sqrt(colNormSq(p.c, j)*colNormSq(p.s, j)) / p.norm
}

// component returns column j of C T and S T⁻ᵀ, scaled as FeasibleBands
// documents.
func (p *bandProblem) component(t *mat.Dense, j int) ([]float64, []float64, error) {
	a, b, _, ok := p.rotate(t)
	if !ok {
		return nil, nil, errors.New("bands: the extreme rotation is singular")
	}
	if p.allow > 0 {
		a, b = p.constrainedPair(a, b)
	}
	prof, spec := mat.Col(nil, j, a), mat.Col(nil, j, b)
	if !p.opt.Closure && !(j < len(p.opt.Known) && p.opt.Known[j]) {
		ns := math.Sqrt(dot(spec, spec))
		want := math.Sqrt(colNormSq(p.s, j))
		if ns > 0 {
			f := want / ns
			for i := range spec {
				spec[i] *= f
			}
			for i := range prof {
				prof[i] /= f
			}
		}
	}
	return prof, spec, nil
}

// zeroColumn is component j's zero window among zero (nil: it has none).
func zeroColumn(zero [][]bool, j int) []bool {
	if j < len(zero) {
		return zero[j]
	}
	return nil
}

// clippedOut says whether the constraints set entry i of a component, v,
// to zero: it lies in the component's zero window z, or it is negative in
// a non-negative component. The one rule of clip, clipped and violation.
func clippedOut(v float64, i int, nonneg bool, z []bool) bool {
	return z != nil && z[i] || nonneg && v < 0
}

// clip returns x with the constraints imposed (negative entries of
// non-negative components and zero-window entries set to zero) and the
// mask of the entries kept.
func (p *bandProblem) clip(x *mat.Dense, nn []bool, zero [][]bool) (*mat.Dense, *mat.Dense) {
	r, k := x.Dims()
	out, mask := mat.NewDense(r, k, nil), mat.NewDense(r, k, nil)
	for j := 0; j < k; j++ {
		z := zeroColumn(zero, j)
		for i := 0; i < r; i++ {
			v := x.At(i, j)
			if clippedOut(v, i, nn[j], z) {
				continue
			}
			out.Set(i, j, v)
			mask.Set(i, j, 1)
		}
	}
	return out, mask
}

// clipped is clip's first result alone (x with the constraints imposed),
// without the mask.
func (p *bandProblem) clipped(x *mat.Dense, nn []bool, zero [][]bool) *mat.Dense {
	r, k := x.Dims()
	out := mat.NewDense(r, k, nil)
	xm, o := x.RawMatrix(), out.RawMatrix().Data
	for j := 0; j < k; j++ {
		z := zeroColumn(zero, j)
		for i := 0; i < r; i++ {
			v := xm.Data[i*xm.Stride+j]
			if clippedOut(v, i, nn[j], z) {
				continue
			}
			o[i*k+j] = v
		}
	}
	return out
}

// rise returns ‖A Bᵀ − A₊B₊ᵀ‖²_F, the change of the model when the
// constraints are imposed on the rotated pair, and adds its gradients with
// respect to A and B into ga and gb when non-nil. It is formed as
// ‖[A₋ A₊][B B₋]ᵀ‖² with A₋ = A − A₊, B₋ = B − B₊ (small terms, no
// cancellation), on Gram matrices: O((n + m)k²).
func (p *bandProblem) rise(a, b, ga, gb *mat.Dense) float64 {
	memo := p.memo()
	if ga != nil || memo == nil || memo.a != a || memo.b != b {
		return p.riseNew(a, b, ga, gb)
	}
	if !memo.haveRise {
		memo.rise, memo.haveRise = p.riseNew(a, b, nil, nil), true
	}
	return memo.rise
}

// riseNew is rise formed afresh.
func (p *bandProblem) riseNew(a, b, ga, gb *mat.Dense) float64 {
	k := p.k
	if ga == nil {
		// The value alone needs only the constrained pair, which the
		// search's stage ends and amplitude ask for at the same rotation
		// (constrainedPair keeps it): the same clip, formed once.
		ap, bp := p.constrainedPair(a, b)
		return riseGram(a, b, ap, bp)
	}
	ap, ma := p.clip(a, p.nnC, p.opt.ZeroProfiles)
	bp, mb := p.clip(b, p.nnS, p.opt.ZeroSpectra)
	var am, bm mat.Dense
	am.Sub(a, ap)
	bm.Sub(b, bp)
	x := mat.NewDense(p.n, 2*k, nil)
	x.Slice(0, p.n, 0, k).(*mat.Dense).Copy(&am)
	x.Slice(0, p.n, k, 2*k).(*mat.Dense).Copy(ap)
	y := mat.NewDense(p.m, 2*k, nil)
	y.Slice(0, p.m, 0, k).(*mat.Dense).Copy(b)
	y.Slice(0, p.m, k, 2*k).(*mat.Dense).Copy(&bm)
	var gx, gy mat.Dense
	gx.Mul(x.T(), x)
	gy.Mul(y.T(), y)
	d := 0.0
	for i := 0; i < 2*k; i++ {
		for j := 0; j < 2*k; j++ {
			d += gx.At(i, j) * gy.At(i, j)
		}
	}
	// ∂‖X Yᵀ‖²/∂X = 2 X (YᵀY), ∂/∂Y = 2 Y (XᵀX); then through the masks.
	var dx, dy mat.Dense
	dx.Mul(x, &gy)
	dy.Mul(y, &gx)
	for i := 0; i < p.n; i++ {
		for j := 0; j < k; j++ {
			w := ma.At(i, j)
			ga.Set(i, j, ga.At(i, j)+2*((1-w)*dx.At(i, j)+w*dx.At(i, k+j)))
		}
	}
	for i := 0; i < p.m; i++ {
		for j := 0; j < k; j++ {
			gb.Set(i, j, gb.At(i, j)+2*(dy.At(i, j)+(1-mb.At(i, j))*dy.At(i, k+j)))
		}
	}
	return d
}

// riseGram is the value of riseNew, ‖X Yᵀ‖² = Σ (XᵀX)∘(YᵀY) with
// X = [A₋ A₊] and Y = [B B₋], A₋ = A − A₊ and B₋ = B − B₊ entry by
// entry, without forming X and Y: each row of X or Y is made in a scratch
// row, and each entry of a Gram matrix is summed over the rows in order,
// from +0, of the products whose first factor is not zero, the order of
// gonum's Xᵀ·X (dgemmSerialTransNot, which formed them before; the
// factors left out are ±0 and leave such a sum as it is), so that the
// rise has the same bits. The sum of the products of the two Gram
// matrices runs row-major, as before.
func riseGram(a, b, ap, bp *mat.Dense) float64 {
	_, k := a.Dims()
	k2 := 2 * k
	gx, gy, row := make([]float64, k2*k2), make([]float64, k2*k2), make([]float64, k2)
	gramOfSplit(gx, row, a.RawMatrix(), ap.RawMatrix(), true)
	gramOfSplit(gy, row, b.RawMatrix(), bp.RawMatrix(), false)
	d := 0.0
	for i, v := range gx {
		d += v * gy[i]
	}
	return d
}

// gramOfSplit sets g (2k × 2k) to XᵀX for the rows x_i = [y_i − z_i, z_i]
// (first true) or [y_i, y_i − z_i] of y and z (n × k), summed as riseGram
// says.
func gramOfSplit(g, row []float64, y, z blas64.General, first bool) {
	k := y.Cols
	clear(g)
	for i := 0; i < y.Rows; i++ {
		yr, zr := y.Data[i*y.Stride:i*y.Stride+k], z.Data[i*z.Stride:i*z.Stride+k]
		zr = zr[:len(yr)]
		for j, v := range yr {
			if first {
				row[j], row[k+j] = v-zr[j], zr[j]
			} else {
				row[j], row[k+j] = v, v-zr[j]
			}
		}
		addRowProducts(g, row, row)
	}
}

// crossGram returns xᵀy (k × k, row-major) for x and y of k columns, each
// entry summed over the rows in order, from +0, of the products whose
// first factor is not zero: gonum's order for Xᵀ·Y (see riseGram).
func crossGram(x, y blas64.General) []float64 {
	k := x.Cols
	g := make([]float64, k*k)
	for i := 0; i < x.Rows; i++ {
		addRowProducts(g, x.Data[i*x.Stride:i*x.Stride+k], y.Data[i*y.Stride:i*y.Stride+y.Cols])
	}
	return g
}

// addRowProducts adds the outer product of one row of each factor, xᵀy,
// into g (len(x) × len(y), row-major), skipping the rows of it whose x
// entry is zero: one step of the Gram sums riseGram and crossGram take in
// gonum's order.
func addRowProducts(g, x, y []float64) {
	n := len(y)
	for p, v := range x {
		if v == 0 {
			continue
		}
		gp := g[p*n : p*n+n]
		for q, w := range y {
			gp[q] += v * w
		}
	}
}

// constrainedPair is the rotated pair with the constraints imposed (kept
// with the last rotation: the callers must not change it).
func (p *bandProblem) constrainedPair(a, b *mat.Dense) (*mat.Dense, *mat.Dense) {
	memo := p.memo()
	if memo != nil && memo.a == a && memo.b == b && memo.ap != nil {
		return memo.ap, memo.bp
	}
	ap, bp := p.clipped(a, p.nnC, p.opt.ZeroProfiles), p.clipped(b, p.nnS, p.opt.ZeroSpectra)
	if memo != nil && memo.a == a && memo.b == b {
		memo.ap, memo.bp = ap, bp
	}
	return ap, bp
}

// amplitude returns f_j of the constrained pair at rotation t with
// component j scaled by 1+ε, ε = dir·√(allowance)/‖a_j b_jᵀ‖ (see
// FeasibleBands), and the factor 1+ε.
//
// The pair's model is A₊B₊ᵀ = C Sᵀ − Δ with Δ = A₋Bᵀ + A₊B₋ᵀ (A Bᵀ = C Sᵀ
// for any rotation; A₋ = A − A₊, B₋ = B − B₊ the clipped parts), and its
// norm and its product with a_j b_jᵀ are formed from that: ‖C Sᵀ‖² is the
// solution's, and every other term pairs a small factor (C, S, A₋, B₋)
// with a rotated one. The plain Gram form tr(A₊ᵀA₊ B₊ᵀB₊) sums terms of
// size ‖a_l‖²‖b_l‖² that cancel to ‖C Sᵀ‖², so its rounding grows as the
// square of the rotation's size: where the search of an unbounded range
// stops (components far larger than the data, cancelling each other) it
// swamped the value, the share came out below the solution's, and the
// demo's unbounded reaction range was reported as bounded.
func (p *bandProblem) amplitude(t *mat.Dense, j int, dir float64) (float64, float64) {
	a, b, _, ok := p.rotate(t)
	if !ok {
		return math.NaN(), 1
	}
	ap, bp := p.constrainedPair(a, b)
	var am, bm mat.Dense
	am.Sub(a, ap)
	bm.Sub(b, bp)
	aj, bj := ap.ColView(j), bp.ColView(j)
	own := mat.Dot(aj, aj) * mat.Dot(bj, bj) // ‖a_j b_jᵀ‖²
	if !(own > 0) {
		return 0, 1
	}
	// ⟨C Sᵀ, Δ⟩ = Σ (CᵀA₋)∘(SᵀB) + Σ (CᵀA₊)∘(SᵀB₋).
	inner := func(x, y, u, v *mat.Dense) float64 {
		g, h := crossGram(x.RawMatrix(), y.RawMatrix()), crossGram(u.RawMatrix(), v.RawMatrix())
		s := 0.0
		for i, v := range g {
			s += v * h[i]
		}
		return s
	}
	csD := inner(p.c, &am, p.s, b) + inner(p.c, ap, p.s, &bm)
	dd := p.rise(a, b, nil, nil) // ‖Δ‖²
	norm2 := p.norm*p.norm - 2*csD + dd
	if !(norm2 > 0) {
		return 0, 1
	}
	// ⟨A₊B₊ᵀ, a_j b_jᵀ⟩ = (Cᵀa_j)·(Sᵀb_j) − (A₋ᵀa_j)·(Bᵀb_j) − (A₊ᵀa_j)·(B₋ᵀb_j).
	vecDot := func(x, u mat.Matrix, xv, uv mat.Vector) float64 {
		var g, h mat.VecDense
		g.MulVec(x.T(), xv)
		h.MulVec(u.T(), uv)
		return mat.Dot(&g, &h)
	}
	cross := vecDot(p.c, p.s, aj, bj) - vecDot(&am, b, aj, bj) - vecDot(ap, &bm, aj, bj)
	eps := dir * math.Min(math.Sqrt(p.allow/own), 0.5)
	total := norm2 + 2*eps*cross + eps*eps*own
	if !(total > 0) {
		return 0, 1 + eps
	}
	return (1 + eps) * math.Sqrt(own/total), 1 + eps
}
