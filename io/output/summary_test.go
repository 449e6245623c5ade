package output

import (
	"strings"
	"testing"
)

// Misfit and noise independent add in variance, so a residual q times the
// noise holds a misfit of √(q² − 1) noise deviations per point (by hand from
// the definition: Var(e + n) = Var(e) + Var(n)); it reaches the noise's own
// size at q = √2. The verdict depends on q and the limit only, so the same
// ratio reads the same for a resolution and a kinetic fit (2.22 and 2.09
// both above √2).
func TestFitVerdictBySize(t *testing.T) {
	for _, c := range []struct {
		q, limit float64
		want     string
	}{
		{1.01, 1.02, "within the noise"},
		{1.3, 1.02, "smaller than the noise (0.83 times"}, // √(1.69 − 1) = 0.8307
		{1.4142, 1.02, "smaller than the noise"},
		{1.4143, 1.02, "larger than the noise"},
		{2.09, 1.02, "larger than the noise (1.84 times"}, // √(4.3681 − 1) = 1.8353
		{2.22, 1.02, "larger than the noise (1.98 times"}, // √(4.9284 − 1) = 1.9820
		{2.22, 0, "larger than the noise"},
	} {
		if got := FitVerdict(c.q, c.limit); !strings.Contains(got, c.want) {
			t.Errorf("FitVerdict(%g, %g) = %q, want it to contain %q", c.q, c.limit, got, c.want)
		}
	}
}
