package pipeline

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
)

// A window around one band: A → B (first order, k = 6e-3 s⁻¹ from 60 s)
// seen without a blank, so the differences hold one reaction whose extent
// is 1 − e^{−k(t−60)} (the rate law's solution: analytic), with detector
// noise constant in counts (20 counts on beams of up to 2·10⁴, so
// absorbance noise σ_I/(I ln 10)). --region narrows the axis to B's band at
// 1660 cm⁻¹ (Gaussian, width parameter 14 cm⁻¹): 21 and 5 points, where the
// band is ≥ 90 % a cubic of the axis and its shape cannot tell it from a
// baseline drift. The change stands hundreds of times above the noise, so
// the run must resolve it (one reaction whose extent follows the rate law)
// and say what the short axis cannot decide; never that nothing changed
// beyond noise (common practice: a spectroscopist narrowing the window
// around one band expects that band's change, with a caveat).
func TestNarrowWindowResolvesTheBand(t *testing.T) {
	const k1 = 6e-3
	s := makeBateman(t, k1, 2e-3, 0, 1, 2)
	countsNoise(s, 20, 5, nil)
	series, _ := s.write(t)
	// The largest true change over its own noise in the window: ΔA from the
	// profiles and spectra, σ_A = σ_I/(I ln 10) at the beam countsNoise
	// writes (envelope 2·10⁴ e^{−((x−1500)/400)²} through 10^{−A}).
	var a mat.Dense
	a.Mul(s.profiles, s.spectra.T())
	n, _ := a.Dims()
	most := 0.0
	for j, x := range s.axis {
		if x < 1640 || x > 1680 {
			continue
		}
		env := 2e4 * math.Exp(-(x-1500)*(x-1500)/(400*400))
		for i := 0; i < n; i++ {
			sd := 20 / (env * math.Pow(10, -a.At(i, j)) * math.Ln10)
			most = math.Max(most, math.Abs(a.At(i, j)-a.At(0, j))/sd)
		}
	}
	t.Logf("largest true change %.0f times its noise", most)
	if most < 100 {
		t.Fatalf("the case is meant to stand far above the noise: %.0f σ", most)
	}
	for _, c := range []struct{ region, baseline string }{{"1680:1640", "auto"}, {"1664:1656", "auto"}, {"1680:1640", "off"}} {
		region := c.region
		st := NewSettings()
		st.Data, st.Kind, st.Regions = []string{series}, "single-beam", []string{region}
		st.Bands, st.Baseline = "off", c.baseline
		r, err := Run(st, nil)
		if err != nil {
			t.Fatalf("%s: %v", region, err)
		}
		_, m := r.D.Dims()
		said := strings.Join(append(append([]string{}, r.Notes...), r.Advice...), "\n")
		t.Logf("%s, baseline %s: %d points, %d component(s), noise σ %.3g", region, c.baseline, m, r.Components, r.NoiseSigma)
		for _, wrong := range []string{"within noise", "no change beyond noise"} {
			if strings.Contains(said, wrong) {
				t.Errorf("%s: a change hundreds of times the noise is said to be %q:\n%s", region, wrong, said)
			}
		}
		if c.baseline == "off" {
			// Asked for no baseline model, the run may set the smooth
			// factors aside as drift; it must not call them noise.
			continue
		}
		if !strings.Contains(said, "cannot be told from a baseline drift") || !strings.Contains(said, "widen --region") {
			t.Errorf("%s: nothing says the short axis cannot tell a band from a drift, or to widen the region:\n%s", region, said)
		}
		if r.Components != 1 || r.ALS == nil {
			t.Errorf("%s: %d components, want the one reaction", region, r.Components)
			continue
		}
		truth := make([]float64, len(r.Times))
		for i, tm := range r.Times {
			truth[i] = 1 - math.Exp(-k1*math.Max(0, tm-60))
		}
		got := make([]float64, len(r.Times))
		for i := range got {
			got[i] = r.ALS.C.At(i, 0)
		}
		if c := stat.Correlation(got, truth, nil); c < 0.999 {
			t.Errorf("%s: the extent follows 1 − e^{−kt} only to a correlation of %.5f, want ≥ 0.999", region, c)
		}
	}
}
