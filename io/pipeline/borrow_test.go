package pipeline

import (
	"math"
	"math/rand/v2"
	"reflect"
	"testing"

	"github.com/bandsolve/bandsolve/io/spectra"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// TestBorrowedDifferenceIsTheAssembledOne: the difference matrix rebuilt from the
// absorbance and each experiment's fixed spectrum (borrowDifference,
// scaledDifferenceInto) is the assembled one to rounding. Reference: the definitions
// A_i = −log10(I_i/I_blank) and ΔA_i = −log10(I_i/I_ref), whose difference
// A_i − ΔA_i = log10(I_blank/I_ref) is the same for every spectrum (Beer–Lambert
// absorbance; PRIMER §1), so ΔA_i = A_i − g with g = A_0 − ΔA_0. Single beams with
// detector noise constant in counts (σ_I = 4 on about 10⁴ counts, 1 % of the light
// through the band at 1200 points); spectra assembled by spectra.Assemble, scaled with
// their own weights for the reference (svd.Scale). A difference matrix that is not
// A − 1 gᵀ (one point moved by 10⁻⁹ absorbance) must not be borrowed, and stays where
// it was.
func TestBorrowedDifferenceIsTheAssembledOne(t *testing.T) {
	n, m := 40, 300
	rng := rand.New(rand.NewPCG(3, 5))
	axis, times := make([]float64, m), make([]float64, n)
	blank := make([]float64, m)
	for j := range axis {
		axis[j] = 1000 + 2*float64(j)
		blank[j] = 1e4 + rng.NormFloat64()*4
	}
	beams := mat.NewDense(n, m, nil)
	for i := range times {
		times[i] = 10 * float64(i)
		for j := range axis {
			band := 2 * math.Exp(-sq((axis[j]-1200)/20)) // absorbance 2 at the band's top
			a := band + 0.3*(1-math.Exp(-times[i]/100))*math.Exp(-sq((axis[j]-1400)/30))
			beams.Set(i, j, 1e4*math.Pow(10, -a)+rng.NormFloat64()*4)
		}
	}
	assemble := func() *spectra.Assembled {
		as, err := spectra.Assemble(&spectra.Series{Axis: axis, Times: times, Values: mat.DenseCopyOf(beams)}, spectra.AssembleOptions{Kind: spectra.SingleBeam, Blank: blank, Pre: 3})
		if err != nil {
			t.Fatal(err)
		}
		if as.Absolute == nil || as.Difference == nil || as.DifferenceWeights == nil {
			t.Fatal("assembly gave no absorbance, difference or weights")
		}
		return as
	}
	result := func(as *spectra.Assembled) *Result {
		return &Result{D: as.Absolute, DiffWeights: as.DifferenceWeights, Times: times, Axis: axis,
			Experiments: []*Experiment{{Assembled: as, Rows: n}}}
	}

	as := assemble()
	r := result(as)
	w := as.DifferenceWeights
	want := svd.Scale(as.Difference, w.Row, w.Col)
	dd := as.Difference
	spare, g := borrowDifference(r, []*mat.Dense{dd})
	if spare == nil {
		t.Fatal("the assembled difference matrix was not recognized as A − 1 gᵀ")
	}
	if as.Difference != nil || r.diffMapRows == nil {
		t.Error("the experiment still holds its difference matrix, or the map rows were not kept")
	}
	got, scr := scaledDifferenceInto(spare, r, g)
	// Its screen, made while the rows were written, is the one made by
	// reading them again (svd.Screen.Row): the sum of squares in index order,
	// bit for bit, and the same rows of zeros and check.
	reread := svd.NewScreen(n, m, true)
	for i := 0; i < n; i++ {
		reread.Row(i, got.RawRowView(i))
	}
	if !reflect.DeepEqual(scr, reread) || math.Float64bits(scr.Sum()) != math.Float64bits(reread.Sum()) {
		t.Errorf("screen made while writing %+v, by reading the rows again %+v", scr, reread)
	}
	// And with a value that is not finite, which the screen must report
	// where it is, as reading the row again does (infinities: a NaN's sum of
	// squares, NaN, would not compare equal; svd's TestWrittenScreenIsRowByRow
	// has one).
	for _, bad := range []float64{math.Inf(1), math.Inf(-1)} {
		spoilt := *r
		spoilt.D = mat.DenseCopyOf(r.D)
		spoilt.D.Set(n/3, m/2, bad)
		got, scr := scaledDifferenceInto(mat.NewDense(n, m, nil), &spoilt, g)
		reread := svd.NewScreen(n, m, true)
		for i := 0; i < n; i++ {
			reread.Row(i, got.RawRowView(i))
		}
		if !reflect.DeepEqual(scr, reread) {
			t.Errorf("%v in the data: screen made while writing %+v, by reading the rows again %+v", bad, scr, reread)
		}
	}
	worst := 0.0
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			s := math.Sqrt(w.Row[i] * w.Col[j])
			worst = math.Max(worst, math.Abs(got.At(i, j)-want.At(i, j))/s)
		}
	}
	if worst > 1e-13 {
		t.Errorf("rebuilt differences differ from the assembled ones by %g absorbance", worst)
	}

	as = assemble()
	as.Difference.Set(n/2, m/3, as.Difference.At(n/2, m/3)+1e-9)
	r = result(as)
	if spare, _ := borrowDifference(r, []*mat.Dense{as.Difference}); spare != nil || as.Difference == nil {
		t.Error("a difference matrix that is not A − 1 gᵀ was borrowed")
	}
}

// differenceRow is the point test |a_j − g_j − b_j| ≤ 2⁻⁴⁶ (1 + |a_j| + |g_j| +
// |b_j|) at every point (its definition, written out per point here), on rows of
// absorbance size and of 10⁶, with differences from none to a few hundred ulps of
// the bound, and with NaN and ±Inf among the values.
func TestDifferenceRowIsThePointTest(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 9))
	special := []float64{math.NaN(), math.Inf(1), math.Inf(-1), 0, math.Copysign(0, -1)}
	for trial := 0; trial < 20000; trial++ {
		m := 1 + rng.IntN(9)
		size := []float64{1, 1e6}[trial%2]
		a, b, g := make([]float64, m), make([]float64, m), make([]float64, m)
		for j := range a {
			a[j] = size * rng.NormFloat64()
			g[j] = size * rng.NormFloat64()
			b[j] = a[j] - g[j]
			if rng.IntN(3) == 0 {
				bound := 0x1p-46 * (1 + math.Abs(a[j]) + math.Abs(g[j]) + math.Abs(b[j]))
				b[j] += bound * (0.5 + rng.Float64()) * float64(1-2*rng.IntN(2))
			}
			if rng.IntN(50) == 0 {
				[][]float64{a, b, g}[rng.IntN(3)][j] = special[rng.IntN(len(special))]
			}
		}
		want := true
		for j := range a {
			if math.Abs(a[j]-g[j]-b[j]) > 0x1p-46*(1+math.Abs(a[j])+math.Abs(g[j])+math.Abs(b[j])) {
				want = false
			}
		}
		if got := differenceRow(a, b, g); got != want {
			t.Fatalf("a %v, b %v, g %v: differenceRow %v, the point test %v", a, b, g, got, want)
		}
	}
}

// differenceRows over many blocks of rows answers as differenceRow row after
// row does (its definition): true when every row of dd is d's less g, false
// when one row anywhere fails, in the first block, a middle one or the last,
// and for a range of rows that starts past the first row.
func TestDifferenceRowsIsEveryRow(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	n, m := 300, 50
	d, dd := mat.NewDense(n, m, nil), mat.NewDense(n, m, nil)
	g := make([]float64, m)
	for j := range g {
		g[j] = rng.NormFloat64()
	}
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			a := rng.NormFloat64()
			d.Set(i, j, a)
			dd.Set(i, j, a-g[j])
		}
	}
	every := func(lo, hi int) bool {
		for i := lo; i < hi; i++ {
			if !differenceRow(d.RawRowView(i), dd.RawRowView(i), g) {
				return false
			}
		}
		return true
	}
	for _, bad := range []int{-1, 0, 130, 299} {
		if bad >= 0 {
			dd.Set(bad, 17, dd.At(bad, 17)+1e-9)
		}
		for _, span := range [][2]int{{0, n}, {70, n}, {0, 129}} {
			if got, want := differenceRows(d, dd, g, span[0], span[1]), every(span[0], span[1]); got != want {
				t.Errorf("row %d changed, rows %d…%d: %v, row by row %v", bad, span[0], span[1]-1, got, want)
			}
		}
		if bad >= 0 {
			dd.Set(bad, 17, d.At(bad, 17)-g[17])
		}
	}
}
