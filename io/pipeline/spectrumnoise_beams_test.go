package pipeline

import (
	"io"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestSingleBeamsOwnNoiseLevels: single beams whose detector noise falls
// during the run, as when more scans are co-added at longer intervals: 30
// counts, then 21.2 from 900 s and 15 from 1800 s (each step √2, the noise
// of twice the scans; common practice), A -> B (k = 2·10⁻³ s⁻¹, Bateman's
// solution), --pre 3. Measured from the pre-reaction repeats alone, the
// detector noise is the first level's, and every later spectrum's is taken
// as that: the fit read 0.75 times the noise and a warning blamed --pre
// ("probably changed already"). Each spectrum's own level is measured on
// the beams as on absorbance input (spectra.measureSpectrumNoise): the
// weights follow it, and the fit reads about the noise: the residual over
// the levels put in is 1 by the definition of the noise added.
func TestSingleBeamsOwnNoiseLevels(t *testing.T) {
	// makeBateman's bands and times on an axis of 601 points: a level is
	// measured per spectrum from 400 channels or more.
	s := &synth{}
	for x := 1800.0; x >= 1200; x-- {
		s.axis = append(s.axis, x)
	}
	for tm := 0.0; tm <= 3600; tm += 30 {
		s.times = append(s.times, tm)
	}
	s.spectra = mat.NewDense(len(s.axis), 2, nil)
	s.spectra.SetCol(0, add(gaussian(s.axis, 1700, 14, 0.5), gaussian(s.axis, 1450, 20, 0.25)))
	s.spectra.SetCol(1, add(gaussian(s.axis, 1660, 14, 0.45), gaussian(s.axis, 1400, 18, 0.3), gaussian(s.axis, 1700, 20, 0.1)))
	s.profiles = mat.NewDense(len(s.times), 2, nil)
	for i, tm := range s.times {
		a := math.Exp(-2e-3 * math.Max(0, tm-60))
		s.profiles.SetRow(i, []float64{a, 1 - a})
	}
	s.beams = mat.NewDense(len(s.times), len(s.axis), nil)
	s.blank = make([]float64, len(s.axis))
	level := func(tm float64) float64 {
		switch {
		case tm >= 1800:
			return 15
		case tm >= 900:
			return 30 / math.Sqrt2
		}
		return 30
	}
	rng := rand.New(rand.NewPCG(3, 7))
	n, m := len(s.times), len(s.axis)
	env := make([]float64, m)
	for j, x := range s.axis {
		u := (x - 1500) / 400
		env[j] = 2e4 * math.Exp(-u*u)
		s.blank[j] = env[j] + 30.0/8*rng.NormFloat64()
	}
	var a mat.Dense
	a.Mul(s.profiles, s.spectra.T())
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			s.beams.Set(i, j, env[j]*math.Pow(10, -a.At(i, j))+level(s.times[i])*rng.NormFloat64())
		}
	}
	series, blank := s.write(t)
	st := NewSettings()
	st.Data, st.Kind, st.Blanks, st.Pre, st.Model = []string{series}, "single-beam", []string{blank}, 3, "A -> B"
	st.Report, st.Checks, st.Bands = "off", "off", "off"
	r, err := Run(st, io.Discard)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("fit %.4g × the noise; weights per spectrum %v; %q", r.ResidualToNoise, weightsPerSpectrum(r), spectrumNoiseNotes(r))
	if !weightsPerSpectrum(r) {
		t.Error("the spectra's own noise levels were not followed")
	}
	if q := r.ResidualToNoise; q < 0.9 || q > 1.2 {
		t.Errorf("fit %.3g × the noise; with the levels put in followed, want about 1", q)
	}
	for _, w := range r.Warnings {
		if strings.Contains(w, "probably changed already") {
			t.Errorf("the falling noise is blamed on --pre: %s", w)
		}
	}
	for _, note := range spectrumNoiseNotes(r) {
		if !strings.Contains(note, "detector noise") {
			t.Errorf("the spectra's levels are not said in the detector's units: %s", note)
		}
	}
}
