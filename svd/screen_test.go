package svd

import (
	"fmt"
	"math"
	"reflect"
	"testing"

	few "github.com/bandsolve/bandsolve/internal/product"
	"gonum.org/v1/gonum/mat"
)

// A screen of a matrix's rows stands for the matrix in EstimateRank and ClassifyFactors
// when the factors and the noise level are given: the report and the classification
// equal, field for field, those of the matrix itself (the definition of the screen: the
// finiteness test and the rows of zeros EstimateRank reads), with a row of zeros (taken
// for the reference row, with a warning) and without; a non-finite entry gives the
// matrix's own error; without the noise level the screen is refused.
func TestScreenStandsForTheMatrix(t *testing.T) {
	rng := newRNG(11)
	for _, zero := range []int{-1, 17} {
		d := noisyBilinear(rng, 60, 300, 3, 1e-3)
		if zero >= 0 {
			d.SetRow(zero, make([]float64, 300))
		}
		f, err := Decompose(d, DecomposeOptions{Method: MethodRandomized, MaxFactors: 8})
		if err != nil {
			t.Fatal(err)
		}
		opt := RankOptions{Sigma: 1e-3, ReferenceRow: -1}
		want, err := EstimateRank(d, f, opt)
		if err != nil {
			t.Fatal(err)
		}
		opt.Screen = ScreenRows(60, 300, func(i int, buf []float64) { copy(buf, d.RawRowView(i)) })
		got, err := EstimateRank(nil, f, opt)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(got, want) {
			t.Errorf("zero row %d: screened %+v, matrix %+v", zero, got, want)
		}
		if zero >= 0 && len(got.Warnings) == 0 {
			t.Errorf("zero row %d: no warning", zero)
		}
		nopt := NuisanceOptions{Noise: 1e-3}
		if a, b := ClassifyFactors(nil, f, got, nopt), ClassifyFactors(d, f, want, nopt); !reflect.DeepEqual(a, b) {
			t.Errorf("zero row %d: classification screened %+v, matrix %+v", zero, a, b)
		}
	}
	d := noisyBilinear(rng, 60, 300, 3, 1e-3)
	f, _ := Decompose(d, DecomposeOptions{Method: MethodRandomized, MaxFactors: 8})
	d.Set(41, 7, math.Inf(-1))
	d.Set(52, 3, math.NaN())
	_, want := EstimateRank(d, f, RankOptions{Sigma: 1e-3, ReferenceRow: -1})
	scr := ScreenRows(60, 300, func(i int, buf []float64) { copy(buf, d.RawRowView(i)) })
	_, got := EstimateRank(nil, f, RankOptions{Sigma: 1e-3, ReferenceRow: -1, Screen: scr})
	if want == nil || got == nil || got.Error() != want.Error() {
		t.Errorf("non-finite entry: screened error %v, matrix error %v", got, want)
	}
	clean := ScreenRows(60, 300, func(i int, buf []float64) {})
	if _, err := EstimateRank(nil, f, RankOptions{ReferenceRow: -1, Screen: clean}); err == nil {
		t.Error("a screen without the noise level was taken")
	}
}

// The baseline order chosen from a product D Q given by the caller is the one chosen
// from D alone (ChooseBaselineOrderWeighted's definition: the same product formed
// inside), and a product of the wrong width is refused.
func TestChooseBaselineOrderFromProduct(t *testing.T) {
	rng := newRNG(12)
	n, m := 40, 200
	axis := make([]float64, m)
	col := make([]float64, m)
	for j := range axis {
		axis[j] = 4000 - 5*float64(j)
		col[j] = math.Pow(10, -rng.Float64())
	}
	d := noisyBilinear(rng, n, m, 2, 1e-3)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			x := float64(j) / float64(m)
			d.Set(i, j, d.At(i, j)+1e-2*float64(i%5)*x)
		}
	}
	f, err := Decompose(d, DecomposeOptions{Method: MethodRandomized, MaxFactors: 12})
	if err != nil {
		t.Fatal(err)
	}
	want, err := ChooseBaselineOrderWeighted(d, f, axis, col, 2, 3, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	dq := few.Mul(d, PolyBasis(axis, 3, col))
	got, err := ChooseBaselineOrderFrom(d, dq, f, axis, col, 2, 3, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("from the product %+v, from D %+v", got, want)
	}
	if want.Order < 1 {
		t.Errorf("the drift of order 1 was not found (order %d)", want.Order)
	}
	if _, err := ChooseBaselineOrderFrom(d, dq.Slice(0, n, 0, 2).(*mat.Dense), f, axis, col, 2, 3, 0.05); err == nil {
		t.Error("a product of two columns was taken for order 3")
	}
}

// A screen made as the matrix is written (ScaleIntoScreened, with the sum of squares)
// stands for Decompose's own passes: the scaled matrix is ScaleInto's bit for bit and the
// factors, FrobeniusSq included, equal those of Decompose reading the matrix (the
// definition: ‖D‖²_F summed row by row in index order); a non-finite entry gives the
// matrix's own error; a screen of other dimensions, or with a row screened out of order,
// is not used (the matrix is read: the same factors).
func TestDecomposeTakesTheScreen(t *testing.T) {
	rng := newRNG(13)
	n, m := 50, 400
	d := noisyBilinear(rng, n, m, 3, 1e-3)
	row, col := make([]float64, n), make([]float64, m)
	for i := range row {
		row[i] = 1e6 * (1 + rng.Float64())
	}
	for j := range col {
		col[j] = math.Pow(10, -2*rng.Float64())
	}
	plain := ScaleInto(mat.NewDense(n, m, nil), d, row, col)
	scaled, scr := ScaleIntoScreened(mat.NewDense(n, m, nil), d, row, col)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			if math.Float64bits(scaled.At(i, j)) != math.Float64bits(plain.At(i, j)) {
				t.Fatalf("entry %d,%d: screened scaling %v, ScaleInto %v", i, j, scaled.At(i, j), plain.At(i, j))
			}
		}
	}
	opt := DecomposeOptions{Method: MethodRandomized, MaxFactors: 6}
	want, err := Decompose(scaled, opt)
	if err != nil {
		t.Fatal(err)
	}
	broken := NewScreen(n, m, true)
	broken.Row(1, scaled.RawRowView(1))
	// With its sum of squares (of all but the last column), so that a screen of
	// other dimensions taken would show in FrobeniusSq.
	wrong := NewScreen(n, m-1, true)
	for i := 0; i < n; i++ {
		wrong.Row(i, scaled.RawRowView(i)[:m-1])
	}
	for name, s := range map[string]*Screen{"screened": scr, "out of order": broken, "other dimensions": wrong} {
		opt.Screen = s
		got, err := Decompose(scaled, opt)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(got, want) || math.Float64bits(got.FrobeniusSq) != math.Float64bits(want.FrobeniusSq) {
			t.Errorf("%s: factors differ from those of the matrix read (‖D‖² %v, want %v)", name, got.FrobeniusSq, want.FrobeniusSq)
		}
	}
	bad := mat.DenseCopyOf(scaled)
	bad.Set(7, 11, math.NaN())
	_, wantErr := Decompose(bad, DecomposeOptions{})
	s := NewScreen(n, m, true)
	for i := 0; i < n; i++ {
		s.Row(i, bad.RawRowView(i))
	}
	_, gotErr := Decompose(bad, DecomposeOptions{Screen: s})
	if wantErr == nil || gotErr == nil || gotErr.Error() != wantErr.Error() {
		t.Errorf("non-finite entry: with the screen %v, reading the matrix %v", gotErr, wantErr)
	}
}

// A screen of a matrix known to be finite, given its rows of zeros (ScreenFinite),
// is the screen Row makes row after row (the definition: no error, the same rows
// of zeros, no sum), with a row of zeros and without; Bound is √(Σ d_ij²), at least
// every |d_ij| (Cauchy–Schwarz: one square is at most the sum), only for a
// complete screen of the matrix's size with its sum and every entry finite.
func TestScreenFiniteAndBound(t *testing.T) {
	rng := newRNG(14)
	n, m := 40, 120
	for _, zero := range []int{-1, 0, 23} {
		d := noisyBilinear(rng, n, m, 3, 1e-3)
		if zero >= 0 {
			d.SetRow(zero, make([]float64, m))
		}
		want := NewScreen(n, m, false)
		for i := 0; i < n; i++ {
			want.Row(i, d.RawRowView(i))
		}
		got := ScreenFinite(n, m, func(i int) bool { return allZero(d.RawRowView(i)) })
		if !reflect.DeepEqual(got, want) {
			t.Errorf("zero row %d: ScreenFinite %+v, row by row %+v", zero, got, want)
		}
	}
	d := noisyBilinear(rng, n, m, 3, 1e-3)
	d.Set(3, 5, 40) // the largest entry by far
	s := NewScreen(n, m, true)
	for i := 0; i < n; i++ {
		s.Row(i, d.RawRowView(i))
	}
	b := s.Bound(n, m)
	if want := math.Sqrt(frobeniusSq(d)); b != want || b < 40 {
		t.Errorf("Bound %v, want √‖D‖² = %v ≥ 40", b, want)
	}
	unsummed := ScreenFinite(n, m, func(int) bool { return false })
	bad := NewScreen(n, m, true)
	for i := 0; i < n; i++ {
		row := d.RawRowView(i)
		if i == 7 {
			row = append([]float64{math.NaN()}, row[1:]...)
		}
		bad.Row(i, row)
	}
	for name, c := range map[string]float64{"other size": s.Bound(n, m+1), "no sum": unsummed.Bound(n, m),
		"non-finite entry": bad.Bound(n, m), "nil": (*Screen)(nil).Bound(n, m)} {
		if !math.IsInf(c, 1) {
			t.Errorf("%s: Bound %v, want +Inf", name, c)
		}
	}
}

// A screen made while the rows are written (ScaleIntoScreened, through
// Screen.Written) is the screen Row makes reading the written rows again, bit
// for bit: the sum of squares is the same additions in the same order (the
// definition ‖D‖²_F = Σ_i Σ_j d_ij², summed row by row in index order), the
// rows of zeros are the same, and the first non-finite entry gives the same
// error. Rows of zeros, a NaN, an infinity and an entry whose square
// overflows are placed among ordinary rows.
func TestWrittenScreenIsRowByRow(t *testing.T) {
	rng := newRNG(29)
	n, m := 40, 301
	d := noisyBilinear(rng, n, m, 3, 1e-3)
	row, col := make([]float64, n), make([]float64, m)
	for i := range row {
		row[i] = 1e4 * (1 + rng.Float64())
	}
	for j := range col {
		col[j] = math.Pow(10, -2*rng.Float64())
	}
	for j := 0; j < m; j++ {
		d.Set(3, j, 0)
		d.Set(4, j, math.Copysign(0, -1))
	}
	cases := map[string]func(d *mat.Dense){
		"finite":          func(*mat.Dense) {},
		"NaN":             func(d *mat.Dense) { d.Set(17, 250, math.NaN()) },
		"infinity":        func(d *mat.Dense) { d.Set(21, 0, math.Inf(-1)) },
		"square overflow": func(d *mat.Dense) { d.Set(30, 77, 1e300) },
	}
	for name, spoil := range cases {
		dd := mat.DenseCopyOf(d)
		spoil(dd)
		scaled, got := ScaleIntoScreened(mat.NewDense(n, m, nil), dd, row, col)
		want := NewScreen(n, m, true)
		for i := 0; i < n; i++ {
			want.Row(i, scaled.RawRowView(i))
		}
		if math.Float64bits(got.frob) != math.Float64bits(want.frob) || !reflect.DeepEqual(got.zero, want.zero) ||
			fmt.Sprint(got.err) != fmt.Sprint(want.err) || got.next != want.next {
			t.Errorf("%s: written screen %+v, row by row %+v", name, got, want)
		}
	}
}
