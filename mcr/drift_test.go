package mcr

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// solventWeights are the column weights 1/σ_j² of absorbance whose detector
// noise is constant in counts: σ_A = σ_I/(I ln 10) with I = 10^(−A_solvent),
// so a solvent band of absorbance 2 makes its channels 100× noisier
// (propagation of error through A = −log10 I, common practice).
func solventWeights(m int, sigmaI float64) []float64 {
	b := make([]float64, m)
	for j := range b {
		x := (float64(j) - 0.7*float64(m)) / (0.03 * float64(m))
		aSolvent := 2 * math.Exp(-0.5*x*x)
		sd := sigmaI / math.Ln10 * math.Pow(10, aSolvent)
		b[j] = 1 / (sd * sd)
	}
	return b
}

// collapse is a hard model that makes the first two profiles collinear,
// [c₁, c₁ + ε c₂] with ε = 10^−(call number): least-squares spectra for
// nearly collinear profiles are s₂ ≈ t₂/ε and s₁ ≈ t₁ − t₂/ε, which grow as
// 1/ε and cancel in C Sᵀ. That is the degenerate drift the check in Resolve
// stops (two-factor degeneracy: components growing without bound while
// their sum stays finite; Kruskal, Harshman & Lundy 1989, from memory).
func collapse() func(c *mat.Dense) (*mat.Dense, error) {
	calls := 0
	return func(c *mat.Dense) (*mat.Dense, error) {
		calls++
		eps := math.Pow(10, -float64(calls))
		out := mat.DenseCopyOf(c)
		n, _ := c.Dims()
		for i := 0; i < n; i++ {
			out.Set(i, 1, c.At(i, 0)+eps*c.At(i, 1))
		}
		return out, nil
	}
}

// The drift check compares the components' size with the data's in one
// metric. With noise weights (1/σ², σ = 10⁻³ absorbance away from the
// solvent band) the weighted data norm is about ‖D‖/σ: comparing unweighted
// component sizes with it let components grow 10⁶ times the data before
// the check fired. The ratio Σ‖√A c_k‖‖√B s_k‖ / ‖√A D √B‖ has no units, so
// it must fire at the same iteration whatever the weights' scale (weights
// × 10⁶ here against weights of order one), on a drift it sees within five
// iterations, and never on the clean weighted resolution.
func TestDriftCheckInWeightedMetric(t *testing.T) {
	rng := rand.New(rand.NewPCG(1997, 3))
	n, m := 40, 120
	d, c, _ := windowData(rng, n, m, 1e-3)
	b := solventWeights(m, 1e-3*math.Ln10) // σ_A = 10⁻³ where the solvent is clear
	a := make([]float64, n)
	for i := range a {
		a[i] = 1
	}
	unit := make([]float64, m)
	for j := range unit {
		unit[j] = b[j] * 1e-6 // the same weights in other units: the noise edge at 1
	}
	stopAt := map[string]int{}
	for _, tc := range []struct {
		name string
		data Data
	}{
		{"weights 1/σ²", WeightedDense{D: d, Row: a, Col: b}},
		{"weights × 10⁻⁶", WeightedDense{D: d, Row: a, Col: unit}},
	} {
		opt := Options{Mode: Reactions, MaxIter: 5, Tolerance: 1e-15, HardModel: collapse()}
		res, err := Resolve(tc.data, c, opt)
		if err != nil {
			t.Fatal(err)
		}
		if !res.Degenerate {
			t.Errorf("%s: profiles collapsed to ε = 10⁻⁵ and spectra grew as 1/ε, yet the drift check did not fire: %q", tc.name, res.Warnings)
			continue
		}
		stopAt[tc.name] = res.Iterations
		// Clean data: the same weighted problem without the collapsing
		// model must not be called a drift.
		clean, err := Resolve(tc.data, c, Options{Mode: Reactions, MaxIter: 200})
		if err != nil {
			t.Fatal(err)
		}
		if clean.Degenerate {
			t.Errorf("%s: the clean resolution was stopped as a drift: %q", tc.name, clean.Warnings)
		}
		if r := componentSizeW(clean.C, clean.S, a, tc.data.(WeightedDense).Col) / math.Sqrt(tc.data.FrobeniusSq()); !(r < 10) {
			t.Errorf("%s: clean components %.3g times the data's weighted size (three components: about 3 at most)", tc.name, r)
		}
	}
	if x, y := stopAt["weights 1/σ²"], stopAt["weights × 10⁻⁶"]; x != y {
		t.Errorf("the drift check fired at iteration %d with weights 1/σ² and at %d with the same weights × 10⁻⁶: its ratio depends on the units", x, y)
	}
}
