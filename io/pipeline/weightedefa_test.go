package pipeline

import (
	"math"
	"testing"
)

// windowSeries: A → B of zero order from t0 = 60 s, [A] = 1 − k(t − t0)
// until A is gone at t0 + 1/k = 2460 s and [B] = 1 − [A] (zero-order
// kinetics, common practice for a saturated catalyst), and a third
// species C added at 1800 s ([C] = 0.5 from then on); single beams with
// noise constant in counts and a solvent band of absorbance 2.
func windowSeries(t *testing.T) (*synth, [3][2]int) {
	s := makeBateman(t, 3e-3, 1e-3, 0, 5, 3)
	const t0, k, tAdd = 60.0, 1.0 / 2400, 1800.0
	n := len(s.times)
	truth := [3][2]int{{0, -1}, {-1, n - 1}, {-1, n - 1}}
	for i, tm := range s.times {
		a := 1.0
		if tm > t0 {
			a = math.Max(0, 1-k*(tm-t0))
		}
		c := 0.0
		if tm >= tAdd {
			c = 0.5 * math.Exp(-(tm-tAdd)/1200)
		}
		s.profiles.SetRow(i, []float64{a, 1 - a, c})
		if a > 0 {
			truth[0][1] = i
		}
		if a < 1 && truth[1][0] < 0 {
			truth[1][0] = i
		}
		if c > 0 && truth[2][0] < 0 {
			truth[2][0] = i
		}
	}
	solventBeams(s, 4, 2, 7)
	return s, truth
}

// TestWeightedEFAWindows: evolving factor analysis finds where each species is present
// from the singular values of growing blocks of spectra, a component being present where
// its value stands above the noise (Maeder, Anal. Chem. 1987; Keller & Massart, Anal.
// Chim. Acta 1991). The truth comes from the profiles themselves (windowSeries: A present
// up to the last spectrum before 2460 s, B from the first after 60 s, C from 1800 s).
// With noise constant in counts the solvent band's channels are 100× noisier than the
// rest (σ_A = σ_I/(I ln 10), I 1 % of the light; PRIMER §8): EFA of the noise-scaled
// matrix √A D √B (Wentzell et al., J. Chemometrics 1997), whose noise is the same at
// every point, must find every window within two spectra (the last spectrum of a block
// holds one component less than EFA can show, so an edge at the end may come one early).
// EFA of D itself (--weights off), judged against one noise level for every point, sees
// the noisy channels' noise above it from the first spectra: C comes out present long
// before it was added, which shows the test can fail.
func TestWeightedEFAWindows(t *testing.T) {
	s, truth := windowSeries(t)
	series, blank := s.write(t)
	run := func(weights string) *Result {
		st := NewSettings()
		st.Data, st.Blanks, st.Kind = []string{series}, []string{blank}, "single-beam"
		st.Weights, st.Bands, st.Checks, st.Closure, st.Components = weights, "off", "off", "off", "3"
		r, err := Run(st, nil)
		if err != nil {
			t.Fatal(err)
		}
		if r.EFA == nil {
			t.Fatalf("--weights %s: no EFA (%q)", weights, r.Warnings)
		}
		return r
	}
	names := []string{"A", "B", "C"}
	r := run("noise")
	if !r.EFA.NoiseUnits {
		t.Fatalf("weighted EFA did not run on the noise-scaled matrix")
	}
	w := r.EFA.Windows
	for j, win := range truth {
		if math.Abs(float64(w.Appear[j]-win[0])) > 2 || math.Abs(float64(w.Disappear[j]-win[1])) > 2 {
			t.Errorf("weighted EFA: %s present in spectra %d–%d, truth %d–%d", names[j], w.Appear[j], w.Disappear[j], win[0], win[1])
		}
	}
	off := run("off").EFA.Windows
	if math.Abs(float64(off.Appear[2]-truth[2][0])) <= 10 {
		t.Errorf("unweighted EFA finds C's appearance too (spectrum %d, truth %d): these data do not test the weighting", off.Appear[2], truth[2][0])
	}
}
