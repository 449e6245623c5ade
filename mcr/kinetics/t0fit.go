package kinetics

// The start time t0 as a fitted parameter (FitOptions.FitT0). In a spiked
// or mixed cell the start is known only to the mixing and dead time, and a
// t0 off by δ moves every concentration by about δ·dc/dt: for a fast step
// a bias in k no standard error shows. Fitted, t0 is held within a range
// that holds no spectrum's time inside it (T0Bracket), where the model is
// a smooth function of t0: c = c0 at the spectra before it, c(t − t0) at
// those after. It enters Levenberg–Marquardt as φ with
// t0 = lo + (hi − lo)(1 + sin φ)/2, the usual transformation of a bounded
// parameter into a free one (James & Roos, MINUIT, Comput. Phys. Commun.
// 1975; from memory). Its standard error is taken in t0 itself: the
// Jacobian's column for it is ∂r/∂t0, from ∂c/∂t0 = −dc/dt(t − t0) for
// t > t0 and 0 before (for first-order schemes dc/dt = K c exactly, else
// central differences), scaled by the time span so that the rank test of
// undetermined compares like with like.

import (
	"errors"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
)

// T0Bracket returns the range a fitted t0 is held within: from the last
// time at or before t0 (the last spectrum measured before any change) to
// the first time after that (the first that changed). A t0 before every
// time gives the first two times, so that the range stays within the
// times measured. It is an error when no time follows.
func T0Bracket(times []float64, t0 float64) (lo, hi float64, err error) {
	if math.IsNaN(t0) || math.IsInf(t0, 0) {
		return 0, 0, fmt.Errorf("t0 is %v", t0)
	}
	lo, hi = math.Inf(-1), math.Inf(1)
	first := math.Inf(1)
	for _, t := range times {
		if t <= t0 && t > lo {
			lo = t
		}
		first = math.Min(first, t)
	}
	if math.IsInf(lo, -1) {
		lo = first
	}
	for _, t := range times {
		if t > lo && t < hi {
			hi = t
		}
	}
	if math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		return 0, 0, fmt.Errorf("no time after t0 = %g to fit t0 against", t0)
	}
	return lo, hi, nil
}

// t0Inset is the share of the range a start on one of its ends is moved
// inside: at an end dt0/dφ = 0, the residual does not depend on φ there,
// and Levenberg–Marquardt would hold it at its start.
const t0Inset = 0.01

// setT0Range sets the fitted t0's range (FitOptions.T0Lo and T0Hi, or
// T0Bracket when both are zero) and its start, and checks that at least
// two times follow the range, so that every t0 in it leaves a rate to see.
func (p *fitProblem) setT0Range(times []float64) error {
	lo, hi := p.opt.T0Lo, p.opt.T0Hi
	if lo == 0 && hi == 0 {
		var err error
		if lo, hi, err = T0Bracket(times, p.opt.T0); err != nil {
			return err
		}
	}
	if !(lo < hi) || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		return fmt.Errorf("the range of t0, %g to %g, is empty", lo, hi)
	}
	if _, err := spanAfter(times, hi, p.opt.TimeUnit); err != nil {
		return fmt.Errorf("t0 fitted up to %g: %w", hi, err)
	}
	w := hi - lo
	p.t0Free, p.t0Lo, p.t0Hi = true, lo, hi
	p.t0Start = math.Min(math.Max(p.opt.T0, lo+t0Inset*w), hi-t0Inset*w)
	tmin, tmax := math.Inf(1), math.Inf(-1)
	for _, t := range times {
		tmin, tmax = math.Min(tmin, t), math.Max(tmax, t)
	}
	p.tScale = math.Max(tmax-tmin, w)
	return nil
}

// t0Index is the place of t0 among the fit's parameters: after the rate
// constants and the initial concentrations.
func (p *fitProblem) t0Index() int { return len(p.kFree) + len(p.c0Free) }

// t0At is the start time at the parameters theta: FitOptions.T0 unless it
// is fitted.
func (p *fitProblem) t0At(theta []float64) float64 {
	if !p.t0Free {
		return p.opt.T0
	}
	w := p.t0Hi - p.t0Lo
	t0 := p.t0Lo + w*(1+math.Sin(theta[p.t0Index()]))/2
	return math.Min(math.Max(t0, p.t0Lo), p.t0Hi)
}

// t0Phi is the φ of t0 (t0At's inverse).
func (p *fitProblem) t0Phi(t0 float64) float64 {
	x := 2*(t0-p.t0Lo)/(p.t0Hi-p.t0Lo) - 1
	return math.Asin(math.Min(math.Max(x, -1), 1))
}

// t0Slope is dt0/dφ at theta.
func (p *fitProblem) t0Slope(theta []float64) float64 {
	return (p.t0Hi - p.t0Lo) / 2 * math.Cos(theta[p.t0Index()])
}

// t0Sensitivity is ∂c/∂t0 times f: −f·K c(t) at the times after t0 (dc/dt
// of a first-order network, K its rate matrix at k), zero at those before,
// where c = c0 whatever t0 is. c holds the concentrations at the times.
func (p *fitProblem) t0Sensitivity(k []float64, c *mat.Dense, t0, f float64) *mat.Dense {
	ns := len(p.s.Species)
	kmat := newNetwork(p.s, k).linearMatrix().Slice(0, ns, 0, ns)
	out := mat.NewDense(len(p.times), ns, nil)
	dcdt := mat.NewVecDense(ns, nil)
	for i, t := range p.times {
		if t <= t0 {
			continue
		}
		dcdt.MulVec(kmat, c.RowView(i))
		for l := 0; l < ns; l++ {
			out.Set(i, l, -f*dcdt.AtVec(l))
		}
	}
	return out
}

// reportT0 replaces t0's column of the final Jacobian, ∂r/∂φ, by
// T·∂r/∂t0 (T the time span), the column the covariance, the rank test
// and the sandwich errors take: the same derivative without the factor
// dt0/dφ, which is zero at an end of the range. A column held at the start
// stays zero.
func (p *fitProblem) reportT0(lm *LMResult) error {
	if !p.t0Free || lm.Jacobian == nil {
		return nil
	}
	a := p.t0Index()
	if lm.Held != nil && lm.Held[a] {
		return nil
	}
	m, np := lm.Jacobian.Dims()
	if np <= a {
		return nil
	}
	col, err := p.t0Column(lm.X, m)
	if err != nil {
		return err
	}
	lm.Jacobian.SetCol(a, col)
	return nil
}

// t0Column is T·∂r/∂t0 at theta: from the analytic Jacobian when the model
// has one, else by central differences in t0 itself (one-sided at an end
// of the range, beyond which the model is not defined).
func (p *fitProblem) t0Column(theta []float64, m int) ([]float64, error) {
	if p.jacobianFunc(nil) != nil {
		jac := mat.NewDense(m, len(theta), nil)
		err := p.jacobianScaled(&fitScratch{}, theta, jac, p.tScale)
		if err == nil {
			return mat.Col(nil, p.t0Index(), jac), nil
		}
		if !errors.Is(err, ErrUseDifferences) {
			return nil, err
		}
	}
	t0 := p.t0At(theta)
	h := 1e-6 * p.tScale
	up, down := math.Min(t0+h, p.t0Hi), math.Max(t0-h, p.t0Lo)
	rUp, rDown := make([]float64, m), make([]float64, m)
	for _, x := range []struct {
		t0 float64
		r  []float64
	}{{up, rUp}, {down, rDown}} {
		th := append([]float64(nil), theta...)
		th[p.t0Index()] = p.t0Phi(x.t0)
		if err := p.residual(th, x.r); err != nil {
			return nil, err
		}
	}
	// The t0 each residual was evaluated at, after φ's round trip.
	thUp, thDown := append([]float64(nil), theta...), append([]float64(nil), theta...)
	thUp[p.t0Index()], thDown[p.t0Index()] = p.t0Phi(up), p.t0Phi(down)
	step := p.t0At(thUp) - p.t0At(thDown)
	if !(step > 0) {
		return nil, errors.New("t0's range is too narrow to difference")
	}
	col := make([]float64, m)
	for i := range col {
		col[i] = p.tScale * (rUp[i] - rDown[i]) / step
	}
	return col, nil
}

// t0AtEnd is how close (a share of the range) a fitted t0 must come to an
// end to count as run to it.
const t0AtEnd = 1e-6

// t0Result fills the fit's start time: the value used, and when fitted its
// range, its standard error from cov (the covariance in the parameters of
// the reported Jacobian, reportT0), and whether it ran to an end.
func (p *fitProblem) t0Result(lm *LMResult, res *FitResult, cov *mat.Dense) {
	res.T0 = p.t0At(lm.X)
	if !p.t0Free {
		return
	}
	res.T0Fitted, res.T0Lo, res.T0Hi = true, p.t0Lo, p.t0Hi
	w := p.t0Hi - p.t0Lo
	switch {
	case res.T0-p.t0Lo <= t0AtEnd*w:
		res.T0AtEnd = -1
	case p.t0Hi-res.T0 <= t0AtEnd*w:
		res.T0AtEnd = 1
	}
	a := p.t0Index()
	if cov != nil && !res.T0NotDetermined {
		res.T0StdErr = p.tScale * math.Sqrt(math.Max(cov.At(a, a), 0))
	}
	if p.t0Lo <= slices.Min(p.times) && (res.T0AtEnd < 0 || res.T0-p.t0Lo <= t0EarlySE*res.T0StdErr) {
		res.T0NotDetermined, res.t0Early, res.T0StdErr = true, true, 0
	}
}

// t0EarlySE: a t0 fitted within this many standard errors of the first
// spectrum, which starts its range, may as well lie before it, where
// nothing fixes it (t0Undetermined): it is reported as not determined.
const t0EarlySE = 2

// covariance is σ²(JᵀJ)⁻¹ from the final Jacobian (Covariance), with a
// fitted t0's figures set (t0Result). When the data do not determine t0,
// its column is set to zero and the covariance formed again: the rate
// constants' errors are then those of the fit with t0 held where it ended,
// which is what they are (any other t0 the data allow fits with the same
// constants), and not inflated by a direction the data do not see.
func (p *fitProblem) covariance(lm *LMResult, res *FitResult, sigma2 float64) (*mat.Dense, error) {
	cov, _, err := Covariance(lm.Jacobian, sigma2)
	if err != nil || !p.t0Free {
		return cov, err
	}
	p.t0Result(lm, res, cov)
	if !res.T0NotDetermined {
		p.t0Undetermined(lm, res, cov)
	}
	a := p.t0Index()
	if !res.T0NotDetermined || (lm.Held != nil && lm.Held[a]) {
		return cov, nil
	}
	m, _ := lm.Jacobian.Dims()
	lm.Jacobian.SetCol(a, make([]float64, m))
	res.t0Dropped = true
	cov, _, err = Covariance(lm.Jacobian, sigma2)
	return cov, err
}

// t0Undetermined marks t0 not determined when its unit vector has a share
// along the Jacobian's not-determined directions (tested as undetermined
// tests the rate constants, on the Jacobian and on its unit columns) or
// its variance in units of the time span is beyond wideVar: the profiles
// begin before the first spectrum, and moving t0 only rescales what the
// initial concentrations, the amplitudes or the free spectra rescale too.
func (p *fitProblem) t0Undetermined(lm *LMResult, res *FitResult, cov *mat.Dense) {
	share, _, ok := nullShareOf(lm.Jacobian)
	unitShare, _, unitOK := nullShareOf(unitColumns(lm.Jacobian))
	a := p.t0Index()
	e := make([]float64, p.nParams())
	e[a] = 1
	v := cov.At(a, a)
	if (ok && share(e) > nullShare) || (unitOK && unitShare(e) > nullShare) || (v > wideVar && !math.IsInf(v, 1)) {
		res.T0NotDetermined, res.T0StdErr = true, 0
	}
}

// t0Held marks t0 held by Levenberg–Marquardt at its start (the residual
// did not depend on it there) as not determined, and says so.
func (p *fitProblem) t0Held(res *FitResult, theta []float64) {
	res.T0NotDetermined = true
	t0 := withUnit(fmt.Sprintf("%.6g", p.t0At(theta)), p.opt.TimeUnit)
	res.Warnings = append(res.Warnings, fmt.Sprintf("the start time t0 is not determined by the data: the residual does not depend on it at %s, where this fit started, so it stayed there; it is reported as not determined, with no standard error", t0))
}

// t0Warning says when the fitted t0 is not determined, or ran to an end of
// its range.
func (p *fitProblem) t0Warning(lm *LMResult, res *FitResult) {
	if !res.T0Fitted || (lm.Held != nil && lm.Held[p.t0Index()]) {
		return
	}
	u := p.opt.TimeUnit
	lo, hi := withUnit(fmt.Sprintf("%.6g", res.T0Lo), u), withUnit(fmt.Sprintf("%.6g", res.T0Hi), u)
	t0 := withUnit(fmt.Sprintf("%.6g", res.T0), u)
	switch {
	case res.t0Early:
		res.Warnings = append(res.Warnings, fmt.Sprintf("the data do not determine the start time t0: the fit put it at %s, at the first spectrum fitted (%s) or within %d standard errors of it, so the profiles may as well begin before that spectrum, where t0 trades with the initial concentrations, the amplitudes or the spectra's scale and no spectrum fixes it; reported as not determined, with no standard error (a spectrum measured before the change, --pre, lets the fit place it)", t0, lo, t0EarlySE))
	case res.T0NotDetermined:
		res.Warnings = append(res.Warnings, fmt.Sprintf("the data do not determine the start time t0 (the fit ended at %s, within %s to %s): moving it changes the fitted curves no more than the initial concentrations, the amplitudes or the spectra's scale can undo, as when the profiles begin before the first spectrum fitted; reported as not determined, with no standard error", t0, lo, hi))
	case res.T0AtEnd < 0:
		res.Warnings = append(res.Warnings, fmt.Sprintf("the fitted start time t0 ran to the start of its range, %s (the last spectrum taken as measured before any change): the data would put it there or earlier, so the standard error is that of a start the range does not let move earlier; if that spectrum had changed already, give an earlier --t0", lo))
	case res.T0AtEnd > 0:
		res.Warnings = append(res.Warnings, fmt.Sprintf("the fitted start time t0 ran to the end of its range, %s (the first spectrum taken as changed): the data would put it there or later, so the standard error is that of a start the range does not let move later; if that spectrum had not changed yet, give a later --t0", hi))
	}
}
