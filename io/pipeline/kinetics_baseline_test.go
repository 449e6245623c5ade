package pipeline

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/bandsolve/bandsolve/mcr/kinetics"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// The data fit with a baseline takes the baseline's Legendre polynomials
// as free per spectrum (separable least squares, Golub & Pereyra 1973):
// on D = C(k) Sᵀ + B Pᵀ + E, whatever baseline resolve subtracted from
// r.D (here a wrong one, as a soft solution stuck in a local minimum
// gives), the fit recovers the rate constants of the analytic Bateman
// solution (Atkins, from memory) within 4 standard errors, where fitting
// r.D as it stands is far off. The spectra set aside as outliers (their
// rows replaced by a fit) are left out.
func TestKineticDataFitIgnoresTheSubtractedBaseline(t *testing.T) {
	const n, m = 120, 150
	k := []float64{4e-3, 1e-3}
	times := make([]float64, n)
	axis := make([]float64, m)
	for j := range axis {
		axis[j] = 1800 - 4*float64(j)
	}
	c := mat.NewDense(n, 3, nil)
	for i := range times {
		tm := 30 * float64(i)
		times[i] = tm
		a := math.Exp(-k[0] * tm)
		b := k[0] / (k[1] - k[0]) * (math.Exp(-k[0]*tm) - math.Exp(-k[1]*tm))
		c.SetRow(i, []float64{a, b, 1 - a - b})
	}
	s := mat.NewDense(m, 3, nil)
	for j, x := range axis {
		for sp := 0; sp < 3; sp++ {
			u := (x - 1750 + 150*float64(sp)) / 15
			s.Set(j, sp, math.Exp(-0.5*u*u))
		}
	}
	p := svd.Legendre(axis, 2)
	rng := rand.New(rand.NewPCG(4, 4))
	base := mat.NewDense(n, 3, nil)
	wrong := mat.NewDense(n, 3, nil)
	for i := 0; i < n; i++ {
		for l := 0; l < 3; l++ {
			base.Set(i, l, 0.05*rng.NormFloat64())
			// A wrong estimate that follows the reaction, as a mixed soft
			// solution leaves it.
			wrong.Set(i, l, 0.02*c.At(i, 1)*float64(l+1))
		}
	}
	var d, bp, wp mat.Dense
	d.Mul(c, s.T())
	bp.Mul(base, p.T())
	d.Add(&d, &bp)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, d.At(i, j)+1e-3*rng.NormFloat64())
		}
	}
	// What resolve leaves in r.D: the data less its (wrong) baseline.
	wp.Mul(wrong, p.T())
	var rd mat.Dense
	rd.Sub(&d, &wp)
	rd.Sub(&rd, &bp)
	sch, err := kinetics.ParseScheme("A -> B -> C")
	if err != nil {
		t.Fatal(err)
	}
	// Rows 3 and 4 set aside and replaced by nonsense.
	for j := 0; j < m; j++ {
		rd.Set(3, j, 0.5)
		rd.Set(4, j, -0.5)
	}
	r := &Result{Times: times, D: &rd, BaselineShapes: p, SetAside: []SetAside{{Row: 3}, {Row: 4}}}
	kn := &Kinetics{Scheme: sch, C0: []float64{1, 0, 0}, KFixed: make([]bool, 2)}
	opt := kinetics.FitOptions{InitialK: []float64{3e-3, 1.5e-3}, C0: kn.C0}
	fit, _, err := kn.fitData(r, opt)
	if err != nil {
		t.Fatal(err)
	}
	if rows, _ := fit.Model.Dims(); rows != n {
		t.Errorf("model has %d rows, want one per spectrum (%d)", rows, n)
	}
	plain, _, err := kinetics.FitData(sch, times, &rd, opt)
	if err != nil {
		t.Fatal(err)
	}
	for j := range k {
		t.Logf("k%d: baseline free %.6g ± %.2g, r.D as it stands %.6g, truth %g", j+1, fit.K[j], fit.KStdErr[j], plain.K[j], k[j])
		within(t, "data fit with the baseline free", fit.K[j], fit.KStdErr[j], k[j], 4)
	}
	worst := 0.0
	for j := range k {
		worst = math.Max(worst, math.Abs(plain.K[j]-k[j])/fit.KStdErr[j])
	}
	if worst < 10 {
		t.Errorf("fitting r.D as it stands is only %.1f standard errors off: the case does not show what the baseline does", worst)
	}
}

// With a baseline fitted (here asked: --baseline poly:3) the data fit of the kinetics
// fits C(k) Sᵀ + B Pᵀ, the Legendre coefficients B free per spectrum, by projecting
// the shapes P out of each spectrum (separable least squares, Golub & Pereyra 1973).
// The fit is weighted with the noise, so the projection must be too: each spectrum's
// polynomial fitted with the column weights. On A -> B -> C single beams (Bateman
// 1910) whose throughput falls to 2 % at the ends of the axis (absorbance noise 50×
// the middle's), white noise and noise smoothed over 2 points, the data fit's residual
// must sit at the noise (σ̂ within 0.9–1.1 of it: √(χ²/ν) of a correct model; Draper
// & Smith 1998) and its rate constants within 4 standard errors of the truth. The
// unweighted projection spread the edges' noise over the quiet middle: 1.12 and 1.54
// times the noise here (1.57 and 3.3 on a series of 1556 points whose light fails
// at one end, with a warning that the model does not describe the data).
func TestKineticDataFitWithBaselineFitsToTheNoise(t *testing.T) {
	k := []float64{6e-3, 2e-3}
	for _, kernel := range []float64{0, 2} {
		s := makeBateman(t, k[0], k[1], 0, 2, 3)
		smoothedCountsNoise(s, 20, kernel, 150, 4)
		series, blank := s.write(t)
		st := NewSettings()
		st.Data, st.Kind, st.Blanks, st.Pre = []string{series}, "single-beam", []string{blank}, 3
		st.Report, st.Checks, st.Bands = "off", "off", "off"
		st.Model, st.Baseline = "A -> B -> C", "poly:3"
		r, err := Run(st, nil)
		if err != nil {
			t.Fatal(err)
		}
		if r.Kinetics == nil || len(r.Kinetics.Fits) < 2 || r.Kinetics.Fits[len(r.Kinetics.Fits)-1].Method != "data" {
			t.Fatalf("kernel %g: no data fit (warnings %q)", kernel, r.Warnings)
		}
		fit := r.Kinetics.Fits[len(r.Kinetics.Fits)-1].Fit
		ratio := dataFitToNoise(r, fit)
		t.Logf("kernel %g: data fit residual %.4g × the noise, k = %.6g ± %.2g, %.6g ± %.2g", kernel, ratio, fit.K[0], fit.KStdErr[0], fit.K[1], fit.KStdErr[1])
		if ratio < 0.9 || ratio > 1.1 {
			t.Errorf("kernel %g: the data fit leaves %.3g times the noise, want 0.9–1.1", kernel, ratio)
		}
		for j := range k {
			within(t, "data fit with a cubic baseline", fit.K[j], fit.KStdErr[j], k[j], 4)
		}
	}
}

// projectOutShapesWeighted leaves each spectrum d (a row) its weighted
// least-squares residual e = d − (Pβ)ᵀ, β = argmin Σ_j b_j (d_j − (Pβ)_j)²,
// whose normal equations are Pᵀ B eᵀ = 0 (weighted least squares, common
// practice): e B P = 0, so the projection is D (I − BP(PᵀBP)⁻¹Pᵀ). The
// transposed form D (I − P(PᵀBP)⁻¹PᵀB), which docs/kinetics.md once gave,
// leaves e P = 0 instead and fails this check wherever b is not constant.
func TestProjectOutShapesWeightedSolvesTheWeightedNormalEquations(t *testing.T) {
	const n, m, c = 5, 40, 3
	rng := rand.New(rand.NewPCG(5, 9))
	d := mat.NewDense(n, m, nil)
	p := mat.NewDense(m, c, nil)
	b := make([]float64, m)
	for j := 0; j < m; j++ {
		x := 2*float64(j)/(m-1) - 1
		p.SetRow(j, []float64{1, x, (3*x*x - 1) / 2}) // Legendre P0..P2
		b[j] = 1
		if j < 8 {
			b[j] = 0.01 // a noisy detector edge
		}
		for i := 0; i < n; i++ {
			d.Set(i, j, rng.NormFloat64())
		}
	}
	e := projectOutShapesWeighted(d, p, b)
	for i := 0; i < n; i++ {
		for a := 0; a < c; a++ {
			var s, scale float64
			for j := 0; j < m; j++ {
				s += e.At(i, j) * b[j] * p.At(j, a)
				scale += math.Abs(d.At(i, j) * b[j] * p.At(j, a))
			}
			if math.Abs(s) > 1e-12*scale {
				t.Errorf("spectrum %d, shape %d: Σ_j e_j b_j P_ja = %.3g, want 0", i+1, a+1, s)
			}
		}
	}
}
