package pipeline

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/mcr/kinetics"
	"gonum.org/v1/gonum/mat"
)

// batemanSeries is A -> B -> C (k1 = 2.5e-3, k2 = 8e-4 s⁻¹) from [A]0 = 1
// starting at t0 = 105 s, 60 spectra every 30 s, by the analytic Bateman
// solution (Bateman 1910; Atkins, from memory): [A] = e^{−k1 τ},
// [B] = k1/(k2 − k1)(e^{−k1 τ} − e^{−k2 τ}), [C] = 1 − [A] − [B], τ =
// max(t − t0, 0), on three Gaussian bands with white noise of 1e-3.
// drift adds drift·sin(2π t/600 s) to every channel (a wander, as of the
// cell's temperature, spread over the run).
func batemanSeries(drift float64) ([]float64, *mat.Dense) {
	const n, m, k1, k2, t0, sd = 60, 90, 2.5e-3, 8e-4, 105.0, 1e-3
	rng := rand.New(rand.NewPCG(105, 30))
	times := make([]float64, n)
	d := mat.NewDense(n, m, nil)
	for i := range times {
		t := 30 * float64(i)
		times[i] = t
		tau := math.Max(t-t0, 0)
		a := math.Exp(-k1 * tau)
		b := k1 / (k2 - k1) * (math.Exp(-k1*tau) - math.Exp(-k2*tau))
		c := []float64{a, b, 1 - a - b}
		for j := 0; j < m; j++ {
			u := float64(j) / (m - 1)
			v := drift * math.Sin(2*math.Pi*t/600)
			for sp, mu := range []float64{0.25, 0.5, 0.75} {
				v += c[sp] * math.Exp(-0.5*sq((u-mu)/0.08))
			}
			d.Set(i, j, v+sd*rng.NormFloat64())
		}
	}
	return times, d
}

// A start time given 15 s early (t0 = 90 s, the last spectrum before the
// reaction, where it began at 105 s) leaves a misfit in the spectra up to
// t0 and just after it: for a first-order scheme with free spectra the
// columns after t0 span {1, e^{−k1 t}, e^{−k2 t}} whatever t0 is, and only
// the spectra tied to c0 see the shift. The misfit warning must then name
// t0 among its causes. With the true t0 the fit is at the noise (no
// warning); with the right t0 but a drift over the whole run the warning
// fires without naming t0 (its misfit is spread).
func TestMisfitWarningNamesT0WhenTheMisfitIsAtTheStart(t *testing.T) {
	s, err := kinetics.ParseScheme("A -> B -> C")
	if err != nil {
		t.Fatal(err)
	}
	fit := func(drift, t0 float64) (float64, string, *kinetics.FitResult) {
		times, d := batemanSeries(drift)
		f, _, err := kinetics.FitData(s, times, d, kinetics.FitOptions{T0: t0, C0: []float64{1, 0, 0}, InitialK: []float64{2.5e-3, 8e-4}})
		if err != nil {
			t.Fatal(err)
		}
		ratio := f.Sigma / 1e-3
		return ratio, dataMisfitWarning(ratio, output.FitVerdict(ratio, 0), times, f.RowSSR, t0, shownTime{"s", 1}), f
	}
	ratio, w, f := fit(0, 90)
	t.Logf("t0 90 s: k %.4g, residual %.3g × noise: %s", f.K, ratio, w)
	if !(ratio > 2) || !strings.Contains(w, "a start time t0 = 90 s") {
		t.Errorf("t0 given 15 s early: residual %.3g × noise, warning %q does not name t0", ratio, w)
	}
	ratio, _, f = fit(0, 105)
	t.Logf("t0 105 s: k %.4g, residual %.3g × noise", f.K, ratio)
	if ratio > 1.1 {
		t.Errorf("the true t0 leaves %.3g × the noise", ratio)
	}
	ratio, w, _ = fit(0.01, 105)
	t.Logf("drift: residual %.3g × noise: %s", ratio, w)
	if !(ratio > 2) || strings.Contains(w, "t0") {
		t.Errorf("a drift over the run: residual %.3g × noise, warning %q", ratio, w)
	}
}
