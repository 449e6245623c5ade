package kinetics

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// NIST StRD nonlinear regression dataset Misra1a (lower difficulty):
// y = b1 (1 − exp(−b2 x)), 14 observations, data and certified values as published by NIST
// (https://www.itl.nist.gov/div898/strd/nls/data/misra1a.shtml).
var (
	misra1aX = []float64{77.6, 114.9, 141.1, 190.8, 239.9, 289.0, 332.8, 378.4, 434.8, 477.3, 536.8, 593.1, 689.1, 760.0}
	misra1aY = []float64{10.07, 14.73, 17.94, 23.93, 29.61, 35.18, 40.02, 44.82, 50.76, 55.05, 61.01, 66.40, 75.47, 81.78}
)

const (
	misra1aB1, misra1aB2     = 2.3894212918e+02, 5.5015643181e-04 // NIST certified estimates
	misra1aSE1, misra1aSE2   = 2.7070075241e+00, 7.2668688436e-06 // NIST certified standard deviations
	misra1aSSR, misra1aResSD = 1.2455138894e-01, 1.0187876330e-01 // NIST certified residual SS and SD
)

func misra1aResidual(b, r []float64) error {
	for i, x := range misra1aX {
		r[i] = misra1aY[i] - b[0]*(1-math.Exp(-b[1]*x))
	}
	return nil
}

func misra1aJac(b []float64, j *mat.Dense) error {
	for i, x := range misra1aX {
		e := math.Exp(-b[1] * x)
		j.Set(i, 0, -(1 - e))
		j.Set(i, 1, -b[0]*x*e)
	}
	return nil
}

func relErr(got, want float64) float64 { return math.Abs(got-want) / math.Abs(want) }

func TestLMMisra1a(t *testing.T) {
	// NIST start 1 (500, 1e-4) and start 2 (250, 5e-4), analytic and finite-difference Jacobians.
	for _, start := range [][]float64{{500, 1e-4}, {250, 5e-4}} {
		for _, jac := range []JacobianFunc{misra1aJac, nil} {
			res, err := LevenbergMarquardt(misra1aResidual, jac, start, len(misra1aX), LMSettings{})
			if err != nil {
				t.Fatal(err)
			}
			if !res.Converged {
				t.Errorf("start %v: not converged: %s", start, res.Reason)
			}
			// NIST certified values to 1e-6 relative (NIST asks for agreement in ≥ 4–6 digits).
			if relErr(res.X[0], misra1aB1) > 1e-6 || relErr(res.X[1], misra1aB2) > 1e-6 {
				t.Errorf("start %v jac %v: b = %v, NIST certified (%v, %v)", start, jac != nil, res.X, misra1aB1, misra1aB2)
			}
			if relErr(res.SSR, misra1aSSR) > 1e-6 {
				t.Errorf("SSR = %v, NIST certified %v", res.SSR, misra1aSSR)
			}
			dof := float64(len(misra1aX) - 2)
			cov, rank, err := Covariance(res.Jacobian, res.SSR/dof)
			if err != nil || rank != 2 {
				t.Fatal(err, rank)
			}
			// NIST certified standard deviations of the estimates, from σ²(JᵀJ)⁻¹.
			if relErr(math.Sqrt(cov.At(0, 0)), misra1aSE1) > 1e-4 || relErr(math.Sqrt(cov.At(1, 1)), misra1aSE2) > 1e-4 {
				t.Errorf("se = %v %v, NIST certified %v %v", math.Sqrt(cov.At(0, 0)), math.Sqrt(cov.At(1, 1)), misra1aSE1, misra1aSE2)
			}
			if relErr(math.Sqrt(res.SSR/dof), misra1aResSD) > 1e-6 {
				t.Errorf("residual SD = %v, NIST certified %v", math.Sqrt(res.SSR/dof), misra1aResSD)
			}
		}
	}
}

func TestLMMisra1aAgainstSciPy(t *testing.T) {
	// Reference: scipy.optimize.least_squares(method="lm") (MINPACK) from NIST start 1,
	// testdata/kinetics/make_reference.py.
	ref := loadReference(t)
	res, err := LevenbergMarquardt(misra1aResidual, nil, []float64{500, 1e-4}, len(misra1aX), LMSettings{})
	if err != nil {
		t.Fatal(err)
	}
	cov, _, err := Covariance(res.Jacobian, res.SSR/12)
	if err != nil {
		t.Fatal(err)
	}
	for i := range res.X {
		if relErr(res.X[i], ref.Misra1a.B[i]) > 1e-7 {
			t.Errorf("b%d = %.12g, SciPy %.12g", i+1, res.X[i], ref.Misra1a.B[i])
		}
		if se := math.Sqrt(cov.At(i, i)); relErr(se, ref.Misra1a.Stderr[i]) > 1e-5 {
			t.Errorf("se b%d = %.10g, SciPy %.10g", i+1, se, ref.Misra1a.Stderr[i])
		}
	}
	if relErr(res.SSR, ref.Misra1a.SSR) > 1e-9 {
		t.Errorf("SSR = %.12g, SciPy %.12g", res.SSR, ref.Misra1a.SSR)
	}
}

func TestLMErrors(t *testing.T) {
	// Fewer residuals than parameters, non-finite start, failing residual at the start.
	ok := func(x, r []float64) error { r[0] = x[0]; return nil }
	if _, err := LevenbergMarquardt(ok, nil, []float64{1, 2}, 1, LMSettings{}); err == nil {
		t.Error("m < n: no error")
	}
	if _, err := LevenbergMarquardt(ok, nil, []float64{math.NaN()}, 1, LMSettings{}); err == nil {
		t.Error("NaN start: no error")
	}
	bad := func(x, r []float64) error { r[0] = math.Inf(1); return nil }
	if _, err := LevenbergMarquardt(bad, nil, []float64{1}, 1, LMSettings{}); err == nil {
		t.Error("infinite residual: no error")
	}
}

func TestLMRosenbrock(t *testing.T) {
	// Moré, Garbow & Hillstrom (1981) test problem 1: r = (10(x2 − x1²), 1 − x1), start (−1.2, 1),
	// minimum 0 at (1, 1) by definition.
	f := func(x, r []float64) error {
		r[0] = 10 * (x[1] - x[0]*x[0])
		r[1] = 1 - x[0]
		return nil
	}
	res, err := LevenbergMarquardt(f, nil, []float64{-1.2, 1}, 2, LMSettings{})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(res.X[0]-1) > 1e-8 || math.Abs(res.X[1]-1) > 1e-8 || res.SSR > 1e-16 {
		t.Errorf("x = %v SSR = %v, want (1, 1) and 0 (Moré, Garbow & Hillstrom 1981)", res.X, res.SSR)
	}
}
