package pipeline

import (
	"fmt"
	"io"
	"math"
	"strings"

	"github.com/bandsolve/bandsolve/internal/pvalue"
	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// The F-test of chooseBaseline fits free factors, and a background constant
// in time is invisible to free factors whenever the species' amounts sum to a
// constant (closure, or any closed reaction: C 1 = 1): D = C Sᵀ + 1 bᵀ =
// C (S + b 1ᵀ)ᵀ has the rank of the chemistry, its background carried by
// every species' spectrum (the constant profile lies in the span of the
// profiles: on the trial's series 8e-5 of it lies outside the leading three). On a blank taken at another source temperature the
// rank-3 fit of A → B → C left the same residual with a baseline as without
// (offset p = 1, linear p = 0.66). Only the constraints tell the two apart:
// non-negative spectra cannot carry a background that dips below zero where
// the species do not absorb, and the constrained fit then stays far above
// the noise (113 times it) while a linear baseline brings it to 0.97. So the
// order is tested again on the constrained fits themselves when the first
// one stays far above the noise.

// heldMisfit is how far above the noise's expectation (in χ²) the constrained
// fit must stay before the orders above the chosen one are tried on it: a
// residual twice the noise's, well beyond what a noise level known to a few
// per cent leaves.
const heldMisfit = 4

// heldShare is the share of the constrained fit's excess over the noise that
// the raised order must remove: a baseline that lowers a misfit from another
// cause (a missing species, a closure that does not hold) by a little is
// significant by F on thousands of points, but it is not the background the
// constraints could not hold.
const heldShare = 0.5

// heldFit is one constrained fit of the order test.
type heldFit struct {
	order int
	res   *mcr.Result
	p     float64 // F-test against the order below; 1 for the first
	ss    float64 // residual sum of squares over the measured points
}

// observedSS is res's residual sum of squares over the measured points,
// the ones heldNoiseSS counts. ALS fits the blind points' filled values as
// data, and this test runs before they are filled again from the resolved
// model (refineBlind): a value the factor analysis's low-rank model
// extrapolated (a channel measured in the 3 spectra before the reaction
// only, filled with −1.5 absorbance where its noise is 10⁻⁴) left the
// constrained fit 358 times the noise, and an offset that fitted it was
// taken for a background the species could not hold. The rows set aside
// hold the fit's own values (refillSetAside), which add nothing here.
func observedSS(r *Result, res *mcr.Result, shapes *mat.Dense) float64 {
	if r.Blind == nil || r.Blind.Count == 0 || r.Compressed {
		return res.ResidualSS
	}
	var row, col []float64
	if weighted(r) {
		row, col = r.Weights.Row, r.Weights.Col
	}
	k := res.C.RawMatrix().Cols
	blind := 0.0
	for i, cols := range r.Blind.Rows {
		for _, j := range cols {
			v := 0.0
			for a := 0; a < k; a++ {
				v += res.C.At(i, a) * res.S.At(j, a)
			}
			if res.Baseline != nil && shapes != nil {
				_, b := shapes.Dims()
				for q := 0; q < b; q++ {
					v += res.Baseline.At(i, q) * shapes.At(j, q)
				}
			}
			e, w := r.D.At(i, j)-v, 1.0
			if row != nil {
				w = row[i] * col[j]
			}
			blind += w * e * e
		}
	}
	return math.Max(res.ResidualSS-blind, 0)
}

// raiseBaselineHeld tries, with --baseline auto, the orders above the one
// chosen on free factors, each by a resolution under the same constraints
// (warm from res), when res stays far above the noise. Orders are added
// forward while the extra-sum-of-squares F-test of the constrained fits is
// significant at the level chooseBaseline used, up to the first that is
// not, as there; the residuals are those of the measured points
// (observedSS), as heldNoiseSS counts them. The order found is kept only
// if its fit removes at least heldShare of the excess over the noise. It returns the fit, the
// data and the baseline shapes to go on with (those given when nothing
// changes).
func raiseBaselineHeld(r *Result, data mcr.Data, res *mcr.Result, shapes *mat.Dense, opt mcr.Options, log io.Writer) (*mcr.Result, mcr.Data, *mat.Dense, error) {
	maxOrder, auto, err := parseBaseline(r.Settings.Baseline)
	q0 := r.BaselineOrder
	if err != nil || !auto || q0 >= maxOrder || r.Mode != mcr.Species || r.Components < 1 {
		return res, data, shapes, nil
	}
	noise := heldNoiseSS(r, q0)
	if !(noise > 0) || !(observedSS(r, res, shapes) > heldMisfit*noise) {
		return res, data, shapes, nil
	}
	level := r.Settings.Alpha / float64(maxOrder+1)
	fits := []heldFit{{order: q0, res: res, p: 1, ss: observedSS(r, res, shapes)}}
	chosen := 0
	for q := q0 + 1; q <= maxOrder; q++ {
		o := opt
		// A background the species could not hold is there from the first
		// spectrum on (a blank's mismatch), not a drift since it: the
		// baseline is free in every spectrum (no anchors).
		o.Baseline, o.BaselineAnchors = svd.Legendre(r.Axis, q), nil
		o.Observe = nil
		fit, err := mcr.Resolve(data, res.C, o)
		if err != nil {
			break // the orders below stand
		}
		fits = append(fits, heldFit{order: q, res: fit, ss: observedSS(r, fit, o.Baseline)})
		cur := &fits[len(fits)-1]
		if cur.p = heldFTest(r, q, fits[len(fits)-2].ss, cur.ss); cur.p >= level {
			break // the first order that adds nothing ends the search (chooseBaseline)
		}
		chosen = len(fits) - 1
	}
	best := fits[chosen]
	excess := fits[0].ss - noise
	if chosen == 0 || best.ss-heldNoiseSS(r, best.order) > (1-heldShare)*excess {
		return res, data, shapes, nil
	}
	fmt.Fprintf(log, "baseline raised to %s: the constrained species could not hold the background (was %s)\n", baselineName(best.order), baselineName(q0))
	r.BaselineReason += heldReason(r, fits, q0, best, level, noise)
	r.BaselineOrder, r.BaselineHeld = best.order, true
	shapes = svd.Legendre(r.Axis, best.order)
	res = best.res
	if len(r.SetAside) > 0 {
		// The rows set aside hold the fit of the order below: filled
		// again from this one until they settle.
		opt.Baseline, opt.BaselineAnchors = shapes, nil
		res, data, err = refillSetAside(r, data, res, shapes, opt, log)
		if err != nil {
			return nil, nil, nil, err
		}
	}
	return res, data, shapes, nil
}

// heldNoiseSS is the χ² noise alone leaves a fit of r.Components species and
// a baseline of the order (−1: none) to the spectra kept: σ² per degree of
// freedom, σ = 1 with noise weights; 0 when unknown.
func heldNoiseSS(r *Result, order int) float64 {
	n, m := r.D.Dims()
	n -= len(r.SetAside)
	k := r.Components
	obs := n * m
	if r.Blind != nil {
		obs -= r.Blind.Count
	}
	dof := float64(obs - k*(n+m-k) - n*(order+1))
	if dof <= 0 || r.Rank == nil {
		return 0
	}
	if weighted(r) {
		return dof
	}
	return r.Rank.Sigma * r.Rank.Sigma * dof
}

// heldFTest is the upper-tail probability of the extra-sum-of-squares F of
// order q against q − 1 on the constrained fits' residuals (Draper & Smith
// 1998, §6, as svd.ChooseBaselineOrder counts it: n coefficients more, the
// axis's points counted as the independent ones of the first choice's
// residual), less the blind points. With the constraints active the
// statistic is not exactly F distributed; the drops it is asked about are
// hundreds of times the noise.
func heldFTest(r *Result, q int, prev, cur float64) float64 {
	n, m := r.D.Dims()
	n -= len(r.SetAside)
	k := float64(r.Components)
	me := float64(m)
	if r.orderNoise.Inflation > 1 {
		me = r.orderNoise.Effective
	}
	nf := float64(n)
	dof := nf*(me-float64(q+1)) - k*(nf+me-float64(q+1)-k)
	if r.Blind != nil && r.Blind.Count > 0 {
		// The residuals are the measured points' (observedSS).
		dof -= float64(r.Blind.Count) * me / float64(m)
	}
	switch {
	case dof < 1:
		return 1
	case cur <= 0:
		if prev > 0 {
			return 0
		}
		return 1
	}
	f := (math.Max(prev-cur, 0) / nf) / (cur / dof)
	p := pvalue.FUpper(f, nf, dof)
	if math.IsNaN(p) {
		return 1
	}
	return math.Min(math.Max(p, 0), 1)
}

// heldReason says why the order was raised, with each constrained fit's
// residual in units of the noise and its F-test.
func heldReason(r *Result, fits []heldFit, q0 int, best heldFit, level, noise float64) string {
	var steps []string
	for _, f := range fits[1:] {
		steps = append(steps, fmt.Sprintf("%s %s (residual %.3g × the noise)", baselineName(f.order), pvalue.Text(f.p), math.Sqrt(f.ss/heldNoiseSS(r, f.order))))
	}
	return fmt.Sprintf("; raised to %s after the resolution: where the species' amounts sum to a constant (closure, a closed reaction) a background constant in time adds no factor, so the test on free factors cannot see it, but the species under their constraints could not hold it (residual %.3g × the noise with %s); the same F-test on the constrained fits at level %.3g: %s (the rank was counted with %s)",
		baselineName(best.order), math.Sqrt(fits[0].ss/noise), baselineName(q0), level, strings.Join(steps, ", "), baselineName(q0))
}
