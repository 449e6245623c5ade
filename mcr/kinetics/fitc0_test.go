package kinetics

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestFitDataFitC0LeavesTheStart: with free spectra the columns of A -> B,
// c_A = c0 e^(−kt) and c_B = c0 (1 − e^(−kt)) (the analytic first-order
// solution), span {1, e^(−kt)} whatever c0 is, so ∂r/∂ln c0 is zero up to
// rounding while k is well determined. Fitting c0 as well must still move k
// from a poor start to the value the data were made with (within 3 standard
// errors), as the fit without c0 does: a parameter the data do not determine
// must not freeze the others (Moré 1978 scales the step by the column norms;
// a column of zeros is given scale 1).
func TestFitDataFitC0LeavesTheStart(t *testing.T) {
	s, times, d := firstOrderData(t)
	k := []float64{0.05}
	for _, fitC0 := range []bool{false, true} {
		opt := FitOptions{InitialK: []float64{0.08}, C0: []float64{1, 0}, FitC0: fitC0}
		r, _, err := FitData(s, times, d, opt)
		if err != nil {
			t.Fatalf("fit c0 %v: %v", fitC0, err)
		}
		if fitC0 {
			within3SE(t, "data fit with c0 fitted", r, k)
		} else {
			within3SE(t, "data fit", r, k)
		}
	}
}

// TestFitDataUndeterminedC0IsHeldAndSaid: in the same analytic A -> B with
// free spectra, c0 cannot be told from the data (the model columns span
// {1, e^(−kt)} whatever c0 is; the spectra absorb its scale), so a fit that
// is asked to fit it must neither move it nor give it a standard error that
// claims it was measured: it is held at its start, marked held and said in a
// warning, and k keeps its standard error (it is determined). Before, the
// rounding-level gradient along ln c0 walked it anywhere (c0 = 3.5e+259 ±
// 1.0e+241 on the urethane ATR series, catalyst 1.00, A -> B --fit-c0).
func TestFitDataUndeterminedC0IsHeldAndSaid(t *testing.T) {
	s, times, d := firstOrderData(t)
	for _, start := range [][]float64{{0.08}, {0.02}, {0.3}} {
		opt := FitOptions{InitialK: start, C0: []float64{0.7, 0}, FitC0: true}
		r, _, err := FitData(s, times, d, opt)
		if err != nil {
			t.Fatal(err)
		}
		within3SE(t, "data fit with c0 fitted", r, []float64{0.05})
		if r.C0[0] != 0.7 || r.C0StdErr[0] != 0 || len(r.C0Held) != 2 || !r.C0Held[0] {
			t.Errorf("start k %v: c0 of A = %v ± %v (held %v), want the start 0.7 held, no standard error", start, r.C0[0], r.C0StdErr[0], r.C0Held)
		}
		said := false
		for _, w := range r.Warnings {
			said = said || strings.Contains(w, "initial concentration of A is not determined")
		}
		if !said {
			t.Errorf("start k %v: no warning says c0 of A is not determined: %q", start, r.Warnings)
		}
	}
}

// firstOrderData is A -> B with k = 0.05 from c0 = (1, 0) at 40 times over
// 0–100, two Gaussian bands on 60 points (free spectra) and noise of 0.002:
// the analytic data of the c0 tests above.
func firstOrderData(t *testing.T) (*Scheme, []float64, *mat.Dense) {
	t.Helper()
	s := mustParse(t, "A -> B")
	times := linspace(0, 100, 40)
	sim, err := s.Simulate([]float64{0.05}, []float64{1, 0}, times, 0)
	if err != nil {
		t.Fatal(err)
	}
	const m = 60
	spec := mat.NewDense(m, 2, nil)
	for j := 0; j < m; j++ {
		spec.Set(j, 0, math.Exp(-0.5*math.Pow((float64(j)-20)/5, 2)))
		spec.Set(j, 1, math.Exp(-0.5*math.Pow((float64(j)-40)/5, 2)))
	}
	d := new(mat.Dense)
	d.Mul(sim.C, spec.T())
	rng := rand.New(rand.NewPCG(5, 9))
	n, _ := d.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, d.At(i, j)+0.002*rng.NormFloat64())
		}
	}
	return s, times, d
}
