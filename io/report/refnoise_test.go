package report

import (
	"strings"
	"testing"
)

// The iterations figure's caption says what its noise level is compared
// with: with noise_degrees_of_freedom (reactions mode, the reference's
// noise counted once) it quotes that ν beside the plain count of a rank-k
// bilinear fit, observed − k(n + m − k) (common practice): 60 × 301 −
// 2 × (60 + 301 − 2) = 17342. Without it the caption stays as it was.
func TestIterationsCaptionSaysReferenceNoise(t *testing.T) {
	s := &Summary{NoiseWeights: "noise", ResidualToNoise: 1.02, LackOfFitPercent: 0.0742, NoiseLackOfFitPercent: 0.0805,
		Spectra: 60, Points: 301, Components: 2, NoiseDegreesOfFreedom: 9529.03}
	nl, caption := iterationsLevel(s, 0.51)
	if want := 0.51 / 1.02; nl != want {
		t.Errorf("noise level %g, want last / residual_to_noise = %g (its definition, √(χ²/ν) = 1 there)", nl, want)
	}
	for _, part := range []string{"χ² of 9529 rather than the 17342", "reference spectrum's own noise"} {
		if !strings.Contains(caption, part) {
			t.Errorf("caption lacks %q: %s", part, caption)
		}
	}
	s.NoiseDegreesOfFreedom = 0
	if _, caption := iterationsLevel(s, 0.51); strings.Contains(caption, "reference") {
		t.Errorf("caption names the reference without noise_degrees_of_freedom: %s", caption)
	}
}
