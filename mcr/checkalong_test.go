package mcr

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// shiftedSolvent is A → B (c_A = e^{−3u}, closure c_A + c_B = 1) over n
// spectra of m points with noise sd sigma. A solvent band at point 100
// (Gaussian, sd 3 points, height 0.5) is cancelled by the blank but moves
// in the samples by δ(u) = shift·(c_B(u) + 0.3 u) points (the cell warming
// with the conversion and drifting): the data carry solv(x − δ) − solv(x),
// about −δ·solv′(x) (Taylor), a derivative-shaped band with a negative
// lobe where no species absorbs. negative puts a true negative band of that
// depth into B's spectrum at the same place instead. dirs is solv′, the
// directions a named band shift of the solvent band offers.
func shiftedSolvent(shift, negative, sigma float64) (d, c0, dirs *mat.Dense) {
	n, m := 40, 120
	solv := func(x, at float64) float64 { return 0.5 * gauss(x, at, 3) }
	c0 = mat.NewDense(n, 2, nil)
	d = mat.NewDense(n, m, nil)
	rng := rand.New(rand.NewPCG(3, 11))
	for i := 0; i < n; i++ {
		u := float64(i) / float64(n-1)
		a := math.Exp(-3 * u)
		c0.SetRow(i, []float64{a, 1 - a})
		delta := shift * ((1 - a) + 0.3*u)
		for j := 0; j < m; j++ {
			x := float64(j)
			sa, sb := gauss(x, 30, 6), gauss(x, 70, 6)-negative*gauss(x, 100, 3)
			d.Set(i, j, a*sa+(1-a)*sb+solv(x, 100+delta)-solv(x, 100)+sigma*rng.NormFloat64())
		}
	}
	// The first and second derivatives of solv (up to sign and scale;
	// Taylor to second order, as the rank step's span of a shift or
	// broadening).
	dirs = mat.NewDense(m, 2, nil)
	for j := 0; j < m; j++ {
		x := float64(j)
		dirs.Set(j, 0, solv(x, 100)*(x-100)/9)
		dirs.Set(j, 1, solv(x, 100)*((x-100)*(x-100)/9-1)/9)
	}
	return d, c0, dirs
}

// The named-factor test of a constraint check (NamedRise). Truth known in
// both cases: the species' spectra are non-negative and only the solvent
// band shifts, so non-negativity of spectra holds for the chemistry and
// its whole cost is the shift's, which the refit without it takes up as a
// negative lobe (the shift follows the conversion, so its time course is
// largely in the profiles' span); with a truly negative band in B and no
// shift the constraint is really violated and a Gaussian band is
// orthogonal to the derivative direction (an odd function about the same
// centre), so its cost stays. Allowance: 4 noise variances per value the
// constraint pins, k·m for non-negative spectra (the χ² test of the
// pipeline's judgeChecks; χ²_p's 95 % point is below 4p for p ≥ 1,
// standard tables).
func TestNamedRiseSeparatesBandShiftFromConstraint(t *testing.T) {
	const sigma = 1e-4
	allow := 4 * sigma * sigma * 2 * 120
	for _, tc := range []struct {
		name            string
		shift, negative float64
		wantNamed       bool
	}{
		{"solvent band shift, chemistry non-negative", 0.3, 0, true},
		{"true negative band, no shift", 0, 0.05, false},
	} {
		d, c0, dirs := shiftedSolvent(tc.shift, tc.negative, sigma)
		opt := Options{Mode: Species, Closure: true, Total: []float64{1}}
		fit, err := Resolve(Dense{d}, c0, opt)
		if err != nil {
			t.Fatal(err)
		}
		checks, err := CheckConstraints(Dense{d}, fit, opt, 500)
		if err != nil {
			t.Fatal(err)
		}
		var cc ConstraintCheck
		for _, c := range checks {
			if c.Name == "non-negative spectra" {
				cc = c
			}
		}
		rise := cc.ResidualSSWith - cc.ResidualSSWithout
		// Both cases must reach the disagreement warning's conditions
		// first (judgeChecks): the rise beyond the allowance and the lack
		// of fit 5 % higher with the constraint.
		if rise <= allow || cc.With <= 1.05*cc.Without {
			t.Fatalf("%s: rise %.3g (allowance %.3g), lack of fit %.4g %% with, %.4g %% without: the check does not fire", tc.name, rise, allow, cc.With, cc.Without)
		}
		rest, err := NamedRise(Dense{d}, fit, opt, cc, dirs, 500)
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("%s: lack of fit %.4g %% with, %.4g %% without; rise %.3g σ², %.3g σ² of it remains with the shift's direction allowed (allowance %.3g σ²)",
			tc.name, cc.With, cc.Without, rise/(sigma*sigma), rest/(sigma*sigma), allow/(sigma*sigma))
		if got := rest <= allow; got != tc.wantNamed {
			t.Errorf("%s: remaining rise %.3g σ² against the allowance %.3g σ²: within = %v, want %v", tc.name, rest/(sigma*sigma), allow/(sigma*sigma), got, tc.wantNamed)
		}
	}
}
