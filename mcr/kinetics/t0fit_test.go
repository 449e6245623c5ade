package kinetics

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
)

// firstOrderAt is the analytic solution of A -> B started at t0 from
// [A] = 1: [A] = exp(−k(t − t0)) after t0, 1 before (textbook first-order
// kinetics).
func firstOrderAt(k, t0, t float64) (a, b float64) {
	a = math.Exp(-k * math.Max(0, t-t0))
	return a, 1 - a
}

// batemanAt is Bateman's solution of A -> B -> C from [A] = 1 (Bateman,
// Proc. Cambridge Phil. Soc. 1910; any kinetics textbook):
// [A] = e^(−k1 τ), [B] = k1/(k2 − k1)(e^(−k1 τ) − e^(−k2 τ)), [C] = 1 − [A] − [B],
// τ = t − t0 after t0, 0 before.
func batemanAt(k1, k2, t0, t float64) (a, b, c float64) {
	tau := math.Max(0, t-t0)
	a = math.Exp(-k1 * tau)
	b = k1 / (k2 - k1) * (math.Exp(-k1*tau) - math.Exp(-k2*tau))
	return a, b, 1 - a - b
}

// t0Draws collects the fitted t0 and k (and their standard errors) over
// noise draws.
type t0Draws struct {
	t0, t0se []float64
	k, kse   [][]float64
}

func (d *t0Draws) add(r *FitResult) {
	d.t0, d.t0se = append(d.t0, r.T0), append(d.t0se, r.T0StdErr)
	for j := range r.K {
		if len(d.k) <= j {
			d.k, d.kse = append(d.k, nil), append(d.kse, nil)
		}
		d.k[j], d.kse[j] = append(d.k[j], r.K[j]), append(d.kse[j], r.KStdErr[j])
	}
}

// checkMonteCarlo compares one parameter's estimates over noise draws with
// the truth and its standard errors with their spread: the mean within 3
// standard errors of the mean of the truth (no bias beyond the draws' own
// scatter), the mean standard error within 20 % of the standard deviation
// of the estimates (the linearised covariance σ²(JᵀJ)⁻¹ is the
// estimator's covariance for small noise; Bates & Watts, Nonlinear
// Regression Analysis, 1988, ch. 2, from memory), and the share of draws
// whose truth lies within one standard error near 68 % (normal
// estimates; the bounds 3 binomial standard deviations wide).
func checkMonteCarlo(t *testing.T, what string, est, se []float64, truth float64) {
	t.Helper()
	n := float64(len(est))
	mean, sd := stat.MeanStdDev(est, nil)
	meanSE := stat.Mean(se, nil)
	covered := 0.0
	for i, v := range est {
		if math.Abs(v-truth) <= se[i] {
			covered++
		}
	}
	share := covered / n
	t.Logf("%s: mean %.6g (truth %.6g), spread %.3g, mean se %.3g (ratio %.3f), within 1 se %.2f", what, mean, truth, sd, meanSE, meanSE/sd, share)
	if math.Abs(mean-truth) > 3*sd/math.Sqrt(n) {
		t.Errorf("%s: mean of %d fits %.6g, truth %.6g: off by %.1f standard errors of the mean", what, len(est), mean, truth, math.Abs(mean-truth)/(sd/math.Sqrt(n)))
	}
	if r := meanSE / sd; r < 0.8 || r > 1.2 {
		t.Errorf("%s: mean standard error %.3g against a spread of %.3g over the draws (ratio %.3f, want within 20 %%)", what, meanSE, sd, r)
	}
	if lim := 3 * math.Sqrt(0.68*0.32/n); math.Abs(share-0.68) > lim {
		t.Errorf("%s: the truth within one standard error in %.0f %% of the draws, want 68 ± %.0f %%", what, 100*share, 100*lim)
	}
}

// TestFitT0FirstOrderMonteCarlo: profiles of A -> B that start at
// t0 = 24.3 s, 4.3 s after the last spectrum before the change (its time
// given as --t0 would be), fitted with t0 free: t0 and k recover the truth,
// and their standard errors match the spread over 200 noise draws (fixed
// seeds). Analytic solution: [A] = exp(−k(t − t0)).
func TestFitT0FirstOrderMonteCarlo(t *testing.T) {
	s := mustParse(t, "A -> B")
	const k, t0, sigma = 0.02, 24.3, 0.01
	times := linspace(0, 300, 31)
	var d t0Draws
	for seed := uint64(1); seed <= 200; seed++ {
		rng := rand.New(rand.NewPCG(seed, 7))
		obs := mat.NewDense(len(times), 2, nil)
		for i, tm := range times {
			a, b := firstOrderAt(k, t0, tm)
			obs.Set(i, 0, a+sigma*rng.NormFloat64())
			obs.Set(i, 1, b+sigma*rng.NormFloat64())
		}
		r, err := FitProfiles(s, times, obs, []int{0, 1}, FitOptions{T0: 20, FitT0: true})
		if err != nil {
			t.Fatal(err)
		}
		if !r.T0Fitted || r.T0Lo != 20 || r.T0Hi != 30 || r.T0NotDetermined {
			t.Fatalf("seed %d: t0 fitted %v within %g to %g, not determined %v; want fitted within 20 to 30 (the spectra either side of the start)", seed, r.T0Fitted, r.T0Lo, r.T0Hi, r.T0NotDetermined)
		}
		d.add(r)
	}
	checkMonteCarlo(t, "t0", d.t0, d.t0se, t0)
	checkMonteCarlo(t, "k", d.k[0], d.kse[0], k)
}

// TestFitT0BatemanDataMonteCarlo: A -> B -> C data, D = C Sᵀ with
// Bateman's profiles started at t0 = 33.7 s and three overlapping bands,
// fitted as the data matrix (variable projection, free spectra) with t0
// free from the last spectrum before the change (30 s): t0, k1 and k2
// recover the truth, their standard errors the spread over 120 draws.
func TestFitT0BatemanDataMonteCarlo(t *testing.T) {
	s := mustParse(t, "A -> B -> C")
	const k1, k2, t0, sigma = 0.03, 0.01, 33.7, 0.004
	times := linspace(0, 600, 41)
	const m = 40
	spec := mat.NewDense(m, 3, nil)
	for j := 0; j < m; j++ {
		for c, centre := range []float64{12, 20, 28} {
			spec.Set(j, c, math.Exp(-0.5*math.Pow((float64(j)-centre)/5, 2)))
		}
	}
	prof := mat.NewDense(len(times), 3, nil)
	for i, tm := range times {
		a, b, c := batemanAt(k1, k2, t0, tm)
		prof.SetRow(i, []float64{a, b, c})
	}
	var clean mat.Dense
	clean.Mul(prof, spec.T())
	var d t0Draws
	for seed := uint64(1); seed <= 120; seed++ {
		rng := rand.New(rand.NewPCG(seed, 11))
		data := mat.DenseCopyOf(&clean)
		for i := range len(times) {
			for j := range m {
				data.Set(i, j, data.At(i, j)+sigma*rng.NormFloat64())
			}
		}
		r, _, err := FitData(s, times, data, FitOptions{T0: 30, FitT0: true, InitialK: []float64{0.02, 0.005}})
		if err != nil {
			t.Fatal(err)
		}
		if r.T0NotDetermined || r.T0StdErr <= 0 {
			t.Fatalf("seed %d: t0 = %g ± %g not determined %v; want determined (spectra before and after it)", seed, r.T0, r.T0StdErr, r.T0NotDetermined)
		}
		d.add(r)
	}
	checkMonteCarlo(t, "t0", d.t0, d.t0se, t0)
	checkMonteCarlo(t, "k1", d.k[0], d.kse[0], k1)
	checkMonteCarlo(t, "k2", d.k[1], d.kse[1], k2)
}

// TestFitT0BeforeFirstSpectrumNotDetermined: A -> B started at t0 = −15 s,
// before the first spectrum (0 s), with only [A] observed and its initial
// concentration fitted: [A] = c0 e^(k t0) e^(−k t) at every spectrum, so t0
// trades with c0 exactly (the analytic solution) and the data cannot
// place it; k stays determined. t0 is held within −30 to 0 s, all before
// the spectra: it must be reported not determined, with no standard error
// and a warning, not as a number.
func TestFitT0BeforeFirstSpectrumNotDetermined(t *testing.T) {
	s := mustParse(t, "A -> B")
	const k, t0, sigma = 0.02, -15.0, 0.005
	times := linspace(0, 300, 31)
	rng := rand.New(rand.NewPCG(3, 5))
	obs := mat.NewDense(len(times), 1, nil)
	for i, tm := range times {
		a, _ := firstOrderAt(k, t0, tm)
		obs.Set(i, 0, a+sigma*rng.NormFloat64())
	}
	r, err := FitProfiles(s, times, obs, []int{0}, FitOptions{T0: -10, FitT0: true, T0Lo: -30, T0Hi: 0, FitC0: true})
	if err != nil {
		t.Fatal(err)
	}
	if !r.T0NotDetermined || r.T0StdErr != 0 {
		t.Errorf("t0 = %g ± %g, not determined %v: want not determined (it trades with c0)", r.T0, r.T0StdErr, r.T0NotDetermined)
	}
	said := false
	for _, w := range r.Warnings {
		said = said || strings.Contains(w, "start time t0")
	}
	if !said {
		t.Errorf("no warning names t0: %q", r.Warnings)
	}
	within3SE(t, "k with t0 not determined", r, []float64{k})
}

// TestFitT0OffLeavesTheFit: without FitT0 a fit reports the t0 it was
// given and nothing fitted, and its rate constants are bit for bit those
// of the same fit made before t0 could be fitted (the same code path).
func TestFitT0OffLeavesTheFit(t *testing.T) {
	s, times, d := firstOrderData(t)
	r, _, err := FitData(s, times, d, FitOptions{T0: 0})
	if err != nil {
		t.Fatal(err)
	}
	if r.T0 != 0 || r.T0Fitted || r.T0StdErr != 0 || r.T0NotDetermined {
		t.Errorf("t0 not fitted: T0 %g, fitted %v, se %g, not determined %v", r.T0, r.T0Fitted, r.T0StdErr, r.T0NotDetermined)
	}
}

// TestT0Bracket: the range is the spectra either side of the start, the
// first two when it precedes them all; no later spectrum is an error.
func TestT0Bracket(t *testing.T) {
	times := []float64{0, 30, 60, 90, 120}
	for _, c := range []struct{ t0, lo, hi float64 }{{60, 60, 90}, {61, 60, 90}, {-5, 0, 30}, {0, 0, 30}} {
		lo, hi, err := T0Bracket(times, c.t0)
		if err != nil || lo != c.lo || hi != c.hi {
			t.Errorf("t0 %g: %g to %g (%v), want %g to %g", c.t0, lo, hi, err, c.lo, c.hi)
		}
	}
	if _, _, err := T0Bracket(times, 120); err == nil {
		t.Error("t0 at the last time: no error")
	}
}

// TestFitT0BeforeFirstSpectrumDataFit: the same start before the first
// spectrum, fitted as the data matrix with free spectra and t0's range the
// first two spectra (no spectrum measured before the change): the columns
// of A -> B span {1, e^(−kt)} at every spectrum whatever t0 ≤ 0 is (the
// analytic solution), so the fit puts t0 on the first spectrum and the
// data cannot say how far before it the start lay. It must be reported
// not determined, not as a number near 0 s.
func TestFitT0BeforeFirstSpectrumDataFit(t *testing.T) {
	s := mustParse(t, "A -> B")
	const k, t0 = 0.02, -15.0
	times := linspace(0, 300, 31)
	const m = 30
	rng := rand.New(rand.NewPCG(1, 2))
	d := mat.NewDense(len(times), m, nil)
	for i, tm := range times {
		a, b := firstOrderAt(k, t0, tm)
		for j := range m {
			sa := math.Exp(-0.5 * math.Pow((float64(j)-10)/5, 2))
			sb := math.Exp(-0.5 * math.Pow((float64(j)-20)/5, 2))
			d.Set(i, j, a*sa+b*sb+0.003*rng.NormFloat64())
		}
	}
	r, _, err := FitData(s, times, d, FitOptions{T0: 0, FitT0: true})
	if err != nil {
		t.Fatal(err)
	}
	if r.T0Lo != 0 || r.T0Hi != 10 || !r.T0NotDetermined || r.T0StdErr != 0 {
		t.Errorf("t0 = %g ± %g within %g to %g, not determined %v: want not determined within 0 to 10", r.T0, r.T0StdErr, r.T0Lo, r.T0Hi, r.T0NotDetermined)
	}
	within3SE(t, "k with t0 before the first spectrum", r, []float64{k})
	// The data do not see t0's direction, so k and its standard error are
	// those of the fit with t0 held where this one ended, not widened by
	// it.
	fixed, _, err := FitData(s, times, d, FitOptions{T0: r.T0})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(r.K[0]-fixed.K[0]) > 1e-6*fixed.K[0] || math.Abs(r.KStdErr[0]-fixed.KStdErr[0]) > 1e-3*fixed.KStdErr[0] {
		t.Errorf("k = %.7g ± %.4g with t0 not determined, %.7g ± %.4g with t0 held there: want the same", r.K[0], r.KStdErr[0], fixed.K[0], fixed.KStdErr[0])
	}
}

// TestT0ColumnIsMinusDcDt: the analytic column of the reported Jacobian
// for t0 is T·∂r/∂t0 with ∂c/∂t0 = −dc/dt (differentiating
// c(t − t0)); it must agree with central differences of the residual in
// t0 itself (h = 1e-4 s; truncation error O(h²)).
func TestT0ColumnIsMinusDcDt(t *testing.T) {
	s := mustParse(t, "A -> B -> C")
	times := linspace(0, 300, 31)
	obs := mat.NewDense(len(times), 3, nil)
	for i, tm := range times {
		a, b, c := batemanAt(0.03, 0.01, 24, tm)
		obs.SetRow(i, []float64{a, b, c})
	}
	p, err := newFitProblem(s, times, FitOptions{T0: 22, FitT0: true, InitialK: []float64{0.03, 0.01}}, len(times))
	if err != nil {
		t.Fatal(err)
	}
	p.observed, p.columns, p.q = obs, []int{0, 1, 2}, 3
	m := len(times) * 3
	theta := p.pack(p.k0, p.c00)
	col, err := p.t0Column(theta, m)
	if err != nil {
		t.Fatal(err)
	}
	t0 := p.t0At(theta)
	const h = 1e-4
	rp, rm := make([]float64, m), make([]float64, m)
	for _, x := range []struct {
		t0 float64
		r  []float64
	}{{t0 + h, rp}, {t0 - h, rm}} {
		th := append([]float64(nil), theta...)
		th[p.t0Index()] = p.t0Phi(x.t0)
		if err := p.residual(th, x.r); err != nil {
			t.Fatal(err)
		}
	}
	var worst, scale float64
	for i := range col {
		fd := p.tScale * (rp[i] - rm[i]) / (2 * h)
		worst = math.Max(worst, math.Abs(col[i]-fd))
		scale = math.Max(scale, math.Abs(fd))
	}
	if !(scale > 0) || worst > 1e-5*scale {
		t.Errorf("t0 column: largest difference from central differences %.3g of %.3g", worst, scale)
	}
}
