package pipeline

import (
	"math"
	"math/rand/v2"
	"reflect"
	"testing"

	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// The baseline subtracted in place, and into a matrix of its own, is bit
// for bit D − B Pᵀ as mcr.SubtractBaseline forms it (its definition: one
// gonum product, one difference), for one to nine baseline terms (the
// kernel's tail alone, one pass of its four lanes, both) and with zeros of
// either sign in D, B and P, where a sum's sign of zero decides the sign of
// the difference.
func TestSubtractBaselineInPlaceMatchesProduct(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, n := range []int{1, 63, 64, 65, 200} {
		for _, sz := range [][2]int{{1, 37}, {2, 37}, {3, 37}, {4, 37}, {4, 300}, {5, 41}, {7, 41}, {8, 41}, {9, 300}} {
			nb, m := sz[0], sz[1]
			d, b, p := mat.NewDense(n, m, nil), mat.NewDense(n, nb, nil), mat.NewDense(m, nb, nil)
			for _, x := range []*mat.Dense{d, b, p} {
				raw := x.RawMatrix().Data
				for i := range raw {
					switch rng.IntN(8) {
					case 0:
						raw[i] = 0
					case 1:
						raw[i] = math.Copysign(0, -1)
					default:
						raw[i] = rng.NormFloat64() * 3
					}
				}
			}
			want := mcr.SubtractBaseline(d, b, p)
			own := mat.NewDense(n, m, nil)
			lessBaseline(own, d, b, p)
			subtractBaselineInPlace(d, b, p)
			for name, got := range map[string]*mat.Dense{"in place": d, "into its own matrix": own} {
				for i := 0; i < n; i++ {
					for j := 0; j < m; j++ {
						if math.Float64bits(got.At(i, j)) != math.Float64bits(want.At(i, j)) {
							t.Fatalf("n %d, %d shapes, %s: entry %d,%d is %v, D − B Pᵀ has %v", n, nb, name, i, j, got.At(i, j), want.At(i, j))
						}
					}
				}
			}
		}
	}
}

// The baseline projected out of the scaled copy in place (rankInputs.reuse,
// and the copy rebuilt afterwards by svd.ScaleInto) gives the same rank
// report and classification as the projection into a matrix of its own,
// and leaves the copy as it was: the definition D Q⊥ = D − (D Q) Qᵀ formed
// by one product and one difference is the reference.
func TestProjectionInPlaceMatchesCopy(t *testing.T) {
	axis, d, row, col := twoBandsWeighted(rand.New(rand.NewPCG(7, 8)), 150, 120)
	r := &Result{Settings: NewSettings(), Axis: axis}
	scaled := svd.Scale(d, row, col)
	in := weightedRankInputs(r, mat.DenseCopyOf(scaled), row, col, -1, 0)
	wantRep, wantCR, err := chemicalRank(r, in.d, nil, 2, in, true)
	if err != nil {
		t.Fatal(err)
	}
	in.reuse = true
	in.rebuild = func(x *mat.Dense) { svd.ScaleInto(x, d, row, col) }
	gotRep, gotCR, err := chemicalRank(r, in.d, nil, 2, in, true)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(gotRep, wantRep) || !reflect.DeepEqual(gotCR, wantCR) {
		t.Errorf("in place: rank %d, classification %+v; with a copy: rank %d, %+v", gotRep.Estimate, gotCR, wantRep.Estimate, wantCR)
	}
	if !mat.Equal(in.d, scaled) {
		t.Error("the scaled copy was not rebuilt bit for bit")
	}
}

// With truncated factors and the noise level known, the rank and the
// classification of the data with a baseline projected out are taken from a
// screen of its rows (screenedRank): they equal, field for field, those of the
// projection formed in full by its definition D − (D Q) Qᵀ (one gonum product
// each way, one difference) and handed to svd.EstimateRank and
// svd.ClassifyFactors, the data are left untouched, and the product of a
// lower order taken from the highest order's (rankInputs.dq), or the screen of
// the data bounding D Q⊥'s entries (projectedScreen), changes nothing. One case has a spectrum of zeros, which the rank takes for the reference row.
func TestScreenedRankMatchesFormed(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	n, m := 160, 130
	for _, zeroRow := range []int{-1, 37} {
		axis, d, row, col := twoBandsWeighted(rng, n, m)
		if zeroRow >= 0 {
			d.SetRow(zeroRow, make([]float64, m))
		}
		r := &Result{Settings: NewSettings(), Axis: axis}
		scaled := svd.Scale(d, row, col)
		f, err := svd.Decompose(scaled, svd.DecomposeOptions{MaxFactors: 12, Method: svd.MethodRandomized})
		if err != nil {
			t.Fatal(err)
		}
		copied, screen := svd.ScaleIntoScreened(mat.NewDense(n, m, nil), d, row, col)
		in := weightedRankInputs(r, copied, row, col, -1, 12)
		in.basis = svd.PolyBasis(axis, 3, col)
		in.dq = mat.NewDense(n, 4, nil)
		in.dq.Mul(scaled, in.basis)
		for _, order := range []int{1, 3} {
			q := svd.PolyBasis(axis, order, col)
			var dq, proj, dc mat.Dense
			dq.Mul(scaled, q)
			proj.Mul(&dq, q.T())
			dc.Sub(scaled, &proj)
			pf, err := svd.ProjectFactors(f, q, &dq)
			if err != nil {
				t.Fatal(err)
			}
			wantRep, err := svd.EstimateRank(&dc, pf, in.opt)
			if err != nil {
				t.Fatal(err)
			}
			wantCR := svd.ClassifyFactors(&dc, pf, wantRep, svd.NuisanceOptions{Axis: axis, Noise: in.noise, MeanLevel: true, Row: row, Col: col})
			svd.ApplyChemical(wantRep, wantCR)
			for _, shared := range []bool{false, true} {
				use := in
				if !shared {
					use.basis, use.dq = nil, nil
				} else {
					use.screen = screen // the rows of D Q⊥ formed only up to a first entry not zero
				}
				gotRep, gotCR, err := chemicalRank(r, use.d, f, order, use, true)
				if err != nil {
					t.Fatal(err)
				}
				if !reflect.DeepEqual(gotRep, wantRep) || !reflect.DeepEqual(gotCR, wantCR) {
					t.Errorf("zero row %d, order %d, shared product %v: screened rank %d, classification %+v; formed: rank %d, %+v", zeroRow, order, shared, gotRep.Estimate, gotCR, wantRep.Estimate, wantCR)
				}
				if zeroRow >= 0 && len(gotRep.Warnings) == 0 {
					t.Errorf("zero row %d, order %d: no warning about the row of zeros", zeroRow, order)
				}
				if !mat.Equal(use.d, scaled) {
					t.Errorf("zero row %d, order %d: the scaled matrix changed", zeroRow, order)
				}
			}
		}
	}
}

// The screen of D Q⊥ = D − (D Q) Qᵀ found from its rows' leading entries
// (projectedScreen, with the screen of D bounding its entries) is the screen of
// every row formed in full (svd.ScreenRows of lessBaselineRow, the definition):
// with no row of zeros, with a spectrum of zeros (a row of zeros of D Q⊥ too),
// and with a row whose first ten entries of D Q⊥ are zero and the rest not (a
// basis zero on the first ten channels), so that a row is not taken for zeros
// from its leading entries alone. Without a screen of D, or with a product D Q
// that is not finite, every row is formed: the same screen, its error included.
func TestProjectedScreenMatchesFormed(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	n, m := 50, 90
	for _, c := range []string{"plain", "zero spectrum", "leading zeros"} {
		axis, d, row, col := twoBandsWeighted(rng, n, m)
		q := svd.PolyBasis(axis, 2, col)
		switch c {
		case "zero spectrum":
			d.SetRow(11, make([]float64, m))
		case "leading zeros":
			for j := 0; j < 10; j++ {
				q.SetRow(j, make([]float64, 3))
				d.Set(29, j, 0)
			}
		}
		scaled, screen := svd.ScaleIntoScreened(mat.NewDense(n, m, nil), d, row, col)
		dq := mat.NewDense(n, 3, nil)
		dq.Mul(scaled, q)
		want := svd.ScreenRows(n, m, func(i int, buf []float64) { lessBaselineRow(buf, scaled.RawRowView(i), dq.RawRowView(i), q) })
		for _, s := range []*svd.Screen{screen, nil} {
			if got := projectedScreen(scaled, dq, q, s); !reflect.DeepEqual(got, want) {
				t.Errorf("%s (screen of D given: %v): %+v, formed in full %+v", c, s != nil, got, want)
			}
		}
		if c == "plain" {
			dq.Set(17, 1, math.Inf(1))
			want := svd.ScreenRows(n, m, func(i int, buf []float64) { lessBaselineRow(buf, scaled.RawRowView(i), dq.RawRowView(i), q) })
			if got := projectedScreen(scaled, dq, q, screen); !reflect.DeepEqual(got, want) {
				t.Errorf("D Q not finite: %+v, formed in full %+v", got, want)
			}
		}
	}
}

// twoBandsWeighted is the rank tests' series: two Gaussian bands trading
// places over n spectra of m channels (axis 1000, 1002, …), a sloped
// baseline whose slope repeats every seven spectra, and white noise,
// with random noise weights per spectrum (row) and per channel (col).
func twoBandsWeighted(rng *rand.Rand, n, m int) (axis []float64, d *mat.Dense, row, col []float64) {
	axis = make([]float64, m)
	for j := range axis {
		axis[j] = 1000 + 2*float64(j)
	}
	d = mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			x, c := float64(j)/float64(m), float64(i)/float64(n)
			d.Set(i, j, c*math.Exp(-sq((x-0.3)/0.05))+(1-c)*math.Exp(-sq((x-0.6)/0.07))+0.01*float64(i%7)*x+1e-3*rng.NormFloat64())
		}
	}
	row, col = make([]float64, n), make([]float64, m)
	for i := range row {
		row[i] = 1e6 * (1 + 0.5*rng.Float64())
	}
	for j := range col {
		col[j] = 1 + rng.Float64()
	}
	return axis, d, row, col
}
