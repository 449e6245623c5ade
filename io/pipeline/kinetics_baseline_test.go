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
