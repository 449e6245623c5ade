package spectra

import (
	"math"
	"testing"
)

// The wavenumber is the reciprocal of the wavelength: ν̃/cm⁻¹ = 10⁷/(λ/nm)
// (definition; 1 cm = 10⁷ nm), so 2500 nm is 4000 cm⁻¹ and 15384.6 nm is
// 650 cm⁻¹. A wavenumber axis is kept as it is (the same slice), and an
// axis whose unit is not known, or a wavelength that is not positive, has
// no wavenumbers.
func TestWavenumbersOfAnAxis(t *testing.T) {
	got := Wavenumbers("wavelength", []float64{2500, 1e7 / 650, 5000})
	for j, want := range []float64{4000, 650, 2000} {
		if math.Abs(got[j]-want) > 1e-9*want {
			t.Errorf("point %d: %g cm⁻¹; want %g", j, got[j], want)
		}
	}
	axis := []float64{4000, 3999.5}
	if wn := Wavenumbers("wavenumber", axis); &wn[0] != &axis[0] {
		t.Error("a wavenumber axis was copied")
	}
	if Wavenumbers("x", axis) != nil || Wavenumbers("wavelength", []float64{500, 0}) != nil {
		t.Error("wavenumbers without a known unit or of a wavelength of zero")
	}
}
