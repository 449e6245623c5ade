package pipeline

import (
	"math"
	"testing"

	"github.com/bandsolve/bandsolve/io/demo"
	"gonum.org/v1/gonum/mat"
)

// bateman3SSR is the unweighted residual sum of squares of D against
// A -> B -> C at k1, k2 with free spectra, ‖(I − C C⁺) D‖², C the Bateman
// (1910) closed form from t0: the definition of the unweighted
// least-squares fit with the spectra solved linearly (Golub & Pereyra
// 1973). QR of the tall C, not its Gram matrix, keeps the projection exact.
func bateman3SSR(t *testing.T, d *mat.Dense, times []float64, t0, k1, k2 float64) float64 {
	t.Helper()
	n, m := d.Dims()
	c := mat.NewDense(n, 3, nil)
	for i, tm := range times {
		a, b, cc := demo.Bateman(k1, k2, math.Max(0, tm-t0))
		c.SetRow(i, []float64{a, b, cc})
	}
	var qr mat.QR
	qr.Factorize(c)
	var q mat.Dense
	qr.QTo(&q)
	q1 := q.Slice(0, n, 0, 3)
	var proj, fit mat.Dense
	proj.Mul(q1.T(), d)
	fit.Mul(q1, &proj)
	ssr := 0.0
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			e := d.At(i, j) - fit.At(i, j)
			ssr += e * e
		}
	}
	return ssr
}

// TestWeightsOffFitsTheDataUnweighted: with --weights off the kinetic fit
// of the data minimises the plain sum of squares, so its rate constants
// are a stationary point of ‖(I − C C⁺) D‖² (bateman3SSR), recomputed
// here: a central difference of it in each ln k at a relative step of
// 1e-5 is small beside the curvature there (a quadratic's minimum lies
// within step × slope/(2 × curvature) of the centre). Data: single beams
// with detector noise constant in counts and a solvent band passing 1 %
// of the light (TestWeightedRankSeesThroughSolventBand's), whose points
// carry 100 times the absorbance noise: the weighted fit, whose constants
// the option once left in place, is not stationary there, which shows the
// check can fail.
func TestWeightsOffFitsTheDataUnweighted(t *testing.T) {
	s := makeBateman(t, 3e-3, 1e-3, 0, 3, 3)
	solventBeams(s, 4, 2, 3)
	series, blank := s.write(t)
	run := func(weights string) (*Result, []float64) {
		st := NewSettings()
		st.Data, st.Blanks, st.Kind = []string{series}, []string{blank}, "single-beam"
		st.Weights, st.Bands, st.Checks, st.KeepOutliers = weights, "off", "off", true
		st.Baseline, st.Model, st.T0, st.Map = "off", "A -> B -> C", "60", "A=1,B=2,C=3"
		r, err := Run(st, nil)
		if err != nil {
			t.Fatal(err)
		}
		for _, f := range r.Kinetics.Fits {
			if f.Method == "data" {
				return r, f.Fit.K
			}
		}
		t.Fatalf("weights %s: no data fit", weights)
		return nil, nil
	}
	offset := func(r *Result, k []float64) []float64 {
		var out []float64
		for j := range k {
			up, down := append([]float64(nil), k...), append([]float64(nil), k...)
			up[j] *= 1 + 1e-5
			down[j] /= 1 + 1e-5
			f0 := bateman3SSR(t, r.D, r.Times, r.Kinetics.T0, k[0], k[1])
			fu := bateman3SSR(t, r.D, r.Times, r.Kinetics.T0, up[0], up[1])
			fd := bateman3SSR(t, r.D, r.Times, r.Kinetics.T0, down[0], down[1])
			// the minimum's offset from k in units of the step
			out = append(out, (fu-fd)/(2*(fu+fd-2*f0)))
		}
		return out
	}
	r, k := run("off")
	if r.BaselineOrder != -1 || len(r.SetAside) != 0 {
		t.Fatalf("baseline %d, %d set aside: the check assumes every spectrum as read", r.BaselineOrder, len(r.SetAside))
	}
	for j, o := range offset(r, k) {
		t.Logf("--weights off: k%d = %.6g, %.3g steps from the unweighted minimum", j+1, k[j], o)
		if math.Abs(o) > 0.05 {
			t.Errorf("--weights off: k%d = %.6g lies %.3g steps of 1e-5 from the unweighted least-squares minimum", j+1, k[j], o)
		}
	}
	rw, kw := run("noise")
	worst := 0.0
	for _, o := range offset(rw, kw) {
		worst = math.Max(worst, math.Abs(o))
	}
	t.Logf("unweighted k %.6g %.6g; weighted %.6g %.6g (off the unweighted minimum by up to %.3g steps)", k[0], k[1], kw[0], kw[1], worst)
	if worst < 0.5 {
		t.Errorf("the weighted fit is as near the unweighted minimum (%.3g steps): these data do not test the weighting", worst)
	}
}
