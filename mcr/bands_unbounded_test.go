package mcr

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// twoReactions are two extents of reaction (non-negative, zero at the
// start) and two signed reaction spectra, as difference data resolve them.
func twoReactions() (*mat.Dense, *mat.Dense) {
	n, m := 41, 60
	c := mat.NewDense(n, 2, nil)
	for i := 0; i < n; i++ {
		t := float64(i) / float64(n-1)
		c.Set(i, 0, 1-math.Exp(-4*t))
		c.Set(i, 1, 1-math.Exp(-4*t)-4*t*math.Exp(-4*t))
	}
	s := mat.NewDense(m, 2, nil)
	for i := 0; i < m; i++ {
		x := float64(i) / float64(m-1)
		s.Set(i, 0, gauss(x, 0.6, 0.08)-gauss(x, 0.3, 0.08))
		s.Set(i, 1, gauss(x, 0.8, 0.08)-gauss(x, 0.6, 0.08))
	}
	return c, s
}

// With signed spectra and non-negative profiles only, T = [[1, λ], [0, 1]]
// keeps C T = [c₁, λc₁ + c₂] ≥ 0 for every λ ≥ 0, and S T⁻ᵀ = [s₁ − λs₂, s₂]
// is allowed whatever its sign: the feasible set is unbounded and the share
// f₁ = ‖c₁‖‖s₁ − λs₂‖/‖C Sᵀ‖ grows as λ (analytic; the rotational ambiguity
// of a bilinear model, Lawton & Sylvestre, Technometrics 1971). So does a
// nearly singular T with non-negative entries (C T ≥ 0, S T⁻ᵀ of size
// 1/det T), where the search stops. There the components are far larger
// than the data and cancel each other; the share reported must be the
// value, not rounding: the Gram-trace norm of the rotated pair, whose
// rounding grows as the square of the components' size, came out ≤ 0 there,
// the share as 0, and the demo's unbounded reaction range was reported as
// bounded at the solution's own share. T's condition number stays below the
// 10¹⁰ the search allows.
func TestUnboundedShareAtExtremeRotation(t *testing.T) {
	c, s := twoReactions()
	n, _ := c.Dims()
	m, _ := s.Dims()
	var cs mat.Dense
	cs.Mul(c, s.T())
	p := &bandProblem{c: c, s: s, n: n, m: m, k: 2, opt: BandOptions{Mode: Reactions, Tolerance: 1e-3, Alpha: 0.05}}
	if err := p.setup(); err != nil {
		t.Fatal(err)
	}
	p.newWork()
	p.allow = noiseAllowance(1e-6*float64(n*m), n, m, 2, 0.05) // noise σ = 10⁻³ per point
	for _, rot := range [][]float64{{1, 1, 0, 1}, {1, 1e4, 0, 1}, {1, 6e4, 0, 1}, {1, 1, 1 - 1e-9, 1}} {
		tr := mat.NewDense(2, 2, rot)
		got, amp := p.amplitude(tr, 0, 1)
		// The same share formed on the explicit n × m model C Sᵀ + ε a₁b₁ᵀ,
		// where nothing of the components' size cancels.
		a, b, _, ok := p.rotate(tr)
		if !ok {
			t.Fatalf("T = %v: singular", rot)
		}
		eps := amp - 1
		model := mat.DenseCopyOf(&cs)
		for i := 0; i < n; i++ {
			for l := 0; l < m; l++ {
				model.Set(i, l, model.At(i, l)+eps*a.At(i, 0)*b.At(l, 0))
			}
		}
		own := math.Sqrt(colNormSq(a, 0) * colNormSq(b, 0))
		want := amp * own / mat.Norm(model, 2)
		if !(math.Abs(got-want) <= 1e-6*want) || !(want > 1) { // T⁻¹ rounds to cond(T)·10⁻¹⁶ ≈ 4·10⁻⁷
			t.Errorf("T = %v: share %.9g, the explicit model gives %.9g", rot, got, want)
		}
	}
	// And the search itself: both shares unbounded (above 100 × the
	// signal, the run's threshold for saying so).
	b, err := FeasibleBands(c, s, BandOptions{Mode: Reactions, ResidualSS: 1e-6 * float64(n*m)})
	if err != nil {
		t.Fatal(err)
	}
	for j, band := range b.Bands {
		if !(band.Max > 100) {
			t.Errorf("reaction %d: largest share %.4g, but the analytic feasible set is unbounded", j+1, band.Max)
		}
	}
}
