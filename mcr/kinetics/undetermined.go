package kinetics

import (
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// nullTol is the singular value of the Jacobian, relative to its largest,
// at or below which a direction of the parameters counts as not determined.
// The Jacobian is in the fit's own parameters (ln k, ln c0), where a column
// is the residual's change for a relative change of one parameter, so the
// ratio compares like with like. 1e-8 is about √ε: the sum of squares
// along such a direction changes by s²δ², below ε of its curvature along
// the best-determined one for any step δ of the same size, so the minimum
// along it is set by rounding, not by the data (common practice for the
// numerical rank of a Jacobian; the value is this program's choice). It is
// looser than Covariance's 1e-12, which only keeps the pseudo-inverse finite.
const nullTol = 1e-8

// nullShare is the squared length of a parameter's unit vector along the
// not-determined directions above which its variance counts as unbounded:
// 1e-6, a component of 1e-3, well above the directions' rounding.
const nullShare = 1e-6

// wideVar is the variance of ln k (se(k)/k squared, delta method) above
// which a constant counts as not determined though no direction of the
// Jacobian is at rounding level relative to the others: an e-fold change of
// the constant then moves the sum of squares by less than σ̂²/wideVar =
// 10⁻⁶ of one noise variance (ΔSSR ≈ (Δ ln k)² σ̂²/var(ln k), the
// linearised fit), so the data do not see it at all. That happens when
// every constant ran towards zero (A -> B fitted to a series that does not
// follow it): the Jacobian's largest singular value is then as small as the
// rest, and the relative test finds no null direction. A constant known to
// within a factor 10 or 100 stays well below it; the value is this
// program's choice.
const wideVar = 1e6

// undetermined marks the free rate constants the Jacobian does not
// determine. A parameter θ_a is determined when its unit vector lies in the
// row space of J (it is then an estimable function; any component along
// the null space makes its variance unbounded): here, when its squared
// component along the right singular vectors of singular value ≤ nullTol
// of the largest is at most nullShare. A constant that ran to zero (the
// residual no longer depends on it) and each of a reversible pair whose
// sum alone the data fix (A -> B, B -> A with free spectra) are such. Their
// standard errors, which the pseudo-inverse gives as if the null
// directions had no variance, are set to 0 and the constants marked; when
// their sum is determined (its gradient in ln k, the constants themselves,
// lies in the row space) it is given with its standard error wᵀ Σ w.
//
// A constant run to its bound (k → 0) has a column of size k in ln k,
// which counts as a null direction alone, so the rank in ln k cannot see
// that the constant it traded with is free too: A -> B, B -> A on the
// urethane series ended once at B -> A = 6.6e-16 and gave A -> B as
// determined, 0.0017 ± 0.0002, the sum of the pair. The same test is made
// on the Jacobian with every column scaled to unit length (each
// parameter's direction alone, whatever its size), and a constant counts
// as not determined when either finds it so.
func (p *fitProblem) undetermined(lm *LMResult, res *FitResult, cov *mat.Dense) {
	np := p.nParams()
	share, rank, ok := nullShareOf(lm.Jacobian)
	if !ok {
		return
	}
	res.jacParams, res.jacRank = np, rank
	unitShare, _, unitOK := nullShareOf(unitColumns(lm.Jacobian))
	nr := len(p.s.Steps)
	var grad []float64
	var steps []int
	for a, j := range p.kFree {
		e := make([]float64, np)
		e[a] = 1
		null := share(e) > nullShare || (unitOK && unitShare(e) > nullShare)
		// An error that is not finite is said as such by the callers
		// (too few spectra after t0), not as a ratio.
		wide := cov.At(a, a)
		tooWide := wide > wideVar && !math.IsInf(wide, 1)
		if !null && !tooWide {
			continue
		} else if !null {
			if res.kWide == nil {
				res.kWide = make([]float64, nr)
			}
			res.kWide[j] = math.Sqrt(wide)
		}
		if res.KNotDetermined == nil {
			res.KNotDetermined = make([]bool, nr)
			grad = make([]float64, np)
		}
		res.KNotDetermined[j], res.KStdErr[j] = true, 0
		for l := 0; l < nr; l++ {
			if l != j {
				res.Corr.Set(j, l, 0)
				res.Corr.Set(l, j, 0)
			}
		}
		grad[a] = res.K[j] // ∂k/∂ln k
		steps = append(steps, j)
	}
	if len(steps) < 2 || share(grad) > nullShare*floatsDot(grad, grad) {
		return
	}
	for _, j := range steps {
		if p.s.Steps[j].Order != p.s.Steps[steps[0]].Order {
			return // a sum of constants in different units says nothing
		}
	}
	sum := 0.0
	for _, j := range steps {
		sum += res.K[j]
	}
	se := math.Sqrt(math.Max(mat.Inner(mat.NewVecDense(np, grad), cov, mat.NewVecDense(np, grad)), 0))
	if !(se <= math.Sqrt(wideVar)*sum) {
		return // a sum as invisible to the data as its terms
	}
	res.SumSteps, res.sumGrad = steps, grad
	res.SumK, res.SumKStdErr = sum, se
}

// nullShareOf returns, for the Jacobian j, the function giving the squared
// length of a parameter vector along j's not-determined directions (right
// singular vectors of singular value ≤ nullTol of the largest), and j's rank
// counted the same way; ok is false when the SVD fails.
func nullShareOf(j *mat.Dense) (share func(w []float64) float64, rank int, ok bool) {
	var svd mat.SVD
	if !svd.Factorize(j, mat.SVDThinV) {
		return nil, 0, false
	}
	sv := svd.Values(nil)
	var v mat.Dense
	svd.VTo(&v)
	var null []int
	for k, x := range sv {
		if sv[0] > 0 && x > nullTol*sv[0] {
			rank++
		} else {
			null = append(null, k)
		}
	}
	share = func(w []float64) float64 {
		t := 0.0
		for _, k := range null {
			d := 0.0
			for a, x := range w {
				d += v.At(a, k) * x
			}
			t += d * d
		}
		return t
	}
	return share, rank, true
}

// unitColumns is a copy of j with every non-zero column scaled to unit
// length.
func unitColumns(j *mat.Dense) *mat.Dense {
	out := mat.DenseCopyOf(j)
	_, c := out.Dims()
	for a := range c {
		if n := mat.Norm(out.ColView(a), 2); n > 0 {
			col := out.ColView(a).(*mat.VecDense)
			col.ScaleVec(1/n, col)
		}
	}
	return out
}

func floatsDot(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}

// undeterminedWarning says which rate constants the data do not determine
// and how each got where it is reported: from which start it ran and
// whether to zero, where the residual no longer depends on it (a species
// the data barely see), and the sum the data do fix when there is one.
// Constants Levenberg–Marquardt held (held) have their own warning. When
// the not-determined directions hold no rate constant (an initial
// concentration), it says the Jacobian's rank as before.
func (p *fitProblem) undeterminedWarning(lm *LMResult, res *FitResult) {
	var parts []string
	for a, j := range p.kFree {
		if res.KNotDetermined == nil || !res.KNotDetermined[j] || (lm.Held != nil && lm.Held[a]) {
			continue
		}
		k := withUnit(fmt.Sprintf("%.4g", res.K[j]), p.rateUnit(j))
		part := fmt.Sprintf("step %q (fit ended at %s)", p.s.Steps[j].Text, k)
		switch {
		case res.kWide != nil && res.kWide[j] > 0:
			part = fmt.Sprintf("step %q (the fit ended at %s with a standard error %.2g times the constant itself: changing it e-fold moves the fit by less than 10⁻⁶ of the noise, so the data do not see it; a model the data do not follow?)", p.s.Steps[j].Text, k, res.kWide[j])
		case res.KStart == nil || !(res.KStart[j] > 0):
		case res.K[j] == res.KStart[j]:
			part = fmt.Sprintf("step %q (it stayed at %s, where this fit started)", p.s.Steps[j].Text, k)
		case res.K[j] < 1e-6*res.KStart[j]:
			start := withUnit(fmt.Sprintf("%.4g", res.KStart[j]), p.rateUnit(j))
			part = fmt.Sprintf("step %q (it ran from its start %s to %s, that is to zero, its only bound, where the residual no longer depends on it: a species the data barely see?)", p.s.Steps[j].Text, start, k)
		}
		parts = append(parts, part)
	}
	if len(parts) == 0 {
		held := 0
		for _, h := range lm.Held {
			if h {
				held++
			}
		}
		if res.t0Dropped {
			held++ // said by t0Warning
		}
		if res.jacParams > 0 && res.jacRank < res.jacParams-held {
			res.Warnings = append(res.Warnings, fmt.Sprintf("some combinations of the parameters can change without changing the fitted curves, so the data do not determine them (the Jacobian has rank %d for %d parameters); their standard errors use a pseudo-inverse and are not meaningful", res.jacRank, res.jacParams))
		}
		return
	}
	what := "the rate constant of "
	if len(parts) > 1 {
		what = "singly the rate constants of "
	}
	rank := ""
	if res.jacRank < res.jacParams {
		rank = fmt.Sprintf(": some combination of them can change without changing the fitted curves (the Jacobian in ln k has rank %d for %d parameters, counting singular values below %.0e of the largest as zero)", res.jacRank, res.jacParams, nullTol)
	}
	w := fmt.Sprintf("the data do not determine %s%s%s: reported as not determined, with no standard error", what, strings.Join(parts, " and "), rank)
	if res.SumSteps != nil {
		var names []string
		for _, j := range res.SumSteps {
			names = append(names, fmt.Sprintf("k%d", j+1))
		}
		unit := p.rateUnit(res.SumSteps[0])
		w += fmt.Sprintf("; only their sum is: %s = %s ± %s", strings.Join(names, " + "), withUnit(fmt.Sprintf("%.4g", res.SumK), ""), withUnit(fmt.Sprintf("%.2g", res.SumKStdErr), unit))
	}
	res.Warnings = append(res.Warnings, w)
}

// InheritNotDetermined marks as not determined the free rate constants of
// res that other, a fit of the same scheme to more of the data (the data
// matrix, where res fitted resolved profiles), found not determined, and
// gives their sum with other's steps when other has one. Profiles carry
// their rotational ambiguity: for A -> B, B -> A with free spectra the data
// fix k1 + k2 alone (the columns span {1, e^{−(k1+k2)t}}, the reversible
// first-order solution; common practice), and a profile fit that splits
// the sum only reports how the resolution happened to rotate the profiles,
// with standard errors that know nothing of it. The sum's error is
// √(Σ_ab se_a se_b r_ab) from res's own errors and correlations, taken
// before they are cleared. It returns the steps newly marked (nil: none).
func (res *FitResult) InheritNotDetermined(other *FitResult) []int {
	if res == nil || other == nil || other.KNotDetermined == nil || len(other.KNotDetermined) != len(res.K) {
		return nil
	}
	var steps []int
	for j, nd := range other.KNotDetermined {
		if nd && (res.KNotDetermined == nil || !res.KNotDetermined[j]) {
			steps = append(steps, j)
		}
	}
	if len(steps) == 0 {
		return nil
	}
	if other.SumSteps != nil && res.SumSteps == nil {
		sum, v := 0.0, 0.0
		for _, a := range other.SumSteps {
			sum += res.K[a]
			for _, b := range other.SumSteps {
				r := 1.0
				if a != b && res.Corr != nil {
					r = res.Corr.At(a, b)
				}
				v += res.KStdErr[a] * res.KStdErr[b] * r
			}
		}
		res.SumSteps = append([]int(nil), other.SumSteps...)
		res.SumK, res.SumKStdErr = sum, math.Sqrt(math.Max(v, 0))
	}
	if res.KNotDetermined == nil {
		res.KNotDetermined = make([]bool, len(res.K))
	}
	for _, j := range steps {
		res.KNotDetermined[j], res.KStdErr[j] = true, 0
		if res.Corr == nil {
			continue
		}
		for l := range res.K {
			if l != j {
				res.Corr.Set(j, l, 0)
				res.Corr.Set(l, j, 0)
			}
		}
	}
	return steps
}
