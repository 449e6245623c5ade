package pipeline

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// smoothedCountsNoise rebuilds s.beams like countsNoise (detector noise constant in
// counts, σ_I; the blank 64 co-added scans) with the noise of each beam convolved
// along the axis with a Gaussian kernel of kernel points (cut at ±3 kernel; 0: white
// noise) scaled to unit sum of squares, so the noise per point stays σ_I: what
// apodisation, zero filling and interpolation leave in FTIR spectra (common
// practice). The throughput is 2·10⁴ exp(−((x − 1500)/width)²) counts: width 400 as
// countsNoise, 150 for one that falls to 2 % at the ends of the axis, as at a
// detector's cut-off.
func smoothedCountsNoise(s *synth, sigmaI, kernel, width float64, seed uint64) {
	rng := rand.New(rand.NewPCG(seed, 17))
	half := int(math.Ceil(3 * kernel))
	w := make([]float64, 2*half+1)
	var ss float64
	for l := range w {
		w[l] = 1 // kernel 0: one point, white noise
		if kernel > 0 {
			u := float64(l-half) / kernel
			w[l] = math.Exp(-0.5 * u * u)
		}
		ss += w[l] * w[l]
	}
	n, m := len(s.times), len(s.axis)
	raw := make([]float64, m+2*half)
	noise := func(sd float64) []float64 {
		for j := range raw {
			raw[j] = rng.NormFloat64()
		}
		out := make([]float64, m)
		for j := range out {
			var v float64
			for l, wl := range w {
				v += wl * raw[j+l]
			}
			out[j] = sd * v / math.Sqrt(ss)
		}
		return out
	}
	env := make([]float64, m)
	for j, x := range s.axis {
		u := (x - 1500) / width
		env[j] = 2e4 * math.Exp(-u*u)
	}
	for j, e := range noise(sigmaI / 8) {
		s.blank[j] = env[j] + e
	}
	var a mat.Dense
	a.Mul(s.profiles, s.spectra.T())
	for i := 0; i < n; i++ {
		e := noise(sigmaI)
		for j := 0; j < m; j++ {
			s.beams.Set(i, j, env[j]*math.Pow(10, -a.At(i, j))+e[j])
		}
	}
}

// A -> B -> C single beams (the analytic Bateman 1910 solution) with no baseline and
// detector noise smoothed along the axis over 2 points: --baseline auto must choose
// none. Its extra-sum-of-squares F-test (Draper & Smith 1998 §6) counted the 301
// points as independent, so each order's polynomial, which collects the noise's
// smooth part (7 times the variance per point here: (Σw)²/Σw² of the kernel,
// Brockwell & Davis 1991, from memory), passed at p < 10⁻⁹⁰: a cubic was chosen and
// it took part of the broad bands. Counting m/τ effective points
// (svd.AxisCorrelation) keeps the test at its level. The species must come back
// (cosine ≥ 0.99 against the truth), and the data fit of the kinetics must fit to
// the noise, without the warning that the model leaves a residual above it.
func TestBaselineAutoOnNoiseCorrelatedAlongTheAxis(t *testing.T) {
	s := makeBateman(t, 6e-3, 2e-3, 0, 1, 3)
	smoothedCountsNoise(s, 20, 2, 400, 3)
	series, blank := s.write(t)
	st := NewSettings()
	st.Data, st.Kind, st.Blanks, st.Pre = []string{series}, "single-beam", []string{blank}, 3
	st.Report, st.Checks, st.Bands = "off", "off", "off"
	st.Model = "A -> B -> C"
	r, err := Run(st, nil)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("baseline %s (%s); noise %s, residual %.3g × noise", baselineName(r.BaselineOrder), r.BaselineReason, r.NoiseSource, r.ResidualToNoise)
	if r.BaselineOrder != -1 {
		t.Errorf("--baseline auto chose %s on data without a baseline whose noise is correlated along the axis", baselineName(r.BaselineOrder))
	}
	if !strings.Contains(r.BaselineReason, "correlated along the axis") {
		t.Errorf("the reason does not say the noise is correlated along the axis: %s", r.BaselineReason)
	}
	checkRecovered(t, s.spectra, s.profiles, r, 0.99)
	for _, w := range r.Warnings {
		if strings.Contains(w, "times the noise: it does not describe the data") {
			t.Errorf("false misfit warning: %s", w)
		}
	}
}
