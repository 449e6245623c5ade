package spectra

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TransmittanceToAbsorbance against the definition A = −log10 T (IUPAC Gold Book,
// "absorbance"), T in per cent divided by 100 first: values of T chosen so that A is
// exact in decimal (1, 0.1, 0.01 → 0, 1, 2), as a fraction and in per cent, and the
// scale taken said; a T ≤ 0, which has no absorbance, is a point without light, or
// refused with where it lies when a quarter of the values are.
func TestTransmittanceToAbsorbance(t *testing.T) {
	for _, c := range []struct {
		name    string
		values  []float64
		percent bool
	}{
		{"fraction", []float64{1, 0.1, 0.01, 0.5}, false},
		{"per cent", []float64{100, 10, 1, 50}, true},
	} {
		s := &Series{Source: "t.csv", AxisName: "wavenumber", Axis: []float64{1000, 1001}, Values: mat.NewDense(2, 2, append([]float64(nil), c.values...))}
		percent, largest, err := TransmittanceToAbsorbance(s)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		if percent != c.percent || largest != c.values[0] {
			t.Errorf("%s: per cent %v (largest %g), want %v (%g)", c.name, percent, largest, c.percent, c.values[0])
		}
		want := []float64{0, 1, 2, -math.Log10(0.5)}
		for k, w := range want {
			if got := s.Values.RawMatrix().Data[k]; math.Abs(got-w) > 1e-15 {
				t.Errorf("%s: value %d: A = %v, want %v", c.name, k, got, w)
			}
		}
	}
	// A few T ≤ 0 are points without light (a transmittance at no light is
	// noise about zero: common practice), +Inf for the assembly to make
	// blind; more than a quarter are no transmittance at all, refused with
	// the first one's place, as single beams are (checkPositive).
	s := &Series{Source: "t.csv", AxisName: "wavenumber", Axis: []float64{1000, 1001}, Names: []string{"a.csv", "b.csv"}, Values: mat.NewDense(2, 2, []float64{90, 0, 70, -0.5})}
	_, _, err := TransmittanceToAbsorbance(s)
	if err == nil || !strings.Contains(err.Error(), "transmittance 0 at wavenumber 1001 in a.csv is not positive, and 2 of the 4 values are not") {
		t.Errorf("T = 0: %v, want it refused with its place", err)
	}
	s = &Series{Source: "t.csv", AxisName: "wavenumber", Axis: []float64{1000, 1001}, Values: mat.NewDense(2, 2, []float64{0.1, 0.1, 0.01, 0})}
	if _, _, err := TransmittanceToAbsorbance(s); err != nil {
		t.Fatalf("one T = 0 of 4: %v", err)
	}
	if got := s.Values.RawMatrix().Data; got[2] != 2 || !math.IsInf(got[3], 1) {
		t.Errorf("one T = 0 of 4: A = %v, want 2 and +Inf (no light) where T is 0.01 and 0", got[2:])
	}
	// Counts of a single beam are no transmittance, per cent or not.
	s = &Series{Source: "beams.csv", AxisName: "wavenumber", Axis: []float64{1000, 1001}, Values: mat.NewDense(1, 2, []float64{3.1e4, 2.9e4})}
	if _, _, err := TransmittanceToAbsorbance(s); err == nil || !strings.Contains(err.Error(), "is not a transmittance") {
		t.Errorf("counts: %v, want them refused", err)
	}
}
