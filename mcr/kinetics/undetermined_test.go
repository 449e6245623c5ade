package kinetics

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestReversiblePairOnlySumDetermined: A -> B, B -> A from [A]0 = 1 has
// [A] = (k2 + k1 e^{−(k1+k2)t})/(k1 + k2) (the analytic solution of a
// reversible first-order reaction; common practice), so with free spectra
// the model's columns span {1, e^{−(k1+k2)t}} whatever k1 and k2 are with
// the same sum: the data determine k1 + k2 alone. The fit must report k1
// and k2 as not determined (no standard error), and give the sum, which
// must agree with the true 0.05 s⁻¹ within 3 of its standard errors and
// carry the standard error of k from fitting A -> B to the same data
// (whose columns span the same space, {1, e^{−kt}}: the same least-squares
// problem in k = k1 + k2) within 1 %.
func TestReversiblePairOnlySumDetermined(t *testing.T) {
	const k1, k2 = 0.035, 0.015
	times := linspace(0, 120, 40)
	n, m := len(times), 60
	d := mat.NewDense(n, m, nil)
	rng := rand.New(rand.NewPCG(8, 21))
	for i, tm := range times {
		a := (k2 + k1*math.Exp(-(k1+k2)*tm)) / (k1 + k2)
		for j := 0; j < m; j++ {
			u := float64(j) / float64(m-1)
			sA, sB := math.Exp(-0.5*sq((u-0.35)/0.1)), 0.7*math.Exp(-0.5*sq((u-0.6)/0.12))
			d.Set(i, j, a*sA+(1-a)*sB+0.002*rng.NormFloat64())
		}
	}
	rev, _, err := FitData(mustParse(t, "A -> B; B -> A"), times, d, FitOptions{InitialK: []float64{0.03, 0.01}})
	if err != nil {
		t.Fatal(err)
	}
	one, _, err := FitData(mustParse(t, "A -> B"), times, d, FitOptions{InitialK: []float64{0.04}})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("k %v se %v not determined %v; sum %.6g ± %.3g; A -> B alone %.6g ± %.3g", rev.K, rev.KStdErr, rev.KNotDetermined, rev.SumK, rev.SumKStdErr, one.K[0], one.KStdErr[0])
	for j := range 2 {
		if rev.KNotDetermined == nil || !rev.KNotDetermined[j] || rev.KStdErr[j] != 0 {
			t.Errorf("k%d = %.4g ± %.3g reported as determined", j+1, rev.K[j], rev.KStdErr[j])
		}
	}
	if len(rev.SumSteps) != 2 || !(rev.SumKStdErr > 0) {
		t.Fatalf("no determined sum (steps %v, ± %v)", rev.SumSteps, rev.SumKStdErr)
	}
	if z := math.Abs(rev.SumK-(k1+k2)) / rev.SumKStdErr; z > 3 {
		t.Errorf("k1 + k2 = %.6g ± %.3g, true %.6g (%.1f standard errors)", rev.SumK, rev.SumKStdErr, k1+k2, z)
	}
	if math.Abs(rev.SumK/one.K[0]-1) > 1e-6 || math.Abs(rev.SumKStdErr/one.KStdErr[0]-1) > 0.01 {
		t.Errorf("k1 + k2 = %.8g ± %.4g, A -> B alone %.8g ± %.4g: the same problem in k1 + k2", rev.SumK, rev.SumKStdErr, one.K[0], one.KStdErr[0])
	}
	if !strings.Contains(strings.Join(rev.Warnings, "\n"), "only their sum is: k1 + k2") {
		t.Errorf("no warning names the determined sum:\n%s", strings.Join(rev.Warnings, "\n"))
	}
}
