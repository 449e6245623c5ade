package kinetics

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// firstOrderDecay is y = a·exp(−k t), the analytic solution of da/dt = −k a
// with a(0) = a. The residual's Jacobian column for k, a·t·exp(−k t), is
// exactly zero where a = 0, and only there.
func firstOrderDecay(t []float64, y []float64) (ResidualFunc, JacobianFunc) {
	f := func(x, r []float64) error {
		for i, ti := range t {
			r[i] = y[i] - x[0]*math.Exp(-x[1]*ti)
		}
		return nil
	}
	jac := func(x []float64, j *mat.Dense) error {
		for i, ti := range t {
			e := math.Exp(-x[1] * ti)
			j.Set(i, 0, -e)
			j.Set(i, 1, x[0]*ti*e)
		}
		return nil
	}
	return f, jac
}

// TestLMReleasesAParameterTheResidualComesToDependOn: from a start with the
// amplitude a = 0 the residual does not depend on k there (its column is
// exactly zero), so k is held; after the first step a ≠ 0 and it does. Held
// for good, k would stay at its start and the fit would end at the best
// amplitude for the wrong k. The data are the analytic solution with a = 2,
// k = 0.3 and no noise, so the least-squares solution is exactly that, with a
// zero residual (analytic solution).
func TestLMReleasesAParameterTheResidualComesToDependOn(t *testing.T) {
	const a, k = 2.0, 0.3
	times := []float64{0, 0.5, 1, 2, 3, 4, 6, 8, 10, 12}
	y := make([]float64, len(times))
	for i, ti := range times {
		y[i] = a * math.Exp(-k*ti)
	}
	f, jac := firstOrderDecay(times, y)
	for _, j := range []JacobianFunc{jac, nil} {
		res, err := LevenbergMarquardt(f, j, []float64{0, 1}, len(times), LMSettings{})
		if err != nil {
			t.Fatal(err)
		}
		if res.Held != nil {
			t.Errorf("analytic Jacobian %v: held %v at the end, want none (the residual depends on k once a ≠ 0)", j != nil, res.Held)
		}
		// The exact solution: a = 2, k = 0.3, zero residual (analytic solution).
		if math.Abs(res.X[0]-a) > 1e-8 || math.Abs(res.X[1]-k) > 1e-8 || res.SSR > 1e-16 {
			t.Errorf("analytic Jacobian %v: a = %.12g, k = %.12g, SSR %.3g (%s); want a = 2, k = 0.3 and 0 (analytic solution)", j != nil, res.X[0], res.X[1], res.SSR, res.Reason)
		}
		// Its column in the returned Jacobian is the model's, not zeros.
		if res.Jacobian.At(1, 1) == 0 {
			t.Errorf("analytic Jacobian %v: the column of k is zero at the solution", j != nil)
		}
	}
}

// TestLMKeepsHeldWhatItDidNotFit: stopped after one iteration from a = 0
// (and with tolerances loose enough to stop there), k has not moved from its
// start although its column is no longer zero at the returned point: it is
// still held, so the fit gives it no variance (the definition of a held
// parameter: LMResult.Held).
func TestLMKeepsHeldWhatItDidNotFit(t *testing.T) {
	times := []float64{0, 0.5, 1, 2, 3, 4, 6, 8, 10, 12}
	y := make([]float64, len(times))
	for i, ti := range times {
		y[i] = 2 * math.Exp(-0.3*ti)
	}
	f, jac := firstOrderDecay(times, y)
	unmoved := 0
	for _, set := range []LMSettings{{MaxIter: 1}, {FTol: 0.99}, {XTol: 0.9}} {
		res, err := LevenbergMarquardt(f, jac, []float64{0, 1}, len(times), set)
		if err != nil {
			t.Fatal(err)
		}
		if res.X[1] != 1 {
			continue // k was fitted: nothing to check here
		}
		unmoved++
		if len(res.Held) != 2 || !res.Held[1] {
			t.Errorf("%+v: k still at its start 1 (%s) but held %v, want k held", set, res.Reason, res.Held)
		}
	}
	if unmoved == 0 {
		t.Fatal("every stop moved k: the case of a parameter released but not fitted was not reached")
	}
}
