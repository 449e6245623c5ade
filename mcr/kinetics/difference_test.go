package kinetics

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/mathext"
)

// The standard error of the difference between two fits of the same data
// is that of the difference over repeated noise: Var(θ_a − θ_b) by its
// definition, measured here over 200 draws of A -> B (60 spectra in three
// noise levels, 1, 0.71 and 0.5; Bateman's solution) fitted with each
// spectrum weighted by its own level and with one level for all, the
// weights of the pipeline's Hausman test. DifferenceErrors' mean variance
// must match the draws' variance of ln(k_one/k_each) within the scatter of
// 200 draws and of its own estimate; its t reference (Satterthwaite's
// degrees of freedom) must reject at about the 5 % level, where the
// difference of the two variances estimated apart leaves many draws with
// no positive variance at all.
func TestDifferenceErrorsMatchTheDraws(t *testing.T) {
	s := mustParse(t, "A -> B")
	const n, m, k = 60, 80, 2e-3
	var times, sig []float64
	tm := 0.0
	for blk, step := range []float64{20, 40, 80} {
		for i := 0; i < n/3; i++ {
			times = append(times, tm)
			sig = append(sig, 4e-3/math.Pow(math.Sqrt2, float64(blk)))
			tm += step
		}
	}
	sim, err := s.Simulate([]float64{k}, []float64{1, 0}, times, 0)
	if err != nil {
		t.Fatal(err)
	}
	own, one := make([]float64, n), make([]float64, n)
	mean := 0.0
	for i := range own {
		own[i] = 1 / (sig[i] * sig[i])
		mean += own[i] / n
	}
	for i := range one {
		one[i] = mean
	}
	rng := rand.New(rand.NewPCG(7, 11))
	var diffs, vars []float64
	rejected, apart := 0, 0
	for draw := 0; draw < 200; draw++ {
		d := mat.NewDense(n, m, nil)
		for j := 0; j < m; j++ {
			a := math.Exp(-0.5 * math.Pow((float64(j)-25)/5, 2))
			b := math.Exp(-0.5 * math.Pow((float64(j)-50)/7, 2))
			for i := 0; i < n; i++ {
				d.Set(i, j, sim.C.At(i, 0)*a+sim.C.At(i, 1)*b+sig[i]*rng.NormFloat64())
			}
		}
		each, _, err := FitData(s, times, d, FitOptions{RowWeights: own, NoResidual: true})
		if err != nil {
			t.Fatal(err)
		}
		level, _, err := FitData(s, times, d, FitOptions{RowWeights: one, NoResidual: true, InitialK: each.K})
		if err != nil {
			t.Fatal(err)
		}
		e, _, ok := DifferenceErrors(level, each)
		if !ok || !(e[0].SE > 0) {
			t.Fatalf("draw %d: no difference error", draw)
		}
		dl := math.Log(level.K[0] / each.K[0])
		diffs, vars = append(diffs, dl), append(vars, e[0].SE*e[0].SE)
		z := dl / e[0].SE
		if p := fUpperT(z, e[0].DF); p < 0.05 {
			rejected++
		}
		if v := sq(level.KStdErr[0]/level.K[0]) - sq(each.KStdErr[0]/each.K[0]); !(v > 0) {
			apart++
		}
	}
	var mv, md, m2 float64
	for i := range diffs {
		mv += vars[i] / float64(len(diffs))
		md += diffs[i] / float64(len(diffs))
	}
	for _, v := range diffs {
		m2 += (v - md) * (v - md) / float64(len(diffs)-1)
	}
	t.Logf("Var(ln k_one − ln k_each) over the draws %.3g, mean estimate %.3g (ratio %.3f); %d of 200 rejected at 0.05; V_one − V_each measured apart not positive in %d", m2, mv, mv/m2, rejected, apart)
	if r := mv / m2; r < 0.7 || r > 1.4 {
		t.Errorf("mean estimated variance %.3g against %.3g over the draws (ratio %.3f); want within 0.7–1.4", mv, m2, r)
	}
	if rejected > 18 {
		t.Errorf("%d of 200 draws rejected at 0.05; want about 10, at most 18", rejected)
	}
}

// fUpperT is the two-sided tail of Student's t with nu degrees of freedom
// at z, by the regularized incomplete beta function (Abramowitz & Stegun
// 26.7.1): P(|T| > |z|) = I_{ν/(ν+z²)}(ν/2, 1/2).
func fUpperT(z, nu float64) float64 {
	return mathext.RegIncBeta(nu/2, 0.5, nu/(nu+z*z))
}
