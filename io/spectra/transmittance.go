package spectra

import (
	"fmt"
	"math"
)

// percentAbove is the largest value above which transmittance is taken to be
// in per cent: a fraction never exceeds 1 but for noise at full transmission,
// a percentage of a measured spectrum reaches well above 1.5 over its
// transparent regions (common practice: exports say T or %T, the numbers do
// not).
const percentAbove = 1.5

// PercentAbove and PercentMost are percentAbove and percentMost for
// callers that tell whether values look like a transmittance at all.
const (
	PercentAbove = percentAbove
	PercentMost  = percentMost
)

// percentMost is the largest value taken for a transmittance at all: per
// cent with room for noise and a baseline above full transmission (the
// real urethane exports reach 101.8 % where the crystal absorbs nothing).
const percentMost = 200

// TransmittanceToAbsorbance turns the series' transmittance into absorbance
// in place, A = −log10 T (IUPAC Gold Book, "absorbance"), T divided by 100
// first when it is in per cent (its largest finite value above
// percentAbove). It returns whether it took per cent and that value. A value
// T ≤ 0 has no absorbance: where no light reaches the detector a
// transmittance is noise about zero, so a few such values are points without
// light, +Inf here, which the assembly makes blind (absorbanceNoise); when
// more than a quarter of the values are, the values are no transmittance and
// are refused with where the first lies, as are values above percentMost.
func TransmittanceToAbsorbance(s *Series) (percent bool, largest float64, err error) {
	n, m := s.Values.Dims()
	largest = math.Inf(-1)
	dark := 0
	for i := 0; i < n; i++ {
		for _, v := range s.Values.RawRowView(i)[:m] {
			if !math.IsNaN(v) && !math.IsInf(v, 0) {
				largest = math.Max(largest, v)
			}
			if v <= 0 {
				dark++
			}
		}
	}
	scale := 1.0
	if largest > percentAbove {
		percent, scale = true, 0.01
	}
	if largest > percentMost {
		return false, 0, inputErr(s.Source, 0, "if these are single-beam intensities, use --kind single-beam",
			"the largest value, %g, is not a transmittance (a fraction up to 1 or a percentage up to 100, a little above with noise)", largest)
	}
	for i := 0; i < n; i++ {
		row := s.Values.RawRowView(i)[:m]
		for j, v := range row {
			a, ok := absorbanceOf(v * scale)
			switch {
			case ok || math.IsNaN(v): // a missing value stays missing
			case dark <= n*m/4:
				a = math.Inf(1) // no light: a blind point
			default:
				where := fmt.Sprintf("spectrum %d", i+1)
				if i < len(s.Names) && s.Names[i] != "" {
					where = s.Names[i]
				}
				return false, 0, inputErr(s.Source, 0, needPositiveT,
					"transmittance %g at %s %g in %s is not positive, and %d of the %d values are not", v, s.AxisName, s.Axis[j], where, dark, n*m)
			}
			row[j] = a
		}
	}
	s.scan = nil // the values changed in place
	return percent, largest, nil
}

// absorbanceOf is A = −log10 T of a transmittance as a fraction (IUPAC Gold
// Book, "absorbance"), and whether T > 0, without which it has none. The
// JCAMP-DX reader and TransmittanceToAbsorbance both read T through it.
func absorbanceOf(t float64) (float64, bool) {
	if !(t > 0) {
		return math.NaN(), false
	}
	return -math.Log10(t), true
}

// needPositiveT is what to do about a transmittance ≤ 0.
const needPositiveT = "absorbance −log10 T needs T > 0: check that the values are a transmittance, cut that range with --exclude LO:HI, or export absorbance"
