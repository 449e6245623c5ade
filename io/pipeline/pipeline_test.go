package pipeline

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/demo"
	"github.com/bandsolve/bandsolve/io/output"
	"gonum.org/v1/gonum/mat"
)

// synth is simulated data: single beams from known profiles and spectra.
type synth struct {
	axis, times []float64
	spectra     *mat.Dense // m × k
	profiles    *mat.Dense // n × k
	beams       *mat.Dense // n × m
	blank       []float64
}

func gaussian(axis []float64, centre, width, height float64) []float64 {
	out := make([]float64, len(axis))
	for i, x := range axis {
		d := (x - centre) / width
		out[i] = height * math.Exp(-0.5*d*d)
	}
	return out
}

func add(a []float64, bs ...[]float64) []float64 {
	out := append([]float64(nil), a...)
	for _, b := range bs {
		for i := range out {
			out[i] += b[i]
		}
	}
	return out
}

// makeBateman builds A → B → C data from the analytic solution (Bateman
// 1910) with overlapping bands that each keep a selective shoulder, so that
// non-negativity and closure make the resolution unique.
func makeBateman(t *testing.T, k1, k2, relNoise float64, seed uint64, species int) *synth {
	t.Helper()
	s := &synth{}
	for x := 1800.0; x >= 1200; x -= 2 {
		s.axis = append(s.axis, x)
	}
	for tm := 0.0; tm <= 3600; tm += 30 {
		s.times = append(s.times, tm)
	}
	n, m := len(s.times), len(s.axis)
	base := make([]float64, m)
	sp := [][]float64{
		add(base, gaussian(s.axis, 1700, 14, 0.5), gaussian(s.axis, 1450, 20, 0.25)),
		add(base, gaussian(s.axis, 1660, 14, 0.45), gaussian(s.axis, 1400, 18, 0.3), gaussian(s.axis, 1700, 20, 0.1)),
		add(base, gaussian(s.axis, 1620, 12, 0.4), gaussian(s.axis, 1300, 16, 0.35), gaussian(s.axis, 1400, 25, 0.08)),
	}[:species]
	s.spectra = mat.NewDense(m, species, nil)
	for j, v := range sp {
		s.spectra.SetCol(j, v)
	}
	s.profiles = mat.NewDense(n, species, nil)
	const t0 = 60
	for i, tm := range s.times {
		a, b, c := demo.Bateman(k1, k2, math.Max(0, tm-t0))
		if species == 2 {
			s.profiles.SetRow(i, []float64{a, b + c})
		} else {
			s.profiles.SetRow(i, []float64{a, b, c})
		}
	}
	rng := rand.New(rand.NewPCG(seed, 99))
	env := make([]float64, m)
	for j, x := range s.axis {
		u := (x - 1500) / 500
		env[j] = 2e4 * math.Exp(-u*u)
	}
	// The blank is the mean of 64 co-added scans, so its noise is 8 times
	// lower (√64; common practice: a background is averaged longer than a
	// sample scan). Its noise is one fixed pattern in every absorbance
	// spectrum, which closure lets the model fold into the spectra.
	s.blank = make([]float64, m)
	for j := range env {
		s.blank[j] = env[j] * (1 + relNoise/8*rng.NormFloat64())
	}
	var a mat.Dense
	a.Mul(s.profiles, s.spectra.T())
	s.beams = mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			s.beams.Set(i, j, env[j]*math.Pow(10, -a.At(i, j))*(1+relNoise*rng.NormFloat64()))
		}
	}
	return s
}

func (s *synth) write(t *testing.T) (series, blank string) {
	t.Helper()
	dir := t.TempDir()
	head := []string{"wavenumber"}
	for _, tm := range s.times {
		head = append(head, output.Float(tm))
	}
	tab := output.Table{Header: head}
	bl := output.Table{Header: []string{"wavenumber", "intensity"}}
	for j, x := range s.axis {
		row := []string{output.Float(x)}
		for i := range s.times {
			row = append(row, output.Float(s.beams.At(i, j)))
		}
		tab.Rows = append(tab.Rows, row)
		bl.Rows = append(bl.Rows, []string{output.Float(x), output.Float(s.blank[j])})
	}
	series, blank = filepath.Join(dir, "series.csv"), filepath.Join(dir, "blank.csv")
	if err := os.WriteFile(series, tab.CSV(), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(blank, bl.CSV(), 0o644); err != nil {
		t.Fatal(err)
	}
	return series, blank
}

// bestCosines matches each true column to the resolved column most like it.
func bestCosines(truth, got *mat.Dense) []float64 {
	_, k := truth.Dims()
	_, kg := got.Dims()
	out := make([]float64, k)
	for j := 0; j < k; j++ {
		tc := mat.Col(nil, j, truth)
		for c := 0; c < kg; c++ {
			out[j] = math.Max(out[j], Cosine(tc, mat.Col(nil, c, got)))
		}
	}
	return out
}

// checkRecovered fails t for every true spectrum or profile whose best
// match among the resolved ones has a cosine below min.
func checkRecovered(t *testing.T, spectra, profiles *mat.Dense, r *Result, min float64) {
	t.Helper()
	for _, side := range []struct {
		what       string
		truth, got *mat.Dense
	}{{"spectrum", spectra, r.ALS.S}, {"profile", profiles, r.ALS.C}} {
		for j, c := range bestCosines(side.truth, side.got) {
			if c < min {
				t.Errorf("%s %d: cosine %.5f < %g", side.what, j+1, c, min)
			}
		}
	}
}

// Species mode on data built from the analytic A → B → C solution. The
// run lasts until B has all but gone (b < 0.3 %): while B is left at the end,
// C's spectrum may borrow some of B's and stay feasible (rotational
// ambiguity, Tauler 2001), so no method could promise the truth. Then: the
// resolved spectra and profiles must match the truth (cosine ≥ 0.999, the
// issue's acceptance level) and the lack of fit must sit at the noise level
// (expected ‖E‖² = σ²·(nm − k(n+m−k)) for a rank-k least-squares fit: degrees
// of freedom of the residual, common practice).
func TestSpeciesModeRecoversBateman(t *testing.T) {
	d := makeBateman(t, 6e-3, 2e-3, 2e-4, 1, 3)
	series, blank := d.write(t)
	s := NewSettings()
	s.Data, s.Kind, s.Blanks, s.Pre = []string{series}, "single-beam", []string{blank}, 3
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.Mode.String() != "species" || r.Rank.Estimate != 3 || r.Components != 3 {
		t.Fatalf("mode %s, rank %d, components %d; want species, 3, 3 (%s)", r.Mode, r.Rank.Estimate, r.Components, r.Rank.Reason)
	}
	checkRecovered(t, d.spectra, d.profiles, r, 0.999)
	if r.LackOfFit > 1.3*r.NoiseLOF || r.LackOfFit < 0.7*r.NoiseLOF {
		t.Errorf("lack of fit %.4g %% is not at the noise level %.4g %%", r.LackOfFit, r.NoiseLOF)
	}
	// Closure (mass balance): every row sums to 1 exactly, solved jointly.
	n, _ := r.ALS.C.Dims()
	for i := 0; i < n; i++ {
		if sum := floatsSum(r.ALS.C.RawRowView(i)); math.Abs(sum-1) > 1e-9 {
			t.Fatalf("row %d sums to %v, closure asks 1", i, sum)
		}
	}
	// The same run twice gives identical numbers (determinism rule).
	r2, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !mat.Equal(r.ALS.S, r2.ALS.S) || !mat.Equal(r.ALS.C, r2.ALS.C) {
		t.Error("two runs on the same input differ")
	}
}

func floatsSum(x []float64) float64 {
	s := 0.0
	for _, v := range x {
		s += v
	}
	return s
}

// Reactions mode, one reaction A → B from difference spectra only: the rank
// is 1 (mass balance: ΔA = ξ(t)(s_B − s_A), rank 1 for two species — a
// reaction-invariant result), and the reaction spectrum is s_B − s_A with
// its formed band positive and consumed band negative.
func TestReactionsModeOneReaction(t *testing.T) {
	d := makeBateman(t, 2e-3, 1e-9, 2e-4, 2, 2)
	series, _ := d.write(t)
	s := NewSettings()
	s.Data, s.Kind = []string{series}, "single-beam"
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.Mode.String() != "reactions" || r.Rank.Estimate != 1 {
		t.Fatalf("mode %s rank %d (%s); want reactions, 1 — the reference's own noise must not count", r.Mode, r.Rank.Estimate, r.Rank.Reason)
	}
	// The reference's noise, −log10 of one noise draw in every row, has
	// singular value ≈ σ√(nm), far above the noise edge σ(√n+√m): it must be
	// recognised and explained, not silently dropped (PRIMER §1: the fixed
	// pattern is flat in time and white across the axis).
	if r.Rank.ReferencePatternFactor < 0 {
		t.Errorf("the reference-noise pattern was not recognised (%s)", r.Rank.Reason)
	}
	if !anyContains(r.Advice, "reference spectrum's own noise") {
		t.Errorf("advice %q does not explain the reference-noise factor", r.Advice)
	}
	want := add(mat.Col(nil, 1, d.spectra))
	sa := mat.Col(nil, 0, d.spectra)
	for i := range want {
		want[i] -= sa[i]
	}
	if c := Cosine(want, mat.Col(nil, 0, r.ALS.S)); c < 0.999 {
		t.Errorf("reaction spectrum cosine with s_B − s_A = %.5f < 0.999", c)
	}
	// Extent is zero at the reference and never negative.
	if r.ALS.C.At(0, 0) != 0 {
		t.Errorf("extent at the reference = %v, want 0", r.ALS.C.At(0, 0))
	}
	// ξ(t) = 1 − e^{−k(t−t0)} up to scale (first order, analytic).
	n, _ := r.ALS.C.Dims()
	xi := make([]float64, n)
	for i, tm := range d.times {
		xi[i] = 1 - math.Exp(-2e-3*math.Max(0, tm-60))
	}
	if c := Cosine(xi, mat.Col(nil, 0, r.ALS.C)); c < 0.999 {
		t.Errorf("extent cosine with 1 − e^{−kt} = %.5f", c)
	}
}

// Reactions mode, A → B → C: difference data has rank 2 (two independent
// reactions). Extents alone are rotationally ambiguous (X ≥ 0 with free R),
// so the check is on what is determined: the resolved reaction spectra span
// the true ones (sB − sA, sC − sB), and the fit is at the noise level.
func TestReactionsModeTwoReactions(t *testing.T) {
	d := makeBateman(t, 3e-3, 1e-3, 2e-4, 3, 3)
	series, _ := d.write(t)
	s := NewSettings()
	s.Data, s.Kind, s.Pre = []string{series}, "single-beam", 3
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.Mode.String() != "reactions" || r.Rank.Estimate != 2 {
		t.Fatalf("mode %s rank %d; want reactions, 2 (%s)", r.Mode, r.Rank.Estimate, r.Rank.Reason)
	}
	m, _ := d.spectra.Dims()
	basis := mat.NewDense(m, 2, nil)
	for i := 0; i < m; i++ {
		basis.Set(i, 0, d.spectra.At(i, 1)-d.spectra.At(i, 0))
		basis.Set(i, 1, d.spectra.At(i, 2)-d.spectra.At(i, 1))
	}
	var qr mat.QR
	qr.Factorize(basis)
	for j := 0; j < 2; j++ {
		col := mat.NewVecDense(m, mat.Col(nil, j, r.ALS.S))
		var coef, proj mat.VecDense
		if err := qr.SolveVecTo(&coef, false, col); err != nil {
			t.Fatal(err)
		}
		proj.MulVec(basis, &coef)
		proj.SubVec(col, &proj)
		if rel := mat.Norm(&proj, 2) / mat.Norm(col, 2); rel > 0.02 {
			t.Errorf("reaction spectrum %d lies %.3f outside the span of the true reaction spectra", j+1, rel)
		}
	}
	if r.LackOfFit > 1.3*r.NoiseLOF {
		t.Errorf("lack of fit %.4g %% above noise level %.4g %%", r.LackOfFit, r.NoiseLOF)
	}
}

// Identical single beams: nothing happened. Rank 0, said in words, no error
// (common practice: a ratio of identical beams is a flat line at 0).
func TestNoChangeIsNotAnError(t *testing.T) {
	d := makeBateman(t, 1e-3, 1e-3, 0, 4, 3)
	n, m := d.beams.Dims()
	for i := 1; i < n; i++ {
		for j := 0; j < m; j++ {
			d.beams.Set(i, j, d.beams.At(0, j))
		}
	}
	series, _ := d.write(t)
	s := NewSettings()
	s.Data, s.Kind = []string{series}, "single-beam"
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.Rank.Estimate != 0 || r.Components != 0 || r.ALS != nil {
		t.Fatalf("rank %d components %d; want 0 and no resolution", r.Rank.Estimate, r.Components)
	}
	found := false
	for _, note := range r.Notes {
		if len(note) > 9 && note[:9] == "no change" {
			found = true
		}
	}
	if !found {
		t.Errorf("notes %q do not say that nothing changed", r.Notes)
	}
}

// Reactions mode must not drift into a two-factor degeneracy (two nearly
// equal extents with huge, cancelling spectra — a known failure of
// alternating least squares, Harshman & Lundy 1984, from memory). On the
// demo's difference data each reaction spectrum must stay the size of the
// data (common practice: a reaction spectrum at extent 1 cannot exceed the
// largest absorbance change by orders of magnitude) and the extents must
// stay distinct.
func TestReactionsModeNoDegeneracy(t *testing.T) {
	s := demoDifferenceSettings(t)
	s.Bands = "off"
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.Mode.String() != "reactions" || r.Components != 2 {
		t.Fatalf("mode %s components %d; want reactions, 2", r.Mode, r.Components)
	}
	largest := 0.0
	n, m := r.D.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			largest = math.Max(largest, math.Abs(r.D.At(i, j)))
		}
	}
	for j := 0; j < 2; j++ {
		if mx := floatsMaxAbs(mat.Col(nil, j, r.ALS.S)); mx > 5*largest {
			t.Errorf("reaction spectrum %d reaches %.3g, the data only %.3g: degenerate", j+1, mx, largest)
		}
	}
	if c := Cosine(mat.Col(nil, 0, r.ALS.C), mat.Col(nil, 1, r.ALS.C)); c > 0.99 {
		t.Errorf("extents have cosine %.5f: degenerate pair", c)
	}
	if r.LackOfFit > 1.3*r.NoiseLOF {
		t.Errorf("lack of fit %.4g %% above the noise level %.4g %%", r.LackOfFit, r.NoiseLOF)
	}
}

func floatsMaxAbs(x []float64) float64 {
	m := 0.0
	for _, v := range x {
		m = math.Max(m, math.Abs(v))
	}
	return m
}

// Difference data with free-sign reaction spectra and only X ≥ 0 leaves the
// rotation unbounded (two reactions: Lawton & Sylvestre 1971 give a bounded
// region only when both sides are non-negative). The summary must say so in
// words instead of printing the search's stopping point as a bound.
func TestUnboundedBandsAreSaid(t *testing.T) {
	s := demoDifferenceSettings(t)
	s.Checks = "off"
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !hasWarning(r, "is unbounded") {
		t.Errorf("no warning that the reaction bands are unbounded: %q", r.Warnings)
	}
}

// Absorbance given without --kind is read as single beams; that must not pass
// silently. Values all within −1…5 are absorbance-like (common practice:
// detector single beams are counts far above that), so a warning names the
// flag to give.
func TestAbsorbanceWithoutKindWarns(t *testing.T) {
	d := makeBateman(t, 3e-3, 1e-3, 0, 5, 3)
	var a mat.Dense
	a.Mul(d.profiles, d.spectra.T())
	n, m := a.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			a.Set(i, j, a.At(i, j)+0.05) // a baseline keeps every value positive
		}
	}
	d.beams = &a
	series, _ := d.write(t)
	s := NewSettings()
	s.Data = []string{series}
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !hasWarning(r, "--kind absorbance") {
		t.Errorf("absorbance read as single beams without a warning: %q", r.Warnings)
	}
	// Real single beams (the same test's Bateman beams) give no such warning.
	d2 := makeBateman(t, 3e-3, 1e-3, 2e-4, 5, 3)
	series2, _ := d2.write(t)
	s2 := NewSettings()
	s2.Data = []string{series2}
	r2, err := Run(s2, nil)
	if err != nil {
		t.Fatal(err)
	}
	if hasWarning(r2, "--kind absorbance") {
		t.Errorf("single beams flagged as absorbance: %q", r2.Warnings)
	}
}

// Several experiments: the noise comes from the pre-reaction spectra of all
// of them (successive differences, variance 2σ²). Absorbance noise from a
// relative intensity noise ε is ε/ln 10 (propagation of error through
// A = −log10 I, PRIMER §1); the estimate must be within 10 % of it.
func TestNoiseFromEveryExperiment(t *testing.T) {
	const rel = 2e-4
	a := makeBateman(t, 3e-3, 1e-3, rel, 11, 3)
	b := makeBateman(t, 3e-3, 1e-3, rel, 12, 3)
	sa, blank := a.write(t)
	sb, _ := b.write(t)
	s := NewSettings()
	s.Data, s.Blanks, s.Pre, s.Bands, s.Checks = []string{sa, sb}, []string{blank}, 3, "off", "off"
	s.Closure = "1"
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(r.NoiseSource, "pre-reaction") {
		t.Errorf("σ from %q", r.NoiseSource)
	}
	// Each experiment's own estimate is named, not the first's as the whole's.
	if !strings.Contains(r.NoiseSource, "experiment 1: ") || !strings.Contains(r.NoiseSource, "experiment 2: ") {
		t.Errorf("σ from %q: want each experiment's estimate named", r.NoiseSource)
	}
	want := rel / math.Ln10
	if math.Abs(r.NoiseSigma-want) > 0.1*want {
		t.Errorf("σ = %.4g, want %.4g ± 10 %%", r.NoiseSigma, want)
	}
	if r.Rank.Estimate != 3 {
		t.Errorf("rank %d of two A → B → C runs, want 3", r.Rank.Estimate)
	}
}

// demoDifferenceSettings: the demo's single beams without their blank, so
// difference spectra (reactions mode), with the demo's pre-reaction count.
func demoDifferenceSettings(t *testing.T) *Settings {
	t.Helper()
	truth, dir := writeDemo(t)
	s := demoSettings(dir, false)
	s.Model, s.T0, s.Pre = "", "", truth.Pre
	return s
}

// anyContains says whether any line holds part.
func anyContains(lines []string, part string) bool {
	for _, l := range lines {
		if strings.Contains(l, part) {
			return true
		}
	}
	return false
}
