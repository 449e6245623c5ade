package spectra

// Wavenumbers is the axis in cm⁻¹, the unit in which the rules that know
// where gas lines lie and how wide lines and bands are (the water-vapour
// check, the CO₂ words, the line widths of a residual) are written: the
// axis itself when it is named "wavenumber"; when it is named
// "wavelength", in nm as the readers take it (README, Formats), each value
// converted by ν̃/cm⁻¹ = 10⁷/(λ/nm), the definition of the wavenumber as
// 1/λ in those units. A conversion keeps every point but not the spacing:
// an axis evenly spaced in wavenumber and exported in nm (as 10⁷/ν̃) is
// evenly spaced again, one evenly spaced in nm is not, and the checks
// that need an even spacing test it on what this returns. nil when the
// unit is not known (another name) or a wavelength is not positive.
func Wavenumbers(axisName string, axis []float64) []float64 {
	switch axisName {
	case "wavenumber":
		return axis
	case "wavelength":
		out := make([]float64, len(axis))
		for j, x := range axis {
			if !(x > 0) {
				return nil
			}
			out[j] = 1e7 / x
		}
		return out
	}
	return nil
}
