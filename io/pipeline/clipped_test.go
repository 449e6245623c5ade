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
