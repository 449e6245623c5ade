package kinetics

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// TestWidenedWarningSaysWhatWasKept: a data fit's standard error is the
// larger of the noise-based one multiplied by the AR(1) factor
// √((1 + ρ)/(1 − ρ)) (ρ the residuals' lag-1 autocorrelation in time,
// ρ ≈ 1 − d/2 with d the Durbin–Watson statistic; Durbin & Watson,
// Biometrika 1950) and the sandwich one (White 1980). The warnings must
// say which was applied: the factor, recomputed here from the residuals by
// the definition of ρ, is named as applied only when the reported error is
// the one it gave. Two invented A -> B series (countsSeries) with misfits
// the model lacks: a slow drift shared by every channel's residual (smooth
// in time: the factor's case) and, besides it, a first spectrum taken
// before mixing (a whole spectrum off: the sandwich's case). Each branch
// must be met, or the test would not show the warnings follow the figure.
func TestWidenedWarningSaysWhatWasKept(t *testing.T) {
	s := mustParse(t, "A -> B")
	branches := map[string]bool{}
	for _, firstOff := range []bool{false, true} {
		d, w, times := countsSeries(rand.New(rand.NewPCG(3, 9)), 150, 120)
		n, m := d.Dims()
		for i := 0; i < n; i++ {
			for j := 0; j < m; j++ {
				d.Set(i, j, d.At(i, j)+2e-4*math.Sin(float64(i)/20)*float64(j%7))
			}
		}
		if firstOff {
			for j := 0; j < m; j++ {
				d.Set(0, j, d.At(0, j)+2e-3*float64(j%5))
			}
		}
		fit, _, err := FitData(s, times, d, FitOptions{InitialK: []float64{0.04}, ColWeights: w})
		if err != nil {
			t.Fatal(err)
		}
		num, den := 0.0, 0.0
		for j := 0; j < m; j++ {
			for i := 0; i < n; i++ {
				e := fit.Residual.At(i, j)
				den += e * e
				if i > 0 {
					num += e * fit.Residual.At(i-1, j)
				}
			}
		}
		rho := num / den
		f := math.Sqrt((1 + rho) / (1 - rho))
		all := strings.Join(fit.Warnings, "\n")
		said := fmt.Sprintf("standard errors were multiplied by %.2f", f)
		notApplied := fmt.Sprintf("not the noise-based ones multiplied by %.2f", f)
		t.Logf("first spectrum off %v: ρ %.4f, factor %.4f; k = %.6g ± %.3g (noise-based, widened: %.3g)", firstOff, rho, f, fit.K[0], fit.KStdErr[0], fit.NoiseKStdErr[0])
		if !(f > 1.05) {
			t.Fatalf("ρ %.3f: the residuals should be correlated", rho)
		}
		if fit.KStdErr[0] == fit.NoiseKStdErr[0] {
			branches["factor"] = true
			if !strings.Contains(all, said) {
				t.Errorf("the factor's error is reported, but no warning says %q:\n%s", said, all)
			}
			continue
		}
		branches["sandwich"] = true
		if strings.Contains(all, "standard errors were multiplied by") {
			t.Errorf("the sandwich error %.3g is reported (the factor's %.3g), yet a warning says the errors were multiplied:\n%s", fit.KStdErr[0], fit.NoiseKStdErr[0], all)
		}
		if !strings.Contains(all, notApplied) {
			t.Errorf("no warning says %q:\n%s", notApplied, all)
		}
	}
	if !branches["factor"] || !branches["sandwich"] {
		t.Errorf("branches met %v: the series do not test both", branches)
	}
}
