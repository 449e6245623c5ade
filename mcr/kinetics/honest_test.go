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

// TestDataFitWithoutResidualSameFigures: FitData with NoResidual forms the
// residuals a block of rows at a time instead of keeping them, and must
// report the same figures: the residual sum of squares summed directly
// from the residuals FitData keeps otherwise, and the lag-1 autocorrelation
// of those residuals (Lag1, the definition of Durbin & Watson 1950) behind
// the widened standard errors. The series is countsSeries (noise constant
// in counts) with a slow drift the model lacks added, so that the
// residuals are correlated and the standard errors are widened; 150 rows
// are not a whole number of blocks.
func TestDataFitWithoutResidualSameFigures(t *testing.T) {
	s := mustParse(t, "A -> B")
	d, w, times := countsSeries(rand.New(rand.NewPCG(3, 9)), 150, 120)
	n, m := d.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, d.At(i, j)+2e-4*math.Sin(float64(i)/20)*float64(j%7))
		}
	}
	opt := FitOptions{InitialK: []float64{0.04}, ColWeights: w}
	full, _, err := FitData(s, times, d, opt)
	if err != nil {
		t.Fatal(err)
	}
	opt.NoResidual = true
	lite, _, err := FitData(s, times, d, opt)
	if err != nil {
		t.Fatal(err)
	}
	if lite.Fitted != nil || lite.Residual != nil {
		t.Fatal("NoResidual kept the data-sized matrices")
	}
	direct := sumSquares(full.Residual)
	rho, ok := Lag1(full.Residual)
	if !ok || !(full.Inflation > 1) {
		t.Fatalf("the residuals should be correlated (lag-1 %v, inflation %v)", rho, full.Inflation)
	}
	t.Logf("SSR %.10g (direct %.10g), lag-1 %.6f, inflation %.4f", lite.SSR, direct, lite.Lag1, lite.Inflation)
	if math.Abs(full.SSR-direct) > 1e-12*direct || math.Abs(full.Lag1-rho) > 1e-12 {
		t.Errorf("kept residuals: SSR %v, lag-1 %v; from the residual matrix %v, %v", full.SSR, full.Lag1, direct, rho)
	}
	if lite.SSR != full.SSR || lite.Lag1 != full.Lag1 || lite.Inflation != full.Inflation || lite.KStdErr[0] != full.KStdErr[0] || lite.K[0] != full.K[0] {
		t.Errorf("NoResidual: SSR %v, lag-1 %v, inflation %v, k %v ± %v; with the residuals kept %v, %v, %v, %v ± %v",
			lite.SSR, lite.Lag1, lite.Inflation, lite.K[0], lite.KStdErr[0], full.SSR, full.Lag1, full.Inflation, full.K[0], full.KStdErr[0])
	}
}
