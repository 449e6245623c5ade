package spectra

import (
	"fmt"
	"strings"
)

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

// InUnitOf puts a single spectrum read for a series (a blank, a reference,
// a known or a vapour spectrum) in the unit of the series' axis and
// returns it with the notes that say how its axis was read, each starting
// with what (`blank "b.csv"`): its own (a wavelength in µm read as nm,
// Spectrum.Note, in the words of the series' own) and, when it gives a
// wavelength (nm) and the series a wavenumber (cm⁻¹), or the reverse, the
// conversion of each point by ν̃/cm⁻¹ = 10⁷/(λ/nm) (Wavenumbers; the
// relation is its own inverse). Only units a title or ##XUNITS stated are
// converted, on both sides (AxisGuessed), and only when the axes do not
// already match (sameAxis): a name guessed from the values never turns
// matching numbers into others. sp itself is left as it is.
func InUnitOf(sp *Spectrum, ser *Series, what string) (*Spectrum, []string) {
	convert := !sp.AxisGuessed && !ser.AxisGuessed && otherLengthUnit(sp.AxisName, ser.AxisName) && !sameAxis(sp.Axis, ser.Axis)
	var conv []float64
	if convert {
		if conv = Wavenumbers("wavelength", sp.Axis); conv == nil {
			convert = false // a wavelength ≤ 0 has no wavenumber: left to the axis check
		}
	}
	var notes []string
	if sp.Note != "" {
		note := strings.TrimSuffix(sp.Note, nmIsOutputUnit)
		switch {
		case convert:
			note += ", then " + conversionNote(ser.AxisName)
		case ser.AxisName == "wavelength":
			note += nmIsOutputUnit
		}
		notes = append(notes, what+": "+note)
	} else if convert {
		notes = append(notes, fmt.Sprintf("%s: its %s axis (%s) is %s", what, sp.AxisName, lengthUnit(sp.AxisName), conversionNote(ser.AxisName)))
	}
	if !convert {
		return sp, notes
	}
	out := *sp
	out.AxisName, out.Axis, out.Note = ser.AxisName, conv, ""
	return &out, notes
}

// otherLengthUnit says a and b are the two axes 10⁷/x relates: a
// wavelength in nm and a wavenumber in cm⁻¹.
func otherLengthUnit(a, b string) bool {
	return a != b && (a == "wavelength" || a == "wavenumber") && (b == "wavelength" || b == "wavenumber")
}

// lengthUnit is the unit the readers give an axis of that name.
func lengthUnit(axisName string) string {
	if axisName == "wavelength" {
		return "nm"
	}
	return "cm⁻¹"
}

// conversionNote says how a spectrum's axis was put in the unit of the
// series' axis named to.
func conversionNote(to string) string {
	if to == "wavenumber" {
		return "put on the data's wavenumber axis (cm⁻¹) point by point, ν̃/cm⁻¹ = 10⁷/(λ/nm)"
	}
	return "put on the data's wavelength axis (nm) point by point, λ/nm = 10⁷/(ν̃/cm⁻¹)"
}
