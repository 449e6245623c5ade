package spectra

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// preRepeatsAbsorbance simulates the absorbance of n single beams × m
// channels against a noiseless blank: three repeats of the starting state,
// then A → B first order (a = e^{−k(t−t₀)}, Bateman 1910), under a source
// envelope with a solvent band at 1 % transmission, with detector noise
// constant in counts (σ_I; PRIMER §8, common practice for FTIR detectors).
// Spectrum gas (≥ 0) also carries gas lines: sharp Lorentzians 1.5
// channels wide, absorbance 0.3, every 7 channels (common practice: the
// narrow lines of water vapour or CO₂ that a condensed sample lacks). It
// returns the absorbances and, per point, the true absorbance noise
// σ_I/(I ln 10) (propagation of error of A = −log10(I/I₀)).
func preRepeatsAbsorbance(n, m int, sigI float64, gas int, seed uint64) (*mat.Dense, *mat.Dense, []float64) {
	rng := rand.New(rand.NewPCG(seed, 2026))
	v, truth := mat.NewDense(n, m, nil), mat.NewDense(n, m, nil)
	times := make([]float64, n)
	for i := range n {
		times[i] = 30 * float64(i)
		x := 1 - math.Exp(-math.Max(0, float64(i-2))/float64(n/3))
		for j := range m {
			u := float64(j) / float64(m)
			env := 1e4 * (0.6 + 0.4*math.Sin(3*u))
			a := 2*math.Exp(-0.5*sq((u-0.7)/0.02)) + 0.4*(1-x)*math.Exp(-0.5*sq((u-0.3)/0.03)) + 0.5*x*math.Exp(-0.5*sq((u-0.45)/0.03))
			if i == gas {
				for c := 3.0; c < float64(m); c += 7 {
					a += 0.3 / (1 + sq((float64(j)-c)/0.75))
				}
			}
			beam := env*math.Pow(10, -a) + sigI*rng.NormFloat64()
			v.Set(i, j, -math.Log10(beam/env))
			truth.Set(i, j, sigI/(beam*math.Ln10))
		}
	}
	return v, truth, times
}

// medianRatio is the median over channels of est_j / truth_j, truth taken
// in row row.
func medianRatio(est []float64, truth *mat.Dense, row int) float64 {
	r := make([]float64, len(est))
	for j, x := range est {
		r[j] = x / truth.At(row, j)
	}
	return median(r)
}

// A pre-reaction repeat set aside (gas lines in it) breaks the steps it is
// part of; the noise of the repeats kept is measured from the step between
// them. Marked blind at every channel, it left both steps of three repeats
// without a difference, and the estimate fell to its floor: σ 5·10⁻¹⁰ for
// 8·10⁻⁵ on a field series. With two of three set aside no step is left,
// and the noise is the second differences' in time, said so in the source.
// The truth is the simulated detector noise σ_I propagated to absorbance,
// σ_I/(I ln 10) per point (preRepeatsAbsorbance); within 15 %, the
// estimator's error from one step of 400 channels pooled and from the
// chemistry's curvature in time.
func TestNoiseWithoutAPreRepeatSetAside(t *testing.T) {
	const sigI = 6.0
	for _, c := range []struct {
		name     string
		gas      int // the spectrum with gas lines (−1: none)
		aside    []int
		source   string // the kept estimate's source starts so
		fellBack bool
	}{
		{"the middle repeat (gas lines) aside", 1, []int{1}, "successive differences of the 2 pre-reaction spectra with data", false},
		{"the first repeat aside", -1, []int{0}, "successive differences of the 2 pre-reaction spectra with data", false},
		{"the last repeat aside", -1, []int{2}, "successive differences of the 2 pre-reaction spectra with data", false},
		{"two of three repeats aside", 1, []int{0, 1}, "second differences in time", true},
	} {
		v, truth, times := preRepeatsAbsorbance(60, 400, sigI, c.gas, 11)
		kept, all, src := ChannelNoiseWithout(v, times, 3, nil, c.aside)
		got := medianRatio(kept, truth, 0)
		t.Logf("%s: σ kept / true %.4g (with them %.4g): %s", c.name, got, medianRatio(all, truth, 0), src)
		if math.Abs(got-1) > 0.15 {
			t.Errorf("%s: σ measured without it is %.4g times the simulated σ_I/(I ln 10); want 1 within 15 %%", c.name, got)
		}
		if !strings.HasPrefix(src, c.source) {
			t.Errorf("%s: source %q; want it to start %q", c.name, src, c.source)
		}
		if c.fellBack != strings.Contains(src, "too few for a successive difference") {
			t.Errorf("%s: source %q; the fallback to second differences said: %v, want %v", c.name, src, !c.fellBack, c.fellBack)
		}
	}
}
