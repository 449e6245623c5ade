package spectra

import (
	"strings"
	"testing"
)

// Consume gives the same matrices as a copying assembly (definition of
// absorbance and difference absorbance, as in TestAbsorbanceDefinition) for
// every kind, with and without a blank, and hands the values over instead of
// keeping them.
func TestAssembleConsumeSameValues(t *testing.T) {
	rows := [][]float64{{100, 10, 1000, 400}, {90, 12, 800, 410}, {80, 15, 700, 420}}
	// Single beams twice: with a blank (the absolute matrix takes the
	// values' place) and without (the differences do).
	for c, kind := range []Kind{SingleBeam, SingleBeam, Absorbance, Difference} {
		var blank []float64
		if c == 0 {
			blank = []float64{1000, 1000, 1000, 900}
		}
		opt := AssembleOptions{Kind: kind, Blank: blank, Reference: Reference{Mean: 1}}
		want, err := Assemble(series(rows...), opt)
		if err != nil {
			t.Fatal(err)
		}
		s := series(rows...)
		opt.Consume = true
		got, err := Assemble(s, opt)
		if err != nil {
			t.Fatal(err)
		}
		if s.Values != nil {
			t.Errorf("%s: values kept after Consume", kind)
		}
		for i := range rows {
			for j := range rows[0] {
				if want.Difference.At(i, j) != got.Difference.At(i, j) {
					t.Errorf("%s: ΔA %d,%d: %v consumed, %v copied", kind, i, j, got.Difference.At(i, j), want.Difference.At(i, j))
				}
				if want.Absolute != nil && want.Absolute.At(i, j) != got.Absolute.At(i, j) {
					t.Errorf("%s: A %d,%d: %v consumed, %v copied", kind, i, j, got.Absolute.At(i, j), want.Absolute.At(i, j))
				}
			}
		}
	}
}

// A blank or reference file with another number of points than the data is
// refused with one line naming both counts, instead of being read as zeros
// (shorter) or written past a row (longer): a ratio needs one value per
// channel (absorbance definition, IUPAC Gold Book "absorbance").
func TestAssembleRefusesSpectraOffTheDataAxis(t *testing.T) {
	rows := [][]float64{{100, 10, 1000, 400}, {90, 12, 800, 410}}
	for _, c := range []struct {
		name string
		opt  AssembleOptions
		want string
	}{
		{"short blank", AssembleOptions{Kind: SingleBeam, Blank: []float64{1000, 1000, 1000}, BlankSource: "bg.csv"}, "bg.csv has 3 points and the data 4"},
		{"long blank", AssembleOptions{Kind: SingleBeam, Blank: []float64{1, 2, 3, 4, 5}}, "blank has 5 points and the data 4"},
		{"short reference", AssembleOptions{Kind: Absorbance, Reference: Reference{File: &Spectrum{Values: []float64{1, 2}}}}, "reference spectrum has 2 points and the data 4"},
	} {
		_, err := Assemble(series(rows...), c.opt)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one containing %q", c.name, err, c.want)
		}
	}
}
