package pipeline

import (
	"testing"

	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// lessPolynomial is x with its least-squares part along the Legendre
// polynomials up to order taken out of each column (x itself for order < 0):
// with a baseline of that order fitted, a species' spectrum is known only up
// to such a polynomial (added to it and taken off the baseline, it fits the
// same), so spectra are compared on the rest.
func lessPolynomial(x *mat.Dense, axis []float64, order int) *mat.Dense {
	if order < 0 {
		return x
	}
	q := svd.PolyBasis(axis, order, nil)
	var qtx, out mat.Dense
	qtx.Mul(q.T(), x)
	out.Mul(q, &qtx)
	out.Sub(x, &out)
	return &out
}

// A blank taken at another source temperature (hydrationSynth, tilt) leaves
// every absorbance spectrum the same smooth background, −0.029 at 4000 cm⁻¹ to
// +0.025 at 1000 cm⁻¹, constant in time. A → B → C is closed (a + b + c = 1,
// Bateman 1910), so the background adds no factor: D = C Sᵀ + 1 bᵀ =
// C (S + 1 bᵀ)ᵀ, and the F-test on free factors found no baseline (offset
// p = 1, linear p = 0.66). Non-negative spectra cannot carry a background
// that dips below zero where the species do not absorb, so with --baseline
// auto the order must be raised on the constrained fits: the data are the
// species and detector noise once the background is modelled (the analytic
// truth), so the fit must come to the noise (residual within 10 % of it;
// expected √(χ²/ν) = 1 for a fit to the noise, common practice) and the
// spectra match the truth up to the polynomial the baseline leaves free
// (cosine ≥ 0.99; without the baseline the fit left 113 times the noise).
func TestHeldBaselineRaisedForTiltedBlank(t *testing.T) {
	s, _ := hydrationSynth(t, false, true)
	series, blank := s.write(t)
	r := runHydration(t, series, blank, nil)
	q, ok := residualToNoise(r)
	t.Logf("baseline %s, residual %.4g × the noise: %s", baselineName(r.BaselineOrder), q, r.BaselineReason)
	if r.BaselineOrder < 0 {
		t.Fatalf("no baseline chosen for a background every spectrum carries")
	}
	if !ok || q > 1.1 {
		t.Errorf("residual %.3g times the noise; want about 1 with the background modelled", q)
	}
	truth := lessPolynomial(s.spectra, s.axis, r.BaselineOrder)
	got := lessPolynomial(r.ALS.S, r.Axis, r.BaselineOrder)
	for j, c := range bestCosines(truth, got) {
		t.Logf("species %d: cosine %.5f", j+1, c)
		if c < 0.99 {
			t.Errorf("species %d: cosine %.5f to the truth (less the baseline's polynomial) < 0.99", j+1, c)
		}
	}
}

// A misfit that is no background is left to the warnings: the same series
// without the tilt resolved with one species too few (--components 2) stays
// far above the noise, but a baseline cannot take a species' bands, so it
// removes little of the misfit and none is fitted (the data have no
// background: the analytic truth).
func TestHeldBaselineNotRaisedForAMissingSpecies(t *testing.T) {
	s, _ := hydrationSynth(t, false, false)
	series, blank := s.write(t)
	r := runHydration(t, series, blank, func(st *Settings) { st.Components = "2" })
	q, _ := residualToNoise(r)
	if q < 2 {
		t.Fatalf("residual %.3g times the noise: the case must leave a misfit the raised order is tried on", q)
	}
	if r.BaselineOrder >= 0 {
		t.Errorf("baseline %s fitted to data without one (residual %.3g × the noise): %s", baselineName(r.BaselineOrder), q, r.BaselineReason)
	}
}
