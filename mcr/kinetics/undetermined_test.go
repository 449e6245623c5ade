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

// TestMinorSpeciesConstantRunToZero: A -> B -> C -> D with k3 = 1.1e-5 s⁻¹
// over an hour forms at most 2 % of D (Bateman 1910), and the profile of D
// seen here sits 0.02 below zero (a baseline the resolution left in it):
// the best k3 ≥ 0 is zero, and the fit runs ln k3 down until the residual
// no longer depends on it (∂c/∂ln k3 = k3 ∂c/∂k3 → 0 as k3 → 0, from the
// same solution). k3 then has no standard error (its variance in ln k is
// unbounded): it must be reported as not determined, with 0, and the
// warning must give the start it was given and say it ran to zero. k1 and
// k2, which the profiles do determine, must lie within 3 standard errors
// of the truth. A fit of the data started from there holds k3 where it
// started and must say so, not that the value is the start the user gave.
func TestMinorSpeciesConstantRunToZero(t *testing.T) {
	s := mustParse(t, "A -> B -> C -> D")
	times := linspace(0, 3600, 61)
	k := []float64{2e-3, 5e-4, 1.1e-5}
	sim, err := s.Simulate(k, []float64{1, 0, 0, 0}, times, 0)
	if err != nil {
		t.Fatal(err)
	}
	if dEnd := sim.C.At(len(times)-1, 3); dEnd > 0.02 {
		t.Fatalf("D reaches %.3g: not a minor species", dEnd)
	}
	obs := noisy(t, sim.C, []int{0, 1, 2, 3}, nil, 0.01, 4)
	for i := range times {
		obs.Set(i, 3, obs.At(i, 3)-0.02)
	}
	r, err := FitProfiles(s, times, obs, []int{0, 1, 2, 3}, FitOptions{InitialK: []float64{2e-3, 5e-4, 1e-5}})
	if err != nil {
		t.Fatal(err)
	}
	all := strings.Join(r.Warnings, "\n")
	t.Logf("k %v se %v\n%s", r.K, r.KStdErr, all)
	if r.KNotDetermined == nil || !r.KNotDetermined[2] || r.KStdErr[2] != 0 {
		t.Errorf("k3 = %.3g ± %.3g reported as determined", r.K[2], r.KStdErr[2])
	}
	if !strings.Contains(all, "ran from its start 1e-05 to") || !strings.Contains(all, "to zero") {
		t.Errorf("the warning does not give the start 1e-05 and say k3 ran to zero:\n%s", all)
	}
	within3SE(t, "k1, k2 beside an undetermined k3", &FitResult{K: r.K[:2], KStdErr: r.KStdErr[:2]}, k[:2])

	// The data fit, started from the profile fit's constants.
	d := fourBandData(t, sim.C)
	df, _, err := FitData(s, times, d, FitOptions{InitialK: r.K})
	if err != nil {
		t.Fatal(err)
	}
	dall := strings.Join(df.Warnings, "\n")
	t.Logf("data fit: k %v se %v\n%s", df.K, df.KStdErr, dall)
	if df.KNotDetermined == nil || !df.KNotDetermined[2] || df.KStdErr[2] != 0 {
		t.Errorf("data fit: k3 = %.3g ± %.3g reported as determined", df.K[2], df.KStdErr[2])
	}
	if strings.Contains(dall, "held at its start") || !strings.Contains(dall, "where this fit started") {
		t.Errorf("data fit: the warning does not say k3 stayed where this fit started:\n%s", dall)
	}
}

func seq(n int) []int {
	out := make([]int, n)
	for i := range out {
		out[i] = i
	}
	return out
}

// TestNearlyFlatColumnDoesNotStallTheFit: a data fit of the same invented
// A -> B -> C -> D series (D at most 2 %) started with k3 at 2.29e-15 s⁻¹,
// where D's model column is at rounding level (its Jacobian column about
// 1e-11 of the largest), must still fit k1 and k2: at a least-squares
// minimum the sum of squares is stationary in each fitted parameter
// (definition), checked by central differences of ln k1 and ln k2 at a
// relative step of 1e-4 against the curvature there, and two starts of k1,
// k2 must reach the same constants. Levenberg–Marquardt once returned
// each start unchanged, k1 and k2 included, as converged after one
// iteration.
func TestNearlyFlatColumnDoesNotStallTheFit(t *testing.T) {
	s := mustParse(t, "A -> B -> C -> D")
	times := linspace(0, 3600, 61)
	sim, err := s.Simulate([]float64{2e-3, 5e-4, 1.1e-5}, []float64{1, 0, 0, 0}, times, 0)
	if err != nil {
		t.Fatal(err)
	}
	d := fourBandData(t, sim.C)
	ssr := func(k []float64) float64 {
		f, _, err := FitData(s, times, d, FitOptions{InitialK: k, FixedK: []bool{true, true, true}})
		if err != nil {
			t.Fatal(err)
		}
		return f.SSR
	}
	var ks [][]float64
	for _, start := range [][]float64{{2.0006e-3, 4.95e-4, 2.29e-15}, {2.1e-3, 4.8e-4, 2.29e-15}} {
		f, _, err := FitData(s, times, d, FitOptions{InitialK: start})
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("start %v: k %v ± %v, %d iterations", start, f.K, f.KStdErr, f.Iterations)
		if f.K[0] == start[0] || f.K[1] == start[1] {
			t.Errorf("start %v: k1, k2 returned unchanged", start)
		}
		for j := range 2 {
			up, down := append([]float64(nil), f.K...), append([]float64(nil), f.K...)
			up[j] *= math.Exp(1e-4)
			down[j] *= math.Exp(-1e-4)
			f0, fu, fd := ssr(f.K), ssr(up), ssr(down)
			if off := (fu - fd) / (2 * (fu + fd - 2*f0)); math.Abs(off) > 0.05 {
				t.Errorf("start %v: k%d = %.6g lies %.3g steps of 1e-4 in ln k from the minimum", start, j+1, f.K[j], off)
			}
		}
		ks = append(ks, f.K)
	}
	for j := range 2 {
		if math.Abs(ks[0][j]/ks[1][j]-1) > 1e-6 {
			t.Errorf("k%d: %.8g and %.8g from two starts", j+1, ks[0][j], ks[1][j])
		}
	}
}

// fourBandData is profiles c (n × 4) times four Gaussian bands on 80 points,
// 18 points apart, with white noise of 0.002 (seed 5).
func fourBandData(t *testing.T, c *mat.Dense) *mat.Dense {
	t.Helper()
	spec := mat.NewDense(80, 4, nil)
	for j := 0; j < 80; j++ {
		for k := 0; k < 4; k++ {
			spec.Set(j, k, math.Exp(-0.5*sq((float64(j)-12-18*float64(k))/6)))
		}
	}
	var clean mat.Dense
	clean.Mul(c, spec.T())
	return noisy(t, &clean, seq(80), nil, 0.002, 5)
}

// A -> B fitted to profiles in which nothing reacts: [A] stays at or above
// its start (1 + |noise|, B by closure 1 − [A]). The residual of A,
// a_i − e^{−k t_i}, is then ≥ 0 at every k ≥ 0 and the sum of squares has
// derivative 2 Σ (a_i − e^{−k t_i}) t_i e^{−k t_i} ≥ 0: its least-squares k
// is 0, the bound (analytic). The fit runs towards it, where its standard
// error is many orders above k itself (se(k)/k = se(ln k), the delta
// method): the data do not determine it, and it must be marked so, though
// with a single parameter the Jacobian has no direction small beside
// another. Before, it was reported as k ± a standard error 10⁶ times k (the
// light on/off series fitted as A -> B: 3.4e-13 ± 1.4e-7 s⁻¹).
func TestConstantThatRanToZeroAloneIsNotDetermined(t *testing.T) {
	times := linspace(0, 100, 30)
	obs := mat.NewDense(len(times), 2, nil)
	rng := rand.New(rand.NewPCG(3, 77))
	for i := range times {
		a := 1 + 0.01*math.Abs(rng.NormFloat64())
		obs.Set(i, 0, a)
		obs.Set(i, 1, 1-a)
	}
	res, err := FitProfiles(mustParse(t, "A -> B"), times, obs, []int{0, 1}, FitOptions{C0: []float64{1, 0}, InitialK: []float64{0.02}})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("k %.4g ± %.3g, not determined %v, warnings %q", res.K[0], res.KStdErr[0], res.KNotDetermined, res.Warnings)
	if !(res.K[0] < 1e-6*0.02) {
		t.Fatalf("k = %.4g: the fit did not run towards its least-squares value 0", res.K[0])
	}
	if res.KNotDetermined == nil || !res.KNotDetermined[0] || res.KStdErr[0] != 0 {
		t.Errorf("k = %.4g ± %.3g reported as determined", res.K[0], res.KStdErr[0])
	}
	if !strings.Contains(strings.Join(res.Warnings, "\n"), "the data do not see it") {
		t.Errorf("no warning says the data do not see the constant:\n%s", strings.Join(res.Warnings, "\n"))
	}
}
