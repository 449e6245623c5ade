package kinetics

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// countsSeries is A → B (k = 0.05 s⁻¹, exact solution a = e^{−kt}) seen
// through a solvent band that lets 1 % of the light through on a third of
// the channels, with detector noise constant in counts: absorbance noise
// σ_A = σ_I /(I ln 10) is then 100 times larger there (first-order error
// propagation, common practice). It returns the data and the per-channel
// weights 1/σ_A² at the mean intensity.
func countsSeries(rng *rand.Rand, n, m int) (*mat.Dense, []float64, []float64) {
	const k, i0, sdI = 0.05, 1e4, 2.0
	times := linspace(0, 60, n)
	truth := mat.NewDense(n, m, nil)
	for i, t := range times {
		a := math.Exp(-k * t)
		for j := 0; j < m; j++ {
			u := float64(j) / float64(m-1)
			sA := 0.8 * math.Exp(-0.5*sq((u-0.3)/0.08))
			sB := 0.6 * math.Exp(-0.5*sq((u-0.6)/0.1))
			solvent := 0.0
			if j%3 == 0 {
				solvent = 2
			}
			truth.Set(i, j, a*sA+(1-a)*sB+solvent)
		}
	}
	d := mat.NewDense(n, m, nil)
	w := make([]float64, m)
	for j := 0; j < m; j++ {
		mean := 0.0
		for i := 0; i < n; i++ {
			inten := i0*math.Pow(10, -truth.At(i, j)) + sdI*rng.NormFloat64()
			d.Set(i, j, -math.Log10(inten/i0))
			mean += truth.At(i, j) / float64(n)
		}
		sigma := sdI / (i0 * math.Pow(10, -mean) * math.Ln10)
		w[j] = 1 / (sigma * sigma)
	}
	return d, w, times
}

func sq(x float64) float64 { return x * x }

// Honest standard errors: over 40 noise draws (noise constant in counts),
// the spread of the fitted k over the mean reported standard error must lie
// within 0.8–1.25 (a standard error is by definition the spread of the
// estimate over repeated experiments). Unweighted, the noisy channels
// dominate and the ratio is far off; weighted, it is honest.
func TestDataFitStandardErrorsMatchSpread(t *testing.T) {
	s := mustParse(t, "A -> B")
	rng := rand.New(rand.NewPCG(12, 6))
	const draws = 40
	var ks, ses []float64
	for r := 0; r < draws; r++ {
		d, w, times := countsSeries(rng, 24, 30)
		fit, _, err := FitData(s, times, d, FitOptions{InitialK: []float64{0.04}, ColWeights: w})
		if err != nil {
			t.Fatal(err)
		}
		ks = append(ks, fit.K[0])
		ses = append(ses, fit.KStdErr[0])
	}
	meanK, meanSE := 0.0, 0.0
	for i := range ks {
		meanK += ks[i] / draws
		meanSE += ses[i] / draws
	}
	v := 0.0
	for _, k := range ks {
		v += sq(k-meanK) / (draws - 1)
	}
	ratio := math.Sqrt(v) / meanSE
	t.Logf("mean k %.5g, spread %.3g, mean SE %.3g, ratio %.3f", meanK, math.Sqrt(v), meanSE, ratio)
	if ratio < 0.8 || ratio > 1.25 {
		t.Errorf("spread of k / mean standard error = %.3f, want 0.8–1.25", ratio)
	}
	if math.Abs(meanK-0.05) > 3*math.Sqrt(v/draws)+1e-12 {
		t.Errorf("mean k %.5g, truth 0.05 (3 standard errors of the mean: %.2g)", meanK, 3*math.Sqrt(v/draws))
	}
}
