package kinetics

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
)

// subsystemsData builds D = C Sᵀ (+ white noise of sd) for A -> B -> C;
// D -> E from the analytic first-order solutions (Bateman 1910; Atkins'
// Physical Chemistry, consecutive reactions, from memory), [A]0 = [D]0 =
// 1/2, with non-negative Gaussian spectra, one band of each species its own.
func subsystemsData(n, m int, k []float64, sd float64) (times []float64, d *mat.Dense) {
	times = make([]float64, n)
	c := mat.NewDense(n, 5, nil)
	for i := range times {
		t := 5000 * float64(i) / float64(n-1)
		times[i] = t
		a := 0.5 * math.Exp(-k[0]*t)
		b := 0.5 * k[0] / (k[1] - k[0]) * (math.Exp(-k[0]*t) - math.Exp(-k[1]*t))
		dd := 0.5 * math.Exp(-k[2]*t)
		c.SetRow(i, []float64{a, b, 0.5 - a - b, dd, 0.5 - dd})
	}
	s := mat.NewDense(m, 5, nil)
	for j := 0; j < m; j++ {
		x := float64(j) / float64(m-1)
		for sp := 0; sp < 5; sp++ {
			u := (x - 0.1 - 0.18*float64(sp)) / 0.02
			v := (x - 0.5 - 0.02*float64(sp%2)) / 0.05
			s.Set(j, sp, math.Exp(-0.5*u*u)+0.3*math.Exp(-0.5*v*v))
		}
	}
	d = mat.NewDense(n, m, nil)
	d.Mul(c, s.T())
	rng := rand.New(rand.NewPCG(5, 8))
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, d.At(i, j)+sd*rng.NormFloat64())
		}
	}
	return times, d
}

// NonNegativeCost against its definition: Σ_j min_{s ≥ 0} ‖C s − d_j‖² −
// min_S ‖C Sᵀ − D‖², the first term by Lawson–Hanson NNLS on the whole
// n-row C (mcr.NNLS) and the second by the SVD pseudo-inverse, to 1e-9
// relative. On data made exactly under the model with non-negative spectra
// the cost at the true rate constants is zero (to rounding); every other
// order of k1, k2, k3 fits the same with free spectra (the span {1,
// e^{−k1 t}, e^{−k2 t}, e^{−k3 t}} ignores the order) and must cost more.
func TestNonNegativeCost(t *testing.T) {
	k := []float64{3e-3, 8e-4, 1.5e-3}
	times, d := subsystemsData(60, 40, k, 0)
	s := mustParse(t, "A -> B -> C; D -> E")
	opt := FitOptions{C0: []float64{0.5, 0, 0, 0.5, 0}}
	scale := sumSquares(d)
	cost, err := NonNegativeCost(s, times, d, k, opt)
	if err != nil {
		t.Fatal(err)
	}
	if cost > 1e-20*scale {
		t.Errorf("cost at the true rate constants %.3g, want 0 (‖D‖² = %.3g)", cost, scale)
	}
	for _, alt := range [][]float64{{8e-4, 3e-3, 1.5e-3}, {1.5e-3, 8e-4, 3e-3}, {3e-3, 1.5e-3, 8e-4}} {
		got, err := NonNegativeCost(s, times, d, alt, opt)
		if err != nil {
			t.Fatal(err)
		}
		// The definition, column by column on the whole C.
		sim, err := s.Simulate(alt, opt.C0, times, 0)
		if err != nil {
			t.Fatal(err)
		}
		_, m := d.Dims()
		var nn float64
		for j := 0; j < m; j++ {
			col := mat.Col(nil, j, d)
			x, err := mcr.NNLS(sim.C, col)
			if err != nil {
				t.Fatal(err)
			}
			fit := mat.NewVecDense(len(col), nil)
			fit.MulVec(sim.C, mat.NewVecDense(len(x), x))
			for i, v := range col {
				e := fit.AtVec(i) - v
				nn += e * e
			}
		}
		sp, err := pseudoSolve(sim.C, d)
		if err != nil {
			t.Fatal(err)
		}
		var free mat.Dense
		free.Mul(sim.C, sp.T())
		free.Sub(d, &free)
		want := nn - sumSquares(&free)
		t.Logf("k = %v: non-negative cost %.6g (definition %.6g), free residual %.3g", alt, got, want, sumSquares(&free))
		if math.Abs(got-want) > 1e-9*math.Max(want, 1e-12*scale) {
			t.Errorf("k = %v: cost %.10g, definition %.10g", alt, got, want)
		}
		if !(got > 1e-6*scale) {
			t.Errorf("k = %v (another order): cost %.3g, want clearly above 0", alt, got)
		}
	}
}

// The reduced data fit (reduceData: leading singular vectors when
// min(n, m) is large) against the exact reduction on the same data: the
// rate constants agree within a tenth of a standard error, and the
// reported residual sum of squares is the whole data's, ‖D − C Sᵀ‖² with
// the returned spectra (computed directly here).
func TestFitDataReducedAgreesWithExact(t *testing.T) {
	k := []float64{3e-3, 8e-4, 1.5e-3}
	times, d := subsystemsData(300, 200, k, 2e-3)
	s := mustParse(t, "A -> B -> C; D -> E")
	opt := FitOptions{C0: []float64{0.5, 0, 0, 0.5, 0}, InitialK: []float64{2.5e-3, 1e-3, 1.2e-3}}
	red, err := reduceData(d, 5)
	if err != nil {
		t.Fatal(err)
	}
	if _, w := red.Dims(); w != 30 {
		t.Fatalf("reduction to %d columns, want 5 + %d", w, reduceExtra)
	}
	fit, spectra, err := FitData(s, times, d, opt)
	if err != nil {
		t.Fatal(err)
	}
	// Passing the reduction back (as refits of the same data do) gives
	// the same fit, bit for bit.
	again := opt
	again.Reduced = fit.Reduced
	refit, _, err := FitData(s, times, d, again)
	if err != nil {
		t.Fatal(err)
	}
	if refit.SSR != fit.SSR || refit.K[0] != fit.K[0] {
		t.Errorf("refit with the reduction passed back: SSR %v against %v, k1 %v against %v", refit.SSR, fit.SSR, refit.K[0], fit.K[0])
	}
	var res mat.Dense
	res.Mul(fit.Model, spectra.T())
	res.Sub(d, &res)
	if direct := sumSquares(&res); math.Abs(direct-fit.SSR) > 1e-9*direct {
		t.Errorf("reported SSR %.12g, direct ‖D − C Sᵀ‖² %.12g", fit.SSR, direct)
	}
	// The exact problem: D replaced by U Σ of its full thin SVD (no
	// truncation; n > m here, so D itself).
	p, err := newFitProblem(s, times, opt, 300)
	if err != nil {
		t.Fatal(err)
	}
	p.dred = d
	lm, err := p.solve(300 * 200)
	if err != nil {
		t.Fatal(err)
	}
	exact, _, _ := p.unpack(lm.X)
	for j := range k {
		t.Logf("k%d reduced %.8g, exact %.8g, se %.2g, truth %g", j+1, fit.K[j], exact[j], fit.KStdErr[j], k[j])
		if d := math.Abs(fit.K[j] - exact[j]); d > 0.1*fit.KStdErr[j] {
			t.Errorf("k%d: reduced fit %.8g differs from the exact %.8g by %.2g standard errors", j+1, fit.K[j], exact[j], d/fit.KStdErr[j])
		}
	}
}
