package spectra

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// absorbanceRun is n absorbance spectra of m channels of a band growing to top absorbance at
// channel m/2 over a light-limited baseline, from single beams with noise constant in counts
// (σ_I = 2e-3 of the full beam): σ_A = σ_I/(I ln 10) grows with the band (Beer–Lambert and
// first-order error propagation, common practice). The first pre spectra are before it grows.
func absorbanceRun(n, m, pre int, top float64) *Series {
	rng := rand.New(rand.NewPCG(21, 4))
	s := simSeries(n, m, 2000, 30)
	for i := 0; i < n; i++ {
		x := growth(i, pre, 10)
		for j := 0; j < m; j++ {
			a := 0.1 + top*x*math.Exp(-0.5*sq(float64(j-m/2)/8))
			beam := math.Pow(10, -a) + 2e-3*rng.NormFloat64()
			s.Values.Set(i, j, -math.Log10(beam))
		}
	}
	return s
}

// A reviewer's findings on the blind points of absorbance input: (1) the no-light rule took
// σ_A ≥ 0.145 in the data's own units, so the same data exported in milli-absorbance lost
// nearly every channel (346 750 of 347 500 points of a real series) and resolved nothing;
// (2) the overweighted rule blinded the centre of a band growing to ΔA 1.6, where about 2 %
// of the light is left: the band was lost, not weighted down. Now a channel needs σ ≥ 0.145
// and ten times the typical channel's scatter to count as dark; and a channel noisier than
// its weight allows is weighted by its own scatter instead. Scaling every value by 1000
// scales the noise by 1000 and leaves the blind points as they were (a change of units
// changes no information), and the growing band keeps its channels with a σ that follows
// its light (at the band's centre ≥ 5 times a quiet channel's: 10^1.6 ≈ 40 at the end).
func TestAbsorbanceBlindRulesFollowTheData(t *testing.T) {
	const n, m, pre = 40, 300, 4
	plain := absorbanceRun(n, m, pre, 1.6)
	milli := &Series{AxisName: plain.AxisName, Axis: plain.Axis, Times: plain.Times, Names: plain.Names, Source: "sim", Values: mat.DenseCopyOf(plain.Values)}
	milli.Values.Scale(1000, milli.Values)
	var sig [2][]float64
	for k, s := range []*Series{plain, milli} {
		out, err := Assemble(s, AssembleOptions{Kind: Absorbance, Pre: pre})
		if err != nil {
			t.Fatal(err)
		}
		if out.Blind != nil && out.Blind.Count > 0 {
			t.Errorf("scale %g: %d blind points; the band is seen, nothing is dark", []float64{1, 1000}[k], out.Blind.Count)
		}
		sig[k] = out.Noise.Channel
	}
	for _, j := range []int{10, m / 2} {
		if r := sig[1][j] / sig[0][j]; math.Abs(r/1000-1) > 1e-6 {
			t.Errorf("channel %d: σ scaled by %.6g, want 1000", j, r)
		}
	}
	if r := sig[0][m/2] / sig[0][10]; r < 5 {
		t.Errorf("σ at the band's centre %.3g times a quiet channel's, want ≥ 5: its weight ignores the light it lost", r)
	}
}

// More than a quarter of the values at an export's cap is not a few dark channels but the
// wrong kind or units of data: one error naming the count and what to check, as the single
// beams' path refuses data that are mostly not intensities.
func TestMostlyCappedIsRefused(t *testing.T) {
	s := absorbanceRun(20, 100, 2, 0.5)
	for i := 0; i < 20; i++ {
		for j := 0; j < 40; j++ {
			s.Values.Set(i, j, 6)
		}
	}
	_, err := Assemble(s, AssembleOptions{Kind: Absorbance})
	if err == nil || !strings.Contains(err.Error(), "800 of 2000 values hold no information") || !strings.Contains(err.Error(), "--kind") {
		t.Errorf("error %v: want one naming 800 of 2000 values and --kind", err)
	}
}
