package pipeline

import (
	"io"
	"math"
	"strconv"
	"strings"
	"testing"
)

// preRepeatsSeries is makeBateman's A → B → C (k 2·10⁻³ and 6·10⁻⁴ s⁻¹,
// Bateman 1910, from t₀ = 60 s: the spectra at 0, 30 and 60 s are repeats of
// the starting state) as single beams with detector noise of sigI counts,
// constant in counts (countsNoise). Spectrum gas (≥ 0) also carries ten gas
// lines of absorbance 0.012–0.034, Gaussians 1.5 cm⁻¹ wide (the narrowest a
// condensed sample lacks: common practice). It returns the series and blank
// files.
func preRepeatsSeries(t *testing.T, sigI float64, gas int) (series, blank string) {
	t.Helper()
	s := makeBateman(t, 2e-3, 6e-4, 0, 5, 3)
	lines := []float64{1790, 1750, 1698, 1652, 1558, 1540, 1508, 1472, 1436, 1396}
	countsNoise(s, sigI, 5, func(i, j int) float64 {
		if i != gas {
			return 0
		}
		v := 0.0
		for q, c := range lines {
			d := (s.axis[j] - c) / 1.5
			v += 0.6 * (0.02 + 0.004*float64(q)) * math.Exp(-0.5*d*d)
		}
		return v
	})
	return s.write(t)
}

// runPreRepeats resolves the series with --pre 3 and the model A -> B -> C,
// dropping the spectra at the times drop names.
func runPreRepeats(t *testing.T, series, blank string, drop ...string) *Result {
	t.Helper()
	st := NewSettings()
	st.Data, st.Kind, st.Blanks, st.Pre = []string{series}, "single-beam", []string{blank}, 3
	st.Model, st.Drops = "A -> B -> C", drop
	st.Report, st.Checks, st.Bands = "off", "off", "off"
	r, err := Run(st, io.Discard)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// checkPreRepeatsNoise checks a run of preRepeatsSeries against its truth:
// the detector noise is the sigI counts simulated (the definition of the
// noise added; within 15 %, the estimator's error from one or two steps of
// 301 channels), the right model fits to about that noise (√(χ²/ν) ≤ 1.1),
// no warning says it misfits, and no warning names a spectrum gone (set
// aside, dropped) as if it were among the repeats.
func checkPreRepeatsNoise(t *testing.T, name string, r *Result, sigI float64, gone ...string) {
	t.Helper()
	level := r.Experiments[0].Assembled.Noise.Level
	q, _ := residualToNoise(r)
	t.Logf("%s: detector noise %.4g counts (%.4g added), fit %.3g × the noise: %s", name, level, sigI, q, r.NoiseSource)
	if math.Abs(level/sigI-1) > 0.15 {
		t.Errorf("%s: detector noise %.4g counts; %g were added", name, level, sigI)
	}
	if q > 1.1 {
		t.Errorf("%s: the right model fits %.3g times the noise; want about 1", name, q)
	}
	for _, w := range r.Warnings {
		if strings.Contains(w, "the fit's residual is") {
			t.Errorf("%s: a misfit warning on the right model: %s", name, w)
		}
		for _, g := range gone {
			if strings.Contains(w, "(t = "+g+" s), counted as before the reaction") {
				t.Errorf("%s: a warning names the spectrum at %s s, which is not in the fit: %s", name, g, w)
			}
		}
	}
}

// A pre-reaction repeat with gas lines, set aside by the outlier screen:
// the noise measured again without it took both steps of the three repeats
// away, fell to the estimator's floor (5·10⁻¹⁰ for 8·10⁻⁵ on a field series)
// and the fit read 1.8·10⁵ times the noise. The step is now taken between
// the two repeats kept.
func TestNoiseWithAPreRepeatSetAside(t *testing.T) {
	const sigI = 8
	series, blank := preRepeatsSeries(t, sigI, 1)
	r := runPreRepeats(t, series, blank)
	if len(r.SetAside) != 1 || r.SetAside[0].Row != 1 {
		t.Fatalf("set aside %v; want the spectrum with gas lines (row 1), the case this tests", r.SetAside)
	}
	checkPreRepeatsNoise(t, "gas lines at 30 s", r, sigI, "30")
}

// A pre-reaction repeat dropped by hand (--drop) had its row filled from its
// neighbours before its noise was measured again: the first, a copy of the
// second, made a step of zero (σ 400 times too large on a field series, as
// the ratio of a measure with that zero to one without), the middle a step
// of nothing (σ 10⁻⁹), the last half a step across the reaction's start, and
// the step check named the dropped spectrum. Each is now left out of the
// steps; with two of the three dropped none is left, and the noise comes
// from second differences in time, with a note that says why; with every
// other spectrum dropped as well no difference is left at all, and the
// noise measured with them stays, with a note that says so.
func TestNoiseWithPreRepeatsDropped(t *testing.T) {
	const sigI = 8
	series, blank := preRepeatsSeries(t, sigI, -1)
	alternate := []string{"30", "60"}
	for tm := 120; tm <= 3600; tm += 60 {
		alternate = append(alternate, strconv.Itoa(tm))
	}
	for _, c := range []struct {
		drop []string
		note string // a note says so ("": no note on the noise)
	}{
		{[]string{"0"}, ""},
		{[]string{"30"}, ""},
		{[]string{"60"}, ""},
		{[]string{"30", "60"}, "so it is measured from second differences in time of the spectra kept"},
		{alternate, "no three spectra in a row to measure it on without them, so it is the one measured with them"},
	} {
		r := runPreRepeats(t, series, blank, c.drop...)
		name := "--drop " + strings.Join(c.drop[:min(len(c.drop), 3)], " --drop ")
		checkPreRepeatsNoise(t, name, r, sigI, c.drop...)
		got := ""
		for _, n := range r.Notes {
			if strings.HasPrefix(n, "noise: ") {
				got = n
			}
		}
		if c.note == "" && got != "" || !strings.Contains(got, c.note) {
			t.Errorf("%s: the note on the noise measured again is %q; want one that says %q", name, got, c.note)
		}
		if len(c.drop) == 2 && !strings.HasPrefix(r.Experiments[0].Assembled.Noise.Source, "second differences in time") {
			t.Errorf("%s: noise source %q; want the second differences it is measured from", name, r.Experiments[0].Assembled.Noise.Source)
		}
	}
}
