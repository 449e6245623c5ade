package pipeline

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// clippedSeries is A → B → C (Bateman 1910; k1 = 3·10⁻³, k2 = 10⁻³ s⁻¹) as
// single beams with noise constant in counts (σ_I = 4) on a source envelope
// peaking at 2·10⁴ counts at 1500 cm⁻¹, every beam and the blank clipped at
// a detector ceiling of ceil × the peak (min(I, ceiling): a saturated
// converter), and, when drift is not zero, a baseline quadratic in the axis
// growing linearly in time, drift·(t/t_end)·(1 + u + P₂(u)) absorbance on the
// axis scaled to u ∈ [−1, 1] (P₂ the Legendre polynomial, Abramowitz &
// Stegun 22.3.8).
func clippedSeries(t *testing.T, ceil, drift float64) *synth {
	t.Helper()
	s := makeBateman(t, 3e-3, 1e-3, 0, 31, 3)
	if drift != 0 {
		n, m := len(s.times), len(s.axis)
		tEnd := s.times[n-1]
		spectra := mat.NewDense(m, 4, nil)
		profiles := mat.NewDense(n, 4, nil)
		for j := 0; j < m; j++ {
			u := 2*float64(j)/float64(m-1) - 1
			row := append(mat.Row(nil, j, s.spectra), drift*(1+u+(1.5*u*u-0.5)))
			spectra.SetRow(j, row)
		}
		for i := 0; i < n; i++ {
			profiles.SetRow(i, append(mat.Row(nil, i, s.profiles), s.times[i]/tEnd))
		}
		s.spectra, s.profiles = spectra, profiles
	}
	solventBeams(s, 4, 0, 31)
	if drift != 0 {
		_, k := s.spectra.Dims()
		s.spectra = mat.DenseCopyOf(s.spectra.Slice(0, len(s.axis), 0, k-1))
		s.profiles = mat.DenseCopyOf(s.profiles.Slice(0, len(s.times), 0, k-1))
	}
	top := ceil * 2e4
	n, m := s.beams.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			s.beams.Set(i, j, math.Min(s.beams.At(i, j), top))
		}
	}
	for j, v := range s.blank {
		s.blank[j] = math.Min(v, top)
	}
	return s
}

// runClipped resolves a clippedSeries with --baseline auto, 3 spectra before
// the reaction and the model it was made with.
func runClipped(t *testing.T, s *synth) *Result {
	t.Helper()
	series, blank := s.write(t)
	st := NewSettings()
	st.Data, st.Blanks, st.Kind = []string{series}, []string{blank}, "single-beam"
	st.Pre, st.Model, st.T0 = 3, "A -> B -> C", "60"
	st.Report, st.Checks, st.Bands = "off", "off", "off"
	r, err := Run(st, nil)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// Beams clipped at a detector ceiling (97 % of the source's peak: 87 of 301
// channels at the ceiling in the blank and in the spectra where the species
// absorb little) carry no absorbance there and must be blind (the series' and
// the blank's points at the ceiling), and the data have no drift: the
// analytic truth is baseline order none. The baseline's F-test counted the
// channels blind in every spectrum as measured points fitted exactly (their
// residual zero, their degrees of freedom counted): on a series like this one
// (the trial's, 1551 channels, 289 of them at the ceiling in every spectrum)
// it chose a linear baseline at p = 0.0078, and two spectra came out at
// cosine 0.47 and 0.55 to the truth with the rate constants swapped. Now: no
// baseline, spectra at cosine ≥ 0.99 to the truth where light is measured,
// profiles ≥ 0.99, and each rate constant within 2 standard errors of the
// truth (the data fit's; a normal estimate lies within 2 standard errors 95 %
// of the time, common practice).
func TestClippedBeamsChooseNoBaseline(t *testing.T) {
	s := clippedSeries(t, 0.97, 0)
	r := runClipped(t, s)
	if r.Blind == nil || r.Blind.Count == 0 || !anyContains(r.Notes, "every spectrum") {
		t.Fatalf("no channel blind in every spectrum at the ceiling: %v %q", r.Blind, r.Notes)
	}
	t.Logf("blind %d points; baseline %s: %s", r.Blind.Count, baselineName(r.BaselineOrder), r.BaselineReason)
	if r.BaselineOrder != -1 {
		t.Errorf("baseline %s chosen on data without drift: %s", baselineName(r.BaselineOrder), r.BaselineReason)
	}
	lit := func(x float64) bool { return math.Abs(x-1500) > 90 }
	spec, prof := litCosines(s, r, lit)
	for j := range spec {
		t.Logf("species %d: spectrum cosine %.5f, profile cosine %.5f", j+1, spec[j], prof[j])
		if spec[j] < 0.99 || prof[j] < 0.99 {
			t.Errorf("species %d: spectrum cosine %.5f, profile cosine %.5f; want ≥ 0.99", j+1, spec[j], prof[j])
		}
	}
	if r.Kinetics == nil || r.Kinetics.Reported() == nil {
		t.Fatal("no kinetic fit")
	}
	fit := r.Kinetics.Reported().Fit
	for j, k := range []float64{3e-3, 1e-3} {
		within(t, r.Kinetics.Scheme.Steps[j].Text, fit.K[j], fit.KStdErr[j], k, 2)
	}
}

// The same clipped series with a true quadratic drift (0.02 absorbance times
// 1 + u + P₂(u) at the end, growing linearly in time) must still get a
// quadratic baseline: the offset, the slope and the curvature each stand out
// of the noise (the analytic truth is order 2), and leaving the blind points
// out of the test must not hide them.
func TestClippedBeamsKeepAQuadraticDrift(t *testing.T) {
	r := runClipped(t, clippedSeries(t, 0.97, 0.02))
	t.Logf("baseline %s: %s", baselineName(r.BaselineOrder), r.BaselineReason)
	if r.BaselineOrder != 2 {
		t.Errorf("baseline %s for a quadratic drift; want poly:2: %s", baselineName(r.BaselineOrder), r.BaselineReason)
	}
}

// Where the blank stands at the detector's ceiling but the sample's beams
// come under it, A = −log10(I/I_ceiling) is the true absorbance less
// δ_j = log10(I_blank/I_ceiling), one offset per channel, the same in every
// spectrum (Beer–Lambert: A = −log10(I/I₀); the beams are the same, only the
// blank differs). Closure absorbs it exactly: with Σ_k c_k = T in every
// spectrum, the constant column 1 = C 1/T lies in the span of the profiles,
// so the least-squares spectra of a channel on the profiles C, for any row
// weights, move by −δ_j/T each when the data move by −δ_j (C (S − δ1ᵀ/T)ᵀ =
// C Sᵀ − 1δᵀ), and their differences not at all. Checked on the channels
// where the blank is at the ceiling and the sample's beams come under it in
// at least half the spectra: those beams are data (not blind); every
// resolved spectrum there equals the weighted least-squares spectrum of the
// true absorbance (against the unclipped blank, the same noise draws) on the
// run's own profiles, less δ_j/T and raised by the least amount that makes
// every one non-negative, to rounding (1e-7 of the channel's largest, where
// the absorbance noise, about 10⁻⁴, is 10⁻³ of it or more); and
// the differences s_B − s_A and s_C − s_B over those channels have cosine
// ≥ 0.99 to the true ones (as the lit channels' spectra do in
// TestClippedBeamsChooseNoBaseline). Before, those channels were blind in
// every spectrum and the spectra not determined there.
func TestClippedBlankOffsetIsAbsorbed(t *testing.T) {
	const ceil = 0.97
	s := clippedSeries(t, ceil, 0)
	open := clippedSeries(t, 10, 0) // the same draws, nothing clipped
	r := runClipped(t, s)
	top := ceil * 2e4
	n, m := s.beams.Dims()
	// A channel whose reference spectrum (the first) is at the ceiling is
	// blind in every spectrum for another reason (the differences against
	// it are not known), so only the channels the run kept are checked;
	// before, it kept none.
	gone := r.Blind.Everywhere(m)
	var kept []int
	for j := 0; j < m; j++ {
		under := 0
		for i := 0; i < n; i++ {
			if s.beams.At(i, j) < top {
				under++
			}
		}
		if s.blank[j] >= top && 2*under >= n && !gone[j] {
			kept = append(kept, j)
		}
	}
	if len(kept) < 5 {
		t.Fatalf("%d channels with the blank at the ceiling and the sample under it kept: the case tests nothing", len(kept))
	}
	_, k := r.ALS.S.Dims()
	var gotDiff, wantDiff []float64
	perm := matchSpectra(t, s, r, func(j int) bool { return s.blank[j] < top })
	worst, lifted := 0.0, 0
	for _, j := range kept {
		for i := 0; i < n; i++ {
			if v := s.beams.At(i, j); v < top && r.Blind.Has(i, j) {
				t.Fatalf("channel %g, spectrum %d: beam %g under the ceiling %g is blind", s.axis[j], i, v, top)
			}
		}
		delta := math.Log10(open.blank[j] / top)
		ref := weightedSpectrumAt(r, open, j)
		lift := 0.0
		for a := range ref {
			ref[a] -= delta // T = 1
			lift = math.Max(lift, -ref[a])
		}
		if lift > 0 {
			lifted++
		}
		scale := 0.0
		for a := 0; a < k; a++ {
			scale = math.Max(scale, math.Abs(ref[a]+lift))
		}
		for a := 0; a < k; a++ {
			d := math.Abs(r.ALS.S.At(j, a) - (ref[a] + lift))
			worst = math.Max(worst, d/scale)
			if d > 1e-7*scale {
				t.Errorf("channel %g (δ = %.4g), component %d: %.10g, want %.10g (least squares on the run's profiles of the true absorbance less δ, raised by %.4g)", s.axis[j], delta, a+1, r.ALS.S.At(j, a), ref[a]+lift, lift)
			}
		}
		got := func(a int) float64 { return r.ALS.S.At(j, perm[a]) }
		want := func(a int) float64 { return s.spectra.At(j, a) }
		gotDiff = append(gotDiff, got(1)-got(0), got(2)-got(1))
		wantDiff = append(wantDiff, want(1)-want(0), want(2)-want(1))
	}
	c := Cosine(gotDiff, wantDiff)
	t.Logf("%d channels kept, %d raised to keep the spectra non-negative; largest departure from the closure identity %.2g of the channel's largest spectrum; differences at cosine %.5f to the truth", len(kept), lifted, worst, c)
	if c < 0.99 {
		t.Errorf("spectrum differences on the clipped blank's channels at cosine %.5f to the truth; want ≥ 0.99", c)
	}
	if !anyContains(r.Notes, "common to all species") {
		t.Errorf("no note on the offset the spectra share: %q", r.Notes)
	}
}

// matchSpectra pairs each true species with the resolved component whose
// spectrum is closest to it (cosine) on the channels use keeps.
func matchSpectra(t *testing.T, s *synth, r *Result, use func(j int) bool) []int {
	t.Helper()
	_, k := s.spectra.Dims()
	perm := make([]int, k)
	taken := map[int]bool{}
	for a := 0; a < k; a++ {
		best := -1.0
		for b := 0; b < k; b++ {
			var tv, gv []float64
			for j := range s.axis {
				if use(j) {
					tv, gv = append(tv, s.spectra.At(j, a)), append(gv, r.ALS.S.At(j, b))
				}
			}
			if c := Cosine(tv, gv); c > best {
				best, perm[a] = c, b
			}
		}
		if taken[perm[a]] || best < 0.99 {
			t.Fatalf("species %d: best match component %d at cosine %.4f", a+1, perm[a]+1, best)
		}
		taken[perm[a]] = true
	}
	return perm
}

// weightedSpectrumAt is the least-squares spectrum of channel j on the run's
// profiles of the absorbance against open's blank, −log10(I/I_blank), over
// the spectra the run measured there, with the run's row weights (normal
// equations solved by QR of the weighted rows).
func weightedSpectrumAt(r *Result, open *synth, j int) []float64 {
	n, k := r.ALS.C.Dims()
	var rows []int
	for i := 0; i < n; i++ {
		if !r.Blind.Has(i, j) {
			rows = append(rows, i)
		}
	}
	a := mat.NewDense(len(rows), k, nil)
	b := mat.NewVecDense(len(rows), nil)
	for q, i := range rows {
		w := 1.0
		if r.Weights != nil && r.Weights.Row != nil {
			w = math.Sqrt(r.Weights.Row[i])
		}
		for c := 0; c < k; c++ {
			a.Set(q, c, w*r.ALS.C.At(i, c))
		}
		b.SetVec(q, -w*math.Log10(open.beams.At(i, j)/open.blank[j]))
	}
	var x mat.VecDense
	if err := x.SolveVec(a, b); err != nil {
		return make([]float64, k)
	}
	return x.RawVector().Data
}
