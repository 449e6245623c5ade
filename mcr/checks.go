package mcr

import (
	"fmt"
	"math"
	"sync"

	"gonum.org/v1/gonum/mat"
)

// ConstraintCheck is what one group of constraints costs in fit: the
// resolution is repeated without it, from the constrained solution, and the
// two lacks of fit compared. Starting from the constrained solution, ALS can
// only lower the residual, so Without ≤ With up to the convergence
// tolerance; a large gap says the data disagree with the constraint.
type ConstraintCheck struct {
	Name               string
	With, Without      float64 // lack of fit %, with and without the constraint
	ResidualSSWith     float64
	ResidualSSWithout  float64
	Iterations         int // of the refit
	ComponentsAffected []int
	// Restarted: the constrained fit restarted from the freer solution
	// reached a lower residual than the resolution had; With is that one.
	Restarted bool
	// Freer is the refit without the constraint and Constrained the
	// restart under it when Restarted (nil otherwise: the resolution is
	// the fit with it): kept so that the caller can ask where the freer
	// fit lowered the residual (NamedRise).
	Freer, Constrained *Result
}

// CheckConstraints refits without each active group of constraints in opt:
// closure, non-negative spectra, non-negative profiles, unimodality, known
// spectra, zero windows of profiles and of spectra. The mode's defaults of
// non-negativity count as constraints. maxIter bounds each refit (0 = 200).
// Every refit that gets below the constrained fit is followed by a restart
// under the constraint (see CheckConstraintsWith).
func CheckConstraints(d Data, fit *Result, opt Options, maxIter int) ([]ConstraintCheck, error) {
	return CheckConstraintsWith(d, fit, opt, CheckOptions{MaxIter: maxIter})
}

// CheckOptions configure CheckConstraintsWith.
type CheckOptions struct {
	MaxIter int // bounds each refit and restart (0 = 200)
	// Restart, when set, is asked after each refit that got below the
	// constrained fit whether the restart under the constraint can change
	// what the caller concludes from the check (it sees the check before
	// the restart: With the resolution's, Without the refit's). The
	// restart is a full ALS run from the freer solution and takes most of
	// the checks' time (on the six-species hard-model benchmark about 3.0
	// of 3.4 s CPU, all restarts that could not change a verdict;
	// docs/performance-history.md); nil runs it after every such refit. The
	// refits run at the same time (see CheckConstraintsWith): Restart is
	// called from their goroutines, one call at a time, in no fixed order.
	Restart func(ConstraintCheck) bool
}

// CheckConstraintsWith is CheckConstraints with the restarts chosen by
// co.Restart. The refits read the data, the fit and opt and share nothing
// they write, so each runs on a goroutine of its own (one at a time when
// opt holds a kinetic model, which may keep state between its calls): a
// refit is a chain of small products and solves that keeps about one core
// busy, and one after another they were the tail of the uniqueness ranges'
// phase (docs/performance-history.md). The checks, and the first error or panic,
// are those of the refits run one after another, in the groups' order.
func CheckConstraintsWith(d Data, fit *Result, opt Options, co CheckOptions) ([]ConstraintCheck, error) {
	if co.MaxIter <= 0 {
		co.MaxIter = 200
	}
	_, k := fit.C.Dims()
	opt.Observe = nil
	opt.MaxIter = co.MaxIter
	opt.stopAtRoundingFloor = true
	groups := constraintGroups(opt, k)
	if ask := co.Restart; ask != nil {
		// The caller's function is asked one refit at a time, as it was
		// when the refits ran one after another.
		var mu sync.Mutex
		co.Restart = func(cc ConstraintCheck) bool {
			mu.Lock()
			defer mu.Unlock()
			return ask(cc)
		}
	}
	outs := make([]checkOutcome, len(groups))
	refit := func(i int) {
		defer outs[i].catch()
		g := groups[i]
		outs[i].check, outs[i].err = checkWithout(d, fit, opt, co, g.name, g.drop, g.comps)
	}
	if opt.HardModel != nil || opt.HardKept != nil {
		for i := range groups {
			if refit(i); outs[i].panicked || outs[i].err != nil {
				break
			}
		}
	} else {
		var wg sync.WaitGroup
		for i := range groups {
			wg.Add(1)
			go func() {
				defer wg.Done()
				refit(i)
			}()
		}
		wg.Wait()
	}
	var out []ConstraintCheck
	for i, o := range outs {
		if o.panicked {
			panic(o.fault)
		}
		if o.err != nil {
			return out, fmt.Errorf("check without %s: %w", groups[i].name, o.err)
		}
		out = append(out, o.check)
	}
	return out, nil
}

// constraintGroup is one group of constraints a check drops: its name, how
// to take it out of the options, and the components it applies to.
type constraintGroup struct {
	name  string
	drop  func(o *Options)
	comps []int
}

// constraintGroups lists the active groups of constraints in opt, in the
// order the checks report them (see CheckConstraints).
func constraintGroups(opt Options, k int) []constraintGroup {
	var groups []constraintGroup
	if opt.Closure {
		groups = append(groups, constraintGroup{"closure", func(o *Options) { o.Closure = false }, nil})
	}
	nnS := boolsOr(opt.NonNegSpectra, k, opt.Mode == Species)
	nnP := boolsOr(opt.NonNegProfiles, k, true)
	if c := trueIndices(nnS); len(c) > 0 {
		groups = append(groups, constraintGroup{"non-negative spectra", func(o *Options) { o.NonNegSpectra = make([]bool, k) }, c})
	}
	if c := trueIndices(nnP); len(c) > 0 {
		groups = append(groups, constraintGroup{"non-negative profiles", func(o *Options) { o.NonNegProfiles = make([]bool, k) }, c})
	}
	if c := trueIndices(opt.Unimodal); len(c) > 0 {
		groups = append(groups, constraintGroup{"unimodal profiles", func(o *Options) { o.Unimodal = nil }, c})
	}
	var known []int
	for j, s := range opt.KnownSpectra {
		if s != nil {
			known = append(known, j)
		}
	}
	if len(known) > 0 {
		groups = append(groups, constraintGroup{"known spectra", func(o *Options) { o.KnownSpectra, o.KnownWeights = nil, nil }, known})
	}
	if c := anyMask(opt.ZeroProfiles); len(c) > 0 {
		groups = append(groups, constraintGroup{"zero windows of profiles", func(o *Options) { o.ZeroProfiles = nil }, c})
	}
	if c := anyMask(opt.ZeroSpectra); len(c) > 0 {
		groups = append(groups, constraintGroup{"zero windows of spectra", func(o *Options) { o.ZeroSpectra = nil }, c})
	}
	return groups
}

// checkOutcome is one refit's check, its error, or its panic, carried to
// the goroutine that waits for the refits.
type checkOutcome struct {
	check    ConstraintCheck
	err      error
	panicked bool
	fault    any
}

// catch recovers the refit's panic into o; it must be deferred directly on
// the refit's goroutine.
func (o *checkOutcome) catch() {
	if p := recover(); p != nil {
		o.panicked, o.fault = true, p
	}
}

// checkWithout refits without one group of constraints (drop takes it out
// of opt) from the constrained fit, and restarts under the constraint from
// the freer solution when co.Restart asks (see CheckConstraintsWith).
func checkWithout(d Data, fit *Result, opt Options, co CheckOptions, name string, drop func(*Options), comps []int) (ConstraintCheck, error) {
	_, k := fit.C.Dims()
	o := opt
	drop(&o)
	res, err := Resolve(d, reviveVanished(d, fit, comps, boolsOr(opt.NonNegProfiles, k, true)), o)
	if err != nil {
		return ConstraintCheck{}, err
	}
	cc := ConstraintCheck{Name: name, With: fit.LackOfFitPercent, Without: res.LackOfFitPercent,
		ResidualSSWith: fit.ResidualSS, ResidualSSWithout: res.ResidualSS, Iterations: res.Iterations, ComponentsAffected: comps, Freer: res}
	// A refit that did not get below the constrained fit (within the
	// tolerance) means the constraint costs nothing.
	if cc.ResidualSSWithout > cc.ResidualSSWith {
		cc.ResidualSSWithout, cc.Without = cc.ResidualSSWith, cc.With
		return cc, nil
	}
	if co.Restart != nil && !co.Restart(cc) {
		return cc, nil
	}
	// Before the gap is blamed on the constraint, try to reach the
	// freer fit's level under it: ALS with the constraint again,
	// started from the freer solution projected onto it (negative
	// profile values set to zero). A lower constrained fit means the
	// first one was a local minimum, not the constraint's price.
	c0 := mat.DenseCopyOf(res.C)
	clampColumns(c0, boolsOr(opt.NonNegProfiles, k, true))
	ro := opt
	ro.stopAtRoundingFloor = false
	if again, err := Resolve(d, c0, ro); err == nil && again.ResidualSS < (1-1e-6)*cc.ResidualSSWith {
		cc.ResidualSSWith, cc.With = again.ResidualSS, again.LackOfFitPercent
		cc.Restarted, cc.Constrained = true, again
		if cc.ResidualSSWithout > cc.ResidualSSWith {
			cc.ResidualSSWithout, cc.Without = cc.ResidualSSWith, cc.With
		}
	}
	return cc, nil
}

// reviveVanished is the start of a refit without a constraint: the
// constrained profiles, with every component of comps whose profile the
// constraint held at zero everywhere (a zero region over the whole axis
// forces the spectrum, and with it the profile, to zero) given instead a
// direction of the residual D − C Sᵀ the fit leaves. ALS cannot bring such
// a component back by itself: with c_j = 0 its spectrum is undetermined and
// taken as zero, and with s_j = 0 the next profile is zero again, so a
// refit from the constrained profiles alone ends where the constrained fit
// did and reports that the constraint costs nothing. The start's first
// half step still fits no worse than the constrained fit (s_j = 0 is one of
// the spectra it chooses from), so the refit stays a descent from it. fit.C
// itself is returned when nothing vanished.
func reviveVanished(d Data, fit *Result, comps []int, nonneg []bool) *mat.Dense {
	var dead []int
	for _, j := range comps {
		if floatsMaxAbs(mat.Col(nil, j, fit.C)) == 0 {
			dead = append(dead, j)
		}
	}
	if len(dead) == 0 {
		return fit.C
	}
	n, _ := fit.C.Dims()
	u := residualDirections(d, fit.C, fit.S, len(dead))
	scale := 1.0
	if top := maxAbsDense(fit.C); top > 0 {
		scale = top
	}
	c0 := mat.DenseCopyOf(fit.C)
	for q, j := range dead {
		col := mat.Col(nil, q, u)
		// The part of the other sign is cut where profiles are non-negative.
		sign := energySign(col)
		top := floatsMaxAbs(col)
		if !(top > 0) {
			continue
		}
		for i := 0; i < n; i++ {
			v := sign * col[i] / top * scale
			if nonneg[j] && v < 0 {
				v = 0
			}
			c0.Set(i, j, v)
		}
	}
	return c0
}

// residualIters is the number of subspace iterations residualDirections
// takes: a start only has to point into the residual's leading
// directions, which a few dozen products find on data whose leading
// singular values are apart (the error shrinks as (σ_{q+1}/σ_q)^iter;
// Golub & Van Loan, Matrix Computations, §8.2, from memory).
const residualIters = 30

// residualDirections returns q orthonormal time vectors (n × q) spanning
// about the leading left singular subspace of E = D − C Sᵀ, by subspace
// iteration from a fixed start (deterministic), through the products Data
// offers: Eᵀ U = Dᵀ U − S (Cᵀ U), E V = D V − C (Sᵀ V).
func residualDirections(d Data, c, s *mat.Dense, q int) *mat.Dense {
	n, _ := d.Dims()
	u := mat.NewDense(n, q, nil)
	for i := 0; i < n; i++ {
		for l := 0; l < q; l++ {
			// Smooth, distinct start vectors: cos(π l (i+½)/n), the
			// first a constant.
			u.Set(i, l, math.Cos(math.Pi*float64(l)*(float64(i)+0.5)/float64(n)))
		}
	}
	orthonormalizeColumns(u)
	for it := 0; it < residualIters; it++ {
		var ctu, sv mat.Dense
		v := d.MulProfiles(u) // m × q
		ctu.Mul(c.T(), u)
		sv.Mul(s, &ctu)
		v.Sub(v, &sv)
		orthonormalizeColumns(v)
		var stv, cs mat.Dense
		u = d.MulSpectra(v) // n × q
		stv.Mul(s.T(), v)
		cs.Mul(c, &stv)
		u.Sub(u, &cs)
		orthonormalizeColumns(u)
	}
	return u
}

// orthonormalizeColumns makes x's columns orthonormal in place by modified
// Gram–Schmidt, twice (enough for the few columns here; Giraud et al.,
// Numer. Math. 2005, from memory); a column that vanishes stays zero.
func orthonormalizeColumns(x *mat.Dense) {
	n, q := x.Dims()
	for pass := 0; pass < 2; pass++ {
		for l := 0; l < q; l++ {
			for p := 0; p < l; p++ {
				dot := 0.0
				for i := 0; i < n; i++ {
					dot += x.At(i, l) * x.At(i, p)
				}
				for i := 0; i < n; i++ {
					x.Set(i, l, x.At(i, l)-dot*x.At(i, p))
				}
			}
			nrm := 0.0
			for i := 0; i < n; i++ {
				nrm += x.At(i, l) * x.At(i, l)
			}
			if nrm = math.Sqrt(nrm); nrm > 0 {
				for i := 0; i < n; i++ {
					x.Set(i, l, x.At(i, l)/nrm)
				}
			}
		}
	}
}

// maxAbsDense is the largest |x_ij|.
func maxAbsDense(x *mat.Dense) float64 {
	r, _ := x.Dims()
	top := 0.0
	for i := 0; i < r; i++ {
		top = max(top, floatsMaxAbs(x.RawRowView(i)))
	}
	return top
}

func trueIndices(b []bool) []int {
	var out []int
	for j, v := range b {
		if v {
			out = append(out, j)
		}
	}
	return out
}

func anyMask(m [][]bool) []int {
	var out []int
	for j, row := range m {
		for _, v := range row {
			if v {
				out = append(out, j)
				break
			}
		}
	}
	return out
}

// TimeConstantPattern measures the part of the residual E = D − C Sᵀ that is
// one fixed pattern in every row: ē_j = (1/n) Σ_i E_ij, returning n‖ē‖² (the
// residual sum of squares a constant-in-time term would remove) and whether
// ē is noise-like across the axis: lag-1 autocorrelation about its mean
// below 0.5, where a band-shaped misfit sampled a few points per band width
// gives 0.8–1 (Shrager & Hendler 1982, from memory, use 0.3 for pure
// noise; the pattern left where spectra are pinned at zero comes in runs,
// which lifts it). A blank's or
// reference's own noise is such a pattern (A = −log₁₀(I/I_blank) carries the
// blank's noise into every row alike): a freer refit can fold it into the
// spectra, which lowers the residual without any constraint being wrong.
//
// With row × column noise weights w_ij = a_i·b_j (row, col non-nil) the
// pattern is the weighted mean ē_j = Σ_i a_i E_ij / Σ_i a_i, the
// constant-in-time term that least-squares in the weighted metric removes,
// and the sum is Σ_i a_i · Σ_j b_j ē_j² (in units of the noise variance
// when the weights are 1/σ²); whiteness is judged on √b_j ē_j, the pattern
// in units of its noise.
//
// The weighted mean of the fit is (aᵀC) Sᵀ, so only D is read row by row
// and C Sᵀ is never formed: O(nm + (n + m)k) and no n × m matrix.
func TimeConstantPattern(d, c, s *mat.Dense, row, col []float64) (ss float64, white bool) {
	n, m := d.Dims()
	_, k := c.Dims()
	mean := make([]float64, m)
	ac := make([]float64, k) // Σ_i a_i c_i
	wsum := 0.0
	for i := 0; i < n; i++ {
		a := 1.0
		if row != nil {
			a = row[i]
		}
		wsum += a
		for j, v := range d.RawRowView(i)[:m] {
			mean[j] += a * v
		}
		for l := 0; l < k; l++ {
			ac[l] += a * c.At(i, l)
		}
	}
	if !(wsum > 0) {
		return 0, false
	}
	for j := range mean {
		fit := 0.0
		for l := 0; l < k; l++ {
			fit += ac[l] * s.At(j, l)
		}
		mean[j] = (mean[j] - fit) / wsum
		if col != nil {
			mean[j] *= math.Sqrt(col[j])
		}
	}
	// Whiteness about ē's own mean: where the spectra are pinned at zero
	// only the pattern's negative half is left, which is one-signed but
	// still white.
	var sq, mu float64
	for _, v := range mean {
		sq += v * v
		mu += v / float64(m)
	}
	var cs, lag float64
	for j, v := range mean {
		cs += (v - mu) * (v - mu)
		if j+1 < m {
			lag += (v - mu) * (mean[j+1] - mu)
		}
	}
	if !(cs > 0) {
		return 0, false
	}
	return wsum * sq, lag/cs < 0.5
}
