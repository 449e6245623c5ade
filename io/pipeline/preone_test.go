package pipeline

import (
	"strings"
	"testing"
)

// --pre 1 names one spectrum before the reaction: the noise estimate from
// such spectra takes successive differences, which need two (a single
// spectrum has no difference; the estimator's definition, σ² = Var(a_i −
// a_{i−1})/2). With the first spectrum as the reference, its other roles
// are the reference's already, so the run must equal one without --pre,
// and say so in one note instead of nothing.
func TestPreOneSaysWhatItDoes(t *testing.T) {
	d := makeBateman(t, 3e-3, 1e-3, 2e-4, 31, 3)
	series, blank := d.write(t)
	run := func(pre int) *Result {
		s := NewSettings()
		s.Data, s.Blanks, s.Kind, s.Pre = []string{series}, []string{blank}, "single-beam", pre
		s.Components, s.Bands, s.Checks, s.Report = "3", "off", "off", "off"
		r, err := Run(s, nil)
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	r0, r1 := run(0), run(1)
	var said []string
	for _, n := range r1.Notes {
		if strings.Contains(n, "--pre 1") {
			said = append(said, n)
		}
	}
	if len(said) != 1 || !strings.Contains(said[0], "needs at least 2") || !strings.Contains(said[0], "the results are those without --pre") {
		t.Errorf("--pre 1 notes %q, want one saying the noise needs 2 and the results are unchanged", said)
	}
	for _, n := range r0.Notes {
		if strings.Contains(n, "--pre") {
			t.Errorf("a run without --pre notes %q", n)
		}
	}
	if r1.NoiseSigma != r0.NoiseSigma || r1.NoiseSource != r0.NoiseSource || r1.LackOfFit != r0.LackOfFit {
		t.Errorf("--pre 1: σ %g (%s), lack of fit %g; without: σ %g (%s), lack of fit %g; the note says they are the same",
			r1.NoiseSigma, r1.NoiseSource, r1.LackOfFit, r0.NoiseSigma, r0.NoiseSource, r0.LackOfFit)
	}
}
