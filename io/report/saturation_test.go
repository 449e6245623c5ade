package report

import "testing"

// Absorbance above 2 transmits under 1 % of the light (A = −log10 T,
// definition; 2 as the limit is common practice). Each run of channels
// where any spectrum exceeds it is one range, named in the axis's unit.
func TestHighAbsorbanceWarning(t *testing.T) {
	axis := []float64{250, 251, 252, 253, 254, 255, 256}
	rows := [][]float64{
		{0.1, 2.1, 2.5, 1.0, 0.2, 0.1, 2.01},
		{0.1, 0.5, 1.9, 2.2, 0.2, 0.1, 0.3},
	}
	got := HighAbsorbanceWarning(axis, "wavelength (nm)", rows)
	want := "absorbance exceeds 2 (under 1 % of the light transmitted) at 251–253, 256 nm: such regions are often saturated; consider --exclude LO:HI for them"
	if got != want {
		t.Errorf("got  %q\nwant %q", got, want)
	}
	if got := HighAbsorbanceWarning(axis, "nm", [][]float64{{2, 2, 1, 0, 0, 0, 0}}); got != "" {
		t.Errorf("exactly 2 is not above 2: %q", got)
	}
}
