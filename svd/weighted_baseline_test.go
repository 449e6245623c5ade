package svd

import (
	"math"
	"math/rand/v2"
	"reflect"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The weighted projection is each spectrum's weighted least-squares polynomial fit: the
// residual √a_i (d_i − X β_i) √B with β_i from the normal equations XᵀBX β = XᵀB d_i
// (definition; Draper & Smith, Applied Regression Analysis, 3rd ed. 1998, §9), solved
// here directly on the Legendre matrix.
func TestRemovePolynomialWeightedIsWeightedLeastSquares(t *testing.T) {
	const n, m, order = 4, 40, 2
	rng := rand.New(rand.NewPCG(1, 2))
	axis := make([]float64, m)
	for j := range axis {
		axis[j] = 4000 - 25*float64(j)
	}
	d := mat.NewDense(n, m, nil)
	row, col := make([]float64, n), make([]float64, m)
	for i := range row {
		row[i] = 0.5 + rng.Float64()
	}
	for j := range col {
		col[j] = math.Pow(10, -2*rng.Float64()) // weights over two decades
		for i := 0; i < n; i++ {
			d.Set(i, j, rng.NormFloat64())
		}
	}
	got, err := RemovePolynomialWeighted(Scale(d, row, col), axis, order, col)
	if err != nil {
		t.Fatal(err)
	}
	x := Legendre(axis, order)
	var xtbx mat.Dense
	bx := mat.DenseCopyOf(x)
	for j := 0; j < m; j++ {
		for q := 0; q <= order; q++ {
			bx.Set(j, q, col[j]*x.At(j, q))
		}
	}
	xtbx.Mul(x.T(), bx)
	for i := 0; i < n; i++ {
		di := mat.NewVecDense(m, mat.Row(nil, i, d))
		var rhs, beta, fit mat.VecDense
		rhs.MulVec(bx.T(), di)
		if err := beta.SolveVec(&xtbx, &rhs); err != nil {
			t.Fatal(err)
		}
		fit.MulVec(x, &beta)
		for j := 0; j < m; j++ {
			want := math.Sqrt(row[i]*col[j]) * (di.AtVec(j) - fit.AtVec(j))
			if math.Abs(got.At(i, j)-want) > 1e-10 {
				t.Fatalf("row %d channel %d: %v, want %v", i, j, got.At(i, j), want)
			}
		}
	}
}

// heteroData: the two species of nuisanceData with noise σ_j = 1e-3 except 100× more
// between 1300 and 1360 (a band absorbing 99 % of the light; σ_A ∝ 1/I, PRIMER §8), plus
// extra(i, x); it returns the scaled matrix √B D (row weights 1), the axis and B.
func heteroData(seed uint64, extra func(i int, x float64) float64) (*mat.Dense, []float64, []float64) {
	const n, m = 40, 300
	rng := rand.New(rand.NewPCG(seed, 5))
	axis, col, row := make([]float64, m), make([]float64, m), make([]float64, n)
	for i := range row {
		row[i] = 1
	}
	d := mat.NewDense(n, m, nil)
	for j := range axis {
		axis[j] = 1000 + 2*float64(j)
		sig := 1e-3
		if axis[j] >= 1300 && axis[j] <= 1360 {
			sig = 0.1
		}
		col[j] = 1 / (sig * sig)
		for i := 0; i < n; i++ {
			a := math.Exp(-float64(i) / 12)
			s1 := math.Exp(-0.5 * math.Pow((axis[j]-1200)/15, 2))
			s2 := math.Exp(-0.5 * math.Pow((axis[j]-1450)/20, 2))
			v := a*s1 + (1-a)*s2 + sig*rng.NormFloat64()
			if extra != nil {
				v += extra(i, 2*(axis[j]-1000)/598-1)
			}
			d.Set(i, j, v)
		}
	}
	return Scale(d, row, col), axis, col
}

// With noise 100× larger in a band, the weighted F-test still finds the offset and slope
// of each spectrum (order 1) and no baseline where there is none, and the classification
// on the scaled matrix names the drift a baseline from its unscaled spectrum vector (a
// straight line in D; √b_j times a line in the scaled matrix) and counts the two species
// (definitions of ChooseBaselineOrder and ClassifyFactors; data built from the model).
func TestWeightedBaselineAndClassification(t *testing.T) {
	drift := func(i int, x float64) float64 {
		return 0.01*math.Sin(float64(i)) + 0.005*math.Cos(float64(i)/3)*x
	}
	ds, axis, col := heteroData(1, drift)
	ch, err := ChooseBaselineOrderWeighted(ds, nil, axis, col, 2, 3, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	if ch.Order != 1 {
		t.Errorf("offset and slope per spectrum: order %d, want 1 (steps %+v)", ch.Order, ch.Steps)
	}
	f, rep := factorsAndRank(t, ds)
	ones := make([]float64, 40)
	for i := range ones {
		ones[i] = 1
	}
	cr := ClassifyFactors(ds, f, rep, NuisanceOptions{Axis: axis, Noise: 1, MeanLevel: true, Row: ones, Col: col})
	// The drift is two factors (offset and slope profiles differ); neither may be
	// counted, and the one that is purely a polynomial must be named a baseline.
	baseline := 0
	for _, nf := range cr.Nuisance {
		if nf.Kind == NuisanceBaseline {
			baseline++
		}
	}
	if cr.Estimate != 2 || baseline == 0 {
		t.Errorf("chemical count %d with %d baseline factor(s), want 2 and at least one (nuisance %+v)", cr.Estimate, baseline, cr.Nuisance)
	}
	clean, _, _ := heteroData(2, nil)
	if ch, err = ChooseBaselineOrderWeighted(clean, nil, axis, col, 2, 3, 0.05); err != nil {
		t.Fatal(err)
	}
	if ch.Order != -1 {
		t.Errorf("no baseline: order %d, want none (steps %+v)", ch.Order, ch.Steps)
	}
}

// TestBasisGivenIsTheBasisFormed: a caller's PolyBasis handed to the baseline
// choice and the classification (ChooseBaselineOrderBasis, NuisanceOptions.Basis)
// changes nothing they report, down to the bits (the same call, made once);
// a basis of the wrong order is refused by the choice and ignored by the
// classification. Data as in TestWeightedBaselineAndClassification.
func TestBasisGivenIsTheBasisFormed(t *testing.T) {
	drift := func(i int, x float64) float64 {
		return 0.01*math.Sin(float64(i)) + 0.005*math.Cos(float64(i)/3)*x
	}
	ds, axis, col := heteroData(1, drift)
	basis := PolyBasis(axis, 3, col)
	want, err := ChooseBaselineOrderFrom(ds, nil, nil, axis, col, 2, 3, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	got, err := ChooseBaselineOrderBasis(ds, nil, basis, nil, axis, col, 2, 3, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("with the basis given %+v, formed %+v", got, want)
	}
	if _, err := ChooseBaselineOrderBasis(ds, nil, PolyBasis(axis, 2, col), nil, axis, col, 2, 3, 0.05); err == nil {
		t.Error("a basis of order 2 for order 3 was taken")
	}
	f, rep := factorsAndRank(t, ds)
	n, _ := ds.Dims()
	ones := make([]float64, n)
	for i := range ones {
		ones[i] = 1
	}
	opt := NuisanceOptions{Axis: axis, Noise: 1, MeanLevel: true, Row: ones, Col: col}
	formed := ClassifyFactors(ds, f, rep, opt)
	for _, b := range []*mat.Dense{basis, PolyBasis(axis, 1, col)} {
		opt.Basis = b
		if given := ClassifyFactors(ds, f, rep, opt); !reflect.DeepEqual(given, formed) {
			t.Errorf("classification with a basis given %+v, formed %+v", given, formed)
		}
	}
}

// factorsAndRank decomposes ds and estimates its rank with unit noise, as the
// classification tests above need them.
func factorsAndRank(t *testing.T, ds *mat.Dense) (*Factors, *RankReport) {
	t.Helper()
	f, err := Decompose(ds, DecomposeOptions{})
	if err != nil {
		t.Fatal(err)
	}
	rep, err := EstimateRank(ds, f, RankOptions{Sigma: 1, ReferenceRow: -1})
	if err != nil {
		t.Fatal(err)
	}
	return f, rep
}
