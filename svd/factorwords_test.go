package svd

import (
	"strings"
	"testing"
)

// Where a factor's time vector is largest, in a stack of the two urethane ATR series
// (50 and 58 spectra: testdata/urethane-atr/README.md, source jevandezande/spectra, MIT),
// stacked as the pipeline stacks experiments: rows 0–49 the first, 50–107 the second.
// Largest at the last row of one and the first of the next is the step between the
// experiments; elsewhere it is placed within its experiment. No place is called a
// transient: a time vector orthogonal to a larger factor's everywhere-positive profile
// must change sign (their inner product is zero; linear algebra), so an interior
// maximum says nothing of a transient.
func TestTimePlace(t *testing.T) {
	blocks := []int{0, 50}
	for _, tc := range []struct {
		peak       int
		blocks     []int
		want, hide string
	}{
		{49, blocks, "at spectrum 50 of 108, the last of experiment 1 next to the first of experiment 2: a step between the experiments", ""},
		{50, blocks, "at spectrum 51 of 108, the first of experiment 2 next to the last of experiment 1: a step between the experiments", ""},
		{28, blocks, "at spectrum 29 of 108 (spectrum 29 of 50 of experiment 1;", "step"},
		{107, blocks, "at spectrum 108 of 108 (spectrum 58 of 58 of experiment 2;", "step"},
		{0, blocks, "at spectrum 1 of 108 (spectrum 1 of 50 of experiment 1;", "step"},
		{28, nil, "at spectrum 29 of 50 (a time vector is orthogonal to the larger factors'", "experiment"},
	} {
		n := 108
		if tc.blocks == nil {
			n = 50
		}
		got := timePlace(tc.peak, n, tc.blocks)
		if !strings.Contains(got, tc.want) || tc.hide != "" && strings.Contains(got, tc.hide) || strings.Contains(got, "transient") {
			t.Errorf("peak %d of %d: %q, want %q, no %q and no transient", tc.peak, n, got, tc.want, tc.hide)
		}
	}
}

// Positions on the axis carry its unit when the axis name fixes one: the readers call an
// axis "wavenumber" only from a cm⁻¹ title or unit (io/spectra), and cm⁻¹ is the
// wavenumber's unit (common practice); a wavelength may be in nm or µm, so only its name.
func TestAxisPlace(t *testing.T) {
	for _, tc := range []struct{ name, want string }{
		{"wavenumber", "1702 cm⁻¹"},
		{"wavelength", "1702 on the wavelength axis"},
		{"", "1702 on the axis"},
	} {
		if got := axisPlace(1702, tc.name); got != tc.want {
			t.Errorf("axis %q: %q, want %q", tc.name, got, tc.want)
		}
	}
}
