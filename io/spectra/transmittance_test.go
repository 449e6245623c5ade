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
// scale taken said; a T ≤ 0, which has no absorbance, refused with where it lies.
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
	s := &Series{Source: "t.csv", AxisName: "wavenumber", Axis: []float64{1000, 1001}, Names: []string{"a.csv", "b.csv"}, Values: mat.NewDense(2, 2, []float64{90, 80, 70, 0})}
	_, _, err := TransmittanceToAbsorbance(s)
	if err == nil || !strings.Contains(err.Error(), "transmittance 0 at wavenumber 1001 in b.csv is not positive") {
		t.Errorf("T = 0: %v, want it refused with its place", err)
	}
	// Counts of a single beam are no transmittance, per cent or not.
	s = &Series{Source: "beams.csv", AxisName: "wavenumber", Axis: []float64{1000, 1001}, Values: mat.NewDense(1, 2, []float64{3.1e4, 2.9e4})}
	if _, _, err := TransmittanceToAbsorbance(s); err == nil || !strings.Contains(err.Error(), "is not a transmittance") {
		t.Errorf("counts: %v, want them refused", err)
	}
}
