package spectra

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func series(rows ...[]float64) *Series {
	n, m := len(rows), len(rows[0])
	s := &Series{AxisName: "wavenumber", Values: mat.NewDense(n, m, nil)}
	for j := 0; j < m; j++ {
		s.Axis = append(s.Axis, 2000-float64(j))
	}
	for i, r := range rows {
		s.Values.SetRow(i, r)
		s.Times = append(s.Times, float64(10*i))
		s.Names = append(s.Names, "row")
	}
	return s
}

// Definition of absorbance (IUPAC Gold Book, "absorbance"): A = −log10 T with
// T = I/I₀, so T = 10 % gives A = 1, T = 1 % gives A = 2, T = 100 % gives 0.
func TestAbsorbanceDefinition(t *testing.T) {
	blank := []float64{1000, 1000, 1000}
	s := series([]float64{100, 10, 1000}, []float64{100, 10, 1000})
	a, err := Assemble(s, AssembleOptions{Kind: SingleBeam, Blank: blank, Reference: Reference{Mean: 1}})
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{1, 2, 0}
	for j, w := range want {
		if got := a.Absolute.At(0, j); math.Abs(got-w) > 1e-15 {
			t.Errorf("A at T=%g: got %v, want %v", s.Values.At(0, j)/blank[j], got, w)
		}
	}
}

// Common practice: single beams that did not change ratio to a flat line at
// exactly zero absorbance, and the difference does not depend on the blank
// (ΔA = A(t) − A(ref) = −log10(I(t)/I(ref)): the blank cancels, a ratio of ratios).
func TestIdenticalBeamsGiveZeroAndBlankCancels(t *testing.T) {
	beam := []float64{812.5, 640.25, 77.125, 3.5}
	s := series(beam, beam, beam)
	a, err := Assemble(s, AssembleOptions{Kind: SingleBeam, Reference: Reference{Mean: 1}})
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < 3; i++ {
		for j := range beam {
			if v := a.Difference.At(i, j); v != 0 || math.Signbit(v) {
				t.Fatalf("ΔA[%d,%d] = %v, want exactly +0", i, j, v)
			}
		}
	}
	// Changed beams: ΔA with and without a blank must agree.
	s2 := series(beam, []float64{700, 600, 70, 3})
	blank := []float64{900, 800, 100, 5}
	withBlank, err := Assemble(s2, AssembleOptions{Kind: SingleBeam, Blank: blank, Reference: Reference{Mean: 1}})
	if err != nil {
		t.Fatal(err)
	}
	without, err := Assemble(s2, AssembleOptions{Kind: SingleBeam, Reference: Reference{Mean: 1}})
	if err != nil {
		t.Fatal(err)
	}
	for j := range beam {
		d1 := withBlank.Absolute.At(1, j) - withBlank.Absolute.At(0, j)
		d2 := without.Difference.At(1, j)
		if math.Abs(d1-d2) > 1e-14 {
			t.Errorf("channel %d: A(t)−A(ref) = %v but −log10(I/Iref) = %v", j, d1, d2)
		}
		if want := -math.Log10(s2.Values.At(1, j) / beam[j]); math.Abs(d2-want) > 1e-15 {
			t.Errorf("channel %d: ΔA = %v, definition gives %v", j, d2, want)
		}
	}
}

// mean:N reference: the average single beam of the first N spectra.
func TestMeanReference(t *testing.T) {
	s := series([]float64{90, 50}, []float64{110, 50}, []float64{10, 5})
	a, err := Assemble(s, AssembleOptions{Kind: SingleBeam, Reference: Reference{Mean: 2}})
	if err != nil {
		t.Fatal(err)
	}
	// Reference = (90+110)/2 = 100 and 50: T = 10/100 → ΔA = 1 by definition.
	if got := a.Difference.At(2, 0); math.Abs(got-1) > 1e-15 {
		t.Errorf("ΔA = %v, want 1", got)
	}
	if len(a.ReferenceRows) != 2 {
		t.Errorf("reference rows %v, want the first two", a.ReferenceRows)
	}
}

// AllFinite agrees with Go's math.IsNaN and math.IsInf (the reference) on
// rows of every length up to 9 with one NaN, +Inf or −Inf at any position,
// and with none among the largest, smallest and subnormal finite values.
func TestAllFinite(t *testing.T) {
	edge := []float64{math.MaxFloat64, -math.MaxFloat64, math.SmallestNonzeroFloat64, math.Copysign(0, -1), 1e-310, 3}
	for n := 0; n <= 9; n++ {
		row := make([]float64, n)
		for j := range row {
			row[j] = edge[j%len(edge)]
		}
		if !AllFinite(row) {
			t.Fatalf("finite row %v reported as not finite", row)
		}
		for j := range row {
			for _, bad := range []float64{math.NaN(), math.Inf(1), math.Inf(-1)} {
				r := append([]float64(nil), row...)
				r[j] = bad
				if AllFinite(r) {
					t.Fatalf("row %v reported as finite", r)
				}
			}
		}
	}
}
