package kinetics

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// noisy returns the simulated model columns cols (scaled by amp, nil = 1) plus Gaussian noise
// of standard deviation sigma from a seeded PCG stream.
func noisy(t testing.TB, model *mat.Dense, cols []int, amp []float64, sigma float64, seed uint64) *mat.Dense {
	t.Helper()
	n, _ := model.Dims()
	rng := rand.New(rand.NewPCG(seed, 0x6b696e))
	out := mat.NewDense(n, len(cols), nil)
	for i := 0; i < n; i++ {
		for j, c := range cols {
			a := 1.0
			if amp != nil {
				a = amp[j]
			}
			out.Set(i, j, a*model.At(i, c)+sigma*rng.NormFloat64())
		}
	}
	return out
}

func allFinite(t *testing.T, r *FitResult) {
	t.Helper()
	vals := append(append(append(append([]float64{}, r.K...), r.KStdErr...), r.HalfLife...), r.RMS, r.Sigma)
	for _, v := range vals {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			t.Fatalf("non-finite output %v", vals)
		}
	}
	for _, m := range []*mat.Dense{r.Corr, r.Fitted, r.Model, r.Residual} {
		if !finiteDense(m) {
			t.Fatal("non-finite matrix in result")
		}
	}
}

// within3SE is the recovery criterion: a correct estimator with correct standard errors puts
// the true value within 3 se with probability ≈ 99.7 % (normal approximation).
func within3SE(t *testing.T, label string, r *FitResult, want []float64) {
	t.Helper()
	for j := range want {
		if r.KStdErr[j] <= 0 {
			t.Errorf("%s: k%d standard error %v", label, j+1, r.KStdErr[j])
			continue
		}
		if z := math.Abs(r.K[j]-want[j]) / r.KStdErr[j]; z > 3 {
			t.Errorf("%s: k%d = %.5g ± %.2g, true %.5g (%.1f se)", label, j+1, r.K[j], r.KStdErr[j], want[j], z)
		}
	}
}

func TestFitProfilesRecoversRateConstants(t *testing.T) {
	s := mustParse(t, "A -> B -> C")
	k := []float64{0.5, 0.12}
	times := linspace(0, 40, 61)
	sim, err := s.Simulate(k, []float64{1, 0, 0}, times, 0)
	if err != nil {
		t.Fatal(err)
	}
	const sigma = 0.005
	// Several seeds: each must recover k within 3 standard errors (simulated data, known truth).
	for seed := uint64(1); seed <= 5; seed++ {
		obs := noisy(t, sim.C, []int{0, 1, 2}, nil, sigma, seed)
		r, err := FitProfiles(s, times, obs, []int{0, 1, 2}, FitOptions{})
		if err != nil {
			t.Fatal(err)
		}
		allFinite(t, r)
		if !r.Converged {
			t.Errorf("seed %d: not converged %v", seed, r.Warnings)
		}
		within3SE(t, "seed", r, k)
		// The noise estimate must match the known σ (χ² with 181 dof: ±15 % is > 3 sd).
		if math.Abs(r.Sigma/sigma-1) > 0.15 {
			t.Errorf("seed %d: sigma = %v, true %v", seed, r.Sigma, sigma)
		}
		// First-order half-life ln 2/k (definition).
		if math.Abs(r.HalfLife[0]-math.Ln2/r.K[0]) > 1e-15*r.HalfLife[0] {
			t.Errorf("half-life %v", r.HalfLife[0])
		}
		if c := r.Corr.At(0, 1); c != r.Corr.At(1, 0) || math.Abs(c) >= 1 {
			t.Errorf("correlation %v", c)
		}
	}
}

func TestFitStandardErrorsCalibrated(t *testing.T) {
	// Monte Carlo: over 40 seeds the spread of the estimates must match the reported standard
	// errors (the σ²(JᵀJ)⁻¹ approximation). The sample sd of 40 draws has a relative sd of
	// ≈ 11 %, so ±35 % is a > 3 sd band.
	s := mustParse(t, "A -> B -> C")
	k := []float64{0.3, 0.9}
	times := linspace(0, 20, 41)
	sim, err := s.Simulate(k, []float64{1, 0, 0}, times, 0)
	if err != nil {
		t.Fatal(err)
	}
	const runs = 40
	est := make([][]float64, 2)
	var meanSE [2]float64
	for seed := uint64(100); seed < 100+runs; seed++ {
		obs := noisy(t, sim.C, []int{1, 2}, nil, 0.01, seed)
		r, err := FitProfiles(s, times, obs, []int{1, 2}, FitOptions{InitialK: []float64{0.2, 1}})
		if err != nil {
			t.Fatal(err)
		}
		for j := 0; j < 2; j++ {
			est[j] = append(est[j], r.K[j])
			meanSE[j] += r.KStdErr[j] / runs
		}
	}
	for j := 0; j < 2; j++ {
		var mean, ss float64
		for _, v := range est[j] {
			mean += v / runs
		}
		for _, v := range est[j] {
			ss += (v - mean) * (v - mean)
		}
		sd := math.Sqrt(ss / (runs - 1))
		if ratio := sd / meanSE[j]; ratio < 0.65 || ratio > 1.35 {
			t.Errorf("k%d: empirical sd %.3g vs mean standard error %.3g", j+1, sd, meanSE[j])
		}
		if math.Abs(mean-k[j]) > 3*sd/math.Sqrt(runs) {
			t.Errorf("k%d: mean estimate %.4g, true %.4g (bias)", j+1, mean, k[j])
		}
	}
}

func TestFitProfilesAmplitudesAndAutoMap(t *testing.T) {
	// Resolved profiles come with arbitrary scale and in arbitrary order: B and C scaled by
	// 2.5 and 0.7, presented as (C, B).
	s := mustParse(t, "A -> B -> C")
	k := []float64{0.25, 0.08}
	times := linspace(0, 60, 50)
	sim, err := s.Simulate(k, []float64{1, 0, 0}, times, 0)
	if err != nil {
		t.Fatal(err)
	}
	obs := noisy(t, sim.C, []int{2, 1}, []float64{0.7, 2.5}, 0.004, 7)
	opt := FitOptions{Amplitudes: true}
	cols, err := AutoMap(s, times, obs, opt)
	if err != nil {
		t.Fatal(err)
	}
	if cols[0] != 2 || cols[1] != 1 {
		t.Fatalf("AutoMap = %v, want [2 1] (the simulated assignment)", cols)
	}
	r, err := FitProfiles(s, times, obs, cols, opt)
	if err != nil {
		t.Fatal(err)
	}
	allFinite(t, r)
	within3SE(t, "amplitudes", r, k)
	if math.Abs(r.Amplitudes[0]-0.7) > 0.02 || math.Abs(r.Amplitudes[1]-2.5) > 0.05 {
		t.Errorf("amplitudes %v, simulated (0.7, 2.5)", r.Amplitudes)
	}
}

// TestAutoMapFitIsTheFit: AutoMapFit returns, with the assignment, the fit
// FitProfiles makes of it with the same options (callers reuse it instead
// of fitting again), here the simulated assignment of the test above; the
// fit is deterministic, so the numbers must be the same bit for bit.
func TestAutoMapFitIsTheFit(t *testing.T) {
	s := mustParse(t, "A -> B -> C")
	times := linspace(0, 60, 50)
	sim, err := s.Simulate([]float64{0.25, 0.08}, []float64{1, 0, 0}, times, 0)
	if err != nil {
		t.Fatal(err)
	}
	obs := noisy(t, sim.C, []int{2, 1}, []float64{0.7, 2.5}, 0.004, 7)
	opt := FitOptions{Amplitudes: true}
	cols, fit, err := AutoMapFit(s, times, obs, opt)
	if err != nil {
		t.Fatal(err)
	}
	again, err := FitProfiles(s, times, obs, cols, opt)
	if err != nil {
		t.Fatal(err)
	}
	for j := range again.K {
		if fit.K[j] != again.K[j] || fit.KStdErr[j] != again.KStdErr[j] {
			t.Errorf("k%d: AutoMapFit %v ± %v, FitProfiles %v ± %v", j+1, fit.K[j], fit.KStdErr[j], again.K[j], again.KStdErr[j])
		}
	}
	if fit.SSR != again.SSR {
		t.Errorf("residual sum of squares %v from AutoMapFit, %v from FitProfiles", fit.SSR, again.SSR)
	}
}

func TestFitSecondOrderScheme(t *testing.T) {
	// Mass action integrated by DOPRI5 inside the fit; several seeds within 3 se.
	s := mustParse(t, "A + B -> C; C -> D")
	k := []float64{1.2, 0.15}
	c0 := []float64{1, 0.8, 0, 0}
	times := linspace(0, 30, 40)
	sim, err := s.Simulate(k, c0, times, 0)
	if err != nil {
		t.Fatal(err)
	}
	for seed := uint64(11); seed <= 13; seed++ {
		obs := noisy(t, sim.C, []int{0, 2, 3}, nil, 0.005, seed)
		r, err := FitProfiles(s, times, obs, []int{0, 2, 3}, FitOptions{C0: c0})
		if err != nil {
			t.Fatal(err)
		}
		allFinite(t, r)
		within3SE(t, "second order", r, k)
		if r.Stiff {
			t.Error("non-stiff problem reported stiff")
		}
	}
}

func TestFitExtentsOfDifferenceData(t *testing.T) {
	// Difference data resolve reactions: the observed columns are reaction extents with
	// arbitrary scale (signed reaction spectra), here −1.5·ξ1 and 0.8·ξ2, reaction starting at t0.
	s := mustParse(t, "A -> B -> C")
	k := []float64{0.4, 0.1}
	times := linspace(-5, 50, 56)
	const t0 = 2
	sim, err := s.Simulate(k, []float64{1, 0, 0}, times, t0)
	if err != nil {
		t.Fatal(err)
	}
	obs := noisy(t, sim.Extents, []int{0, 1}, []float64{-1.5, 0.8}, 0.005, 21)
	r, err := FitProfiles(s, times, obs, []int{0, 1}, FitOptions{T0: t0, UseExtents: true, Amplitudes: true})
	if err != nil {
		t.Fatal(err)
	}
	allFinite(t, r)
	within3SE(t, "extents", r, k)
	if math.Abs(r.Amplitudes[0]+1.5) > 0.05 {
		t.Errorf("amplitude %v, simulated −1.5", r.Amplitudes[0])
	}
}

func TestFitDataVariableProjection(t *testing.T) {
	// D = C Sᵀ + noise with invented Gaussian bands; the spectra are solved linearly inside
	// the fit (Golub & Pereyra 1973).
	s := mustParse(t, "A -> B -> C")
	k := []float64{0.35, 0.07}
	times := linspace(0, 50, 40)
	sim, err := s.Simulate(k, []float64{1, 0, 0}, times, 0)
	if err != nil {
		t.Fatal(err)
	}
	const m = 90
	spec := mat.NewDense(m, 3, nil)
	centers := [][]float64{{20, 60}, {35}, {50, 75}}
	for j := 0; j < m; j++ {
		for c, cs := range centers {
			var v float64
			for _, x0 := range cs {
				v += math.Exp(-0.5 * math.Pow((float64(j)-x0)/5, 2))
			}
			spec.Set(j, c, v)
		}
	}
	var d mat.Dense
	d.Mul(sim.C, spec.T())
	rng := rand.New(rand.NewPCG(5, 9))
	const sigma = 0.002
	n, _ := d.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, d.At(i, j)+sigma*rng.NormFloat64())
		}
	}
	r, spectra, err := FitData(s, times, &d, FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	allFinite(t, r)
	within3SE(t, "data", r, k)
	// Noise estimate uses n·m − p − q·m degrees of freedom.
	if math.Abs(r.Sigma/sigma-1) > 0.1 {
		t.Errorf("sigma %v, true %v", r.Sigma, sigma)
	}
	if r, c := spectra.Dims(); r != m || c != 3 {
		t.Fatalf("spectra %d×%d", r, c)
	}
	for j := 0; j < m; j++ {
		for c := 0; c < 3; c++ {
			if math.Abs(spectra.At(j, c)-spec.At(j, c)) > 0.05 {
				t.Fatalf("spectrum %d channel %d: %v, simulated %v", c, j, spectra.At(j, c), spec.At(j, c))
			}
		}
	}
}

func TestFitFixedRateConstant(t *testing.T) {
	s := mustParse(t, "A -> B -> C")
	k := []float64{0.5, 0.12}
	times := linspace(0, 40, 41)
	sim, _ := s.Simulate(k, []float64{1, 0, 0}, times, 0)
	obs := noisy(t, sim.C, []int{1}, nil, 0.003, 3)
	r, err := FitProfiles(s, times, obs, []int{1}, FitOptions{InitialK: []float64{1, 0.12}, FixedK: []bool{false, true}})
	if err != nil {
		t.Fatal(err)
	}
	if r.K[1] != 0.12 || r.KStdErr[1] != 0 || r.Corr.At(0, 1) != 0 {
		t.Errorf("fixed step changed: k %v se %v corr %v", r.K, r.KStdErr, r.Corr.At(0, 1))
	}
	within3SE(t, "fixed", &FitResult{K: r.K[:1], KStdErr: r.KStdErr[:1]}, k[:1])
}

func TestFitDeterministic(t *testing.T) {
	// Same inputs give bit-identical outputs (project rule).
	s := mustParse(t, "A -> B -> C")
	times := linspace(0, 30, 31)
	sim, _ := s.Simulate([]float64{0.3, 0.1}, []float64{1, 0, 0}, times, 0)
	obs := noisy(t, sim.C, []int{0, 1, 2}, nil, 0.01, 4)
	a, err := FitProfiles(s, times, obs, []int{0, 1, 2}, FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	b, _ := FitProfiles(s, times, obs, []int{0, 1, 2}, FitOptions{})
	for j := range a.K {
		if math.Float64bits(a.K[j]) != math.Float64bits(b.K[j]) || math.Float64bits(a.KStdErr[j]) != math.Float64bits(b.KStdErr[j]) {
			t.Errorf("run-to-run difference in step %d", j)
		}
	}
}

func TestFitBadInput(t *testing.T) {
	s := mustParse(t, "A -> B")
	times := linspace(0, 10, 5)
	good := mat.NewDense(5, 1, []float64{0, 0.3, 0.5, 0.6, 0.7})
	nan := mat.NewDense(5, 1, []float64{0, math.NaN(), 0.5, 0.6, 0.7})
	cases := []struct {
		name  string
		times []float64
		obs   *mat.Dense
		cols  []int
		opt   FitOptions
	}{
		{"times length", times[:4], good, []int{1}, FitOptions{}},
		{"columns length", times, good, []int{1, 0}, FitOptions{}},
		{"column range", times, good, []int{2}, FitOptions{}},
		{"NaN data", times, nan, []int{1}, FitOptions{}},
		{"nil data", times, nil, []int{1}, FitOptions{}},
		{"fixed without start", times, good, []int{1}, FitOptions{FixedK: []bool{true}}},
		{"zero start", times, good, []int{1}, FitOptions{InitialK: []float64{0}}},
		{"c0 length", times, good, []int{1}, FitOptions{C0: []float64{1}}},
		{"all zero c0", times, good, []int{1}, FitOptions{C0: []float64{0, 0}}},
		{"t0 after data", times, good, []int{1}, FitOptions{T0: 100}},
	}
	for _, tc := range cases {
		if _, err := FitProfiles(s, tc.times, tc.obs, tc.cols, tc.opt); err == nil {
			t.Errorf("%s: no error", tc.name)
		}
	}
	if _, _, err := FitData(s, times, mat.NewDense(5, 2, nil), FitOptions{Amplitudes: true}); err == nil {
		t.Error("FitData with Amplitudes: no error")
	}
	if _, err := AutoMap(s, times, mat.NewDense(5, 3, nil), FitOptions{}); err == nil {
		t.Error("AutoMap with more columns than species: no error")
	}
}

func BenchmarkSimulateFirstOrder(b *testing.B) {
	s := mustParse(b, "A -> B -> C -> D")
	times := linspace(0, 100, 200)
	for b.Loop() {
		if _, err := s.Simulate([]float64{0.3, 0.1, 0.02}, []float64{1, 0, 0, 0}, times, 0); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkSimulateMassAction(b *testing.B) {
	s := mustParse(b, "A + B -> C; C -> D; 2 D -> E")
	times := linspace(0, 10, 200)
	for b.Loop() {
		if _, err := s.Simulate([]float64{2, 0.7, 1.5}, []float64{1, 0.8, 0, 0, 0}, times, 0); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkFitProfiles(b *testing.B) {
	s := mustParse(b, "A -> B -> C")
	times := linspace(0, 40, 100)
	sim, _ := s.Simulate([]float64{0.5, 0.12}, []float64{1, 0, 0}, times, 0)
	obs := noisy(b, sim.C, []int{0, 1, 2}, nil, 0.005, 1)
	for b.Loop() {
		if _, err := FitProfiles(s, times, obs, []int{0, 1, 2}, FitOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}

func TestFitInitialConcentrations(t *testing.T) {
	// FitC0 recovers unknown starting concentrations of a bimolecular step (simulated truth).
	s := mustParse(t, "A + B -> C")
	k := []float64{0.9}
	c0 := []float64{1, 0.6, 0}
	times := linspace(0, 20, 50)
	sim, _ := s.Simulate(k, c0, times, 0)
	obs := noisy(t, sim.C, []int{0, 1, 2}, nil, 0.004, 8)
	r, err := FitProfiles(s, times, obs, []int{0, 1, 2}, FitOptions{C0: []float64{1.2, 0.5, 0}, FitC0: true})
	if err != nil {
		t.Fatal(err)
	}
	allFinite(t, r)
	within3SE(t, "c0 fit", r, k)
	for i := 0; i < 2; i++ {
		if z := math.Abs(r.C0[i]-c0[i]) / r.C0StdErr[i]; !(z <= 3) {
			t.Errorf("c0[%d] = %v ± %v, true %v", i, r.C0[i], r.C0StdErr[i], c0[i])
		}
	}
	if r.C0[2] != 0 || r.C0StdErr[2] != 0 {
		t.Errorf("zero initial concentration changed: %v", r.C0)
	}
}

func TestFitUnidentifiableStep(t *testing.T) {
	// Only A observed in A → B → C: k2 has no effect on the data (its Jacobian column is
	// zero), so the fit must warn instead of returning NaN or failing.
	s := mustParse(t, "A -> B -> C")
	times := linspace(0, 20, 30)
	sim, _ := s.Simulate([]float64{0.3, 0.1}, []float64{1, 0, 0}, times, 0)
	obs := noisy(t, sim.C, []int{0}, nil, 0.01, 2)
	r, err := FitProfiles(s, times, obs, []int{0}, FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	allFinite(t, r)
	if len(r.Warnings) == 0 {
		t.Error("no warning for an undetermined rate constant")
	}
	within3SE(t, "identifiable k1", &FitResult{K: r.K[:1], KStdErr: r.KStdErr[:1]}, []float64{0.3})
}

func TestAutoMapTieBreaking(t *testing.T) {
	// Parallel A → B, A → C: with free amplitudes B and C have the same shape
	// 1 − e^{−(k1+k2)t}, so assignments (B, C) and (C, B) fit equally well; the documented rule
	// keeps the lexicographically first.
	s := mustParse(t, "A -> B; A -> C")
	times := linspace(0, 20, 40)
	sim, _ := s.Simulate([]float64{0.3, 0.1}, []float64{1, 0, 0}, times, 0)
	obs := noisy(t, sim.C, []int{1, 2}, nil, 0.003, 6)
	cols, err := AutoMap(s, times, obs, FitOptions{Amplitudes: true})
	if err != nil {
		t.Fatal(err)
	}
	if cols[0] != 1 || cols[1] != 2 {
		t.Errorf("AutoMap = %v, want [1 2]", cols)
	}
}

// Five species in two subsystems, columns scrambled and scaled: AutoMap
// must recover the assignment (profiles from Bateman's solution, 1910, and
// first-order decay) while fitting only its few best-scoring candidates.
func TestAutoMapFiveSpecies(t *testing.T) {
	s := mustParse(t, "A -> B -> C; D -> E")
	times := linspace(0, 120, 40)
	c := mat.NewDense(len(times), 5, nil)
	for i, tt := range times {
		a, b, cc := bateman(0.05, 0.02, tt)
		d := math.Exp(-0.03 * tt)
		c.SetRow(i, []float64{a, b, cc, d, 1 - d})
	}
	want := []int{3, 0, 4, 2, 1}
	obs := noisy(t, c, want, []float64{1.3, 0.8, 2, 0.5, 1.1}, 0.003, 11)
	cols, err := AutoMap(s, times, obs, FitOptions{Amplitudes: true, C0: []float64{1, 0, 0, 1, 0}})
	if err != nil {
		t.Fatal(err)
	}
	for j := range want {
		if cols[j] != want[j] {
			t.Fatalf("AutoMap = %v, want %v", cols, want)
		}
	}
}

// A spectrum with row weight zero is left out of the data fit: the rate constants,
// their standard errors and the degrees of freedom equal those of the fit of the data
// without that row (definition of a weighted least-squares sum: a zero weight removes
// the term), however wrong the row's values are.
func TestFitDataZeroWeightRowIsLeftOut(t *testing.T) {
	s := mustParse(t, "A -> B")
	k := []float64{0.08}
	times := linspace(0, 60, 31)
	sim, err := s.Simulate(k, []float64{1, 0}, times, 0)
	if err != nil {
		t.Fatal(err)
	}
	const m = 40
	spec := mat.NewDense(m, 2, nil)
	for j := 0; j < m; j++ {
		x := float64(j)
		spec.Set(j, 0, math.Exp(-0.5*math.Pow((x-12)/4, 2)))
		spec.Set(j, 1, math.Exp(-0.5*math.Pow((x-27)/5, 2)))
	}
	var d mat.Dense
	d.Mul(sim.C, spec.T())
	rng := rand.New(rand.NewPCG(8, 2))
	n, _ := d.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, d.At(i, j)+0.003*rng.NormFloat64())
		}
	}
	const bad = 9
	keepTimes := append(append([]float64(nil), times[:bad]...), times[bad+1:]...)
	kept := mat.NewDense(n-1, m, nil)
	for i, at := 0, 0; i < n; i++ {
		if i != bad {
			kept.SetRow(at, d.RawRowView(i))
			at++
		}
	}
	ref, _, err := FitData(s, keepTimes, kept, FitOptions{InitialK: []float64{0.05}})
	if err != nil {
		t.Fatal(err)
	}
	for j := 0; j < m; j++ {
		d.Set(bad, j, d.At(bad, j)+0.5) // a spectrum nothing like the others
	}
	row := make([]float64, n)
	for i := range row {
		row[i] = 1
	}
	row[bad] = 0
	got, _, err := FitData(s, times, &d, FitOptions{InitialK: []float64{0.05}, RowWeights: row})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(got.K[0]-ref.K[0]) > 1e-6*ref.K[0] || math.Abs(got.KStdErr[0]-ref.KStdErr[0]) > 1e-4*ref.KStdErr[0] {
		t.Errorf("k %.8g ± %.6g with the row at weight zero, %.8g ± %.6g without the row", got.K[0], got.KStdErr[0], ref.K[0], ref.KStdErr[0])
	}
	if got.DegreesOfFreedom != ref.DegreesOfFreedom {
		t.Errorf("degrees of freedom %d, without the row %d", got.DegreesOfFreedom, ref.DegreesOfFreedom)
	}
}

// The block products of the residual sums are gonum's (reference library:
// Dense.Mul of C and Sᵀ) bit for bit, for 1 to 9 species and with zeros
// among the entries; the figures built on them (σ̂, the lag-1 correlation,
// every standard error) are then the numbers they were.
func TestResidualProductEqualsGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(41, 42))
	for q := 1; q <= 9; q++ {
		c, s := mat.NewDense(64, q, nil), mat.NewDense(151, q, nil)
		for _, a := range []*mat.Dense{c, s} {
			raw := a.RawMatrix().Data
			for i := range raw {
				if rng.IntN(5) > 0 {
					raw[i] = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(7)-3))
				}
			}
		}
		var want mat.Dense
		want.Mul(c, s.T())
		got := mat.NewDense(64, 151, nil)
		mulByTranspose(got, c, s)
		for i := 0; i < 64; i++ {
			for j := 0; j < 151; j++ {
				if math.Float64bits(got.At(i, j)) != math.Float64bits(want.At(i, j)) {
					t.Fatalf("q = %d, entry (%d, %d): %v, gonum %v", q, i, j, got.At(i, j), want.At(i, j))
				}
			}
		}
	}
}
