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

// The baseline subtracted in place, a block of rows at a time, is bit for
// bit D − B Pᵀ as mcr.SubtractBaseline forms it (its definition: one product,
// one difference), for row counts around the block size.
func TestSubtractBaselineInPlaceMatchesProduct(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, n := range []int{1, 63, 64, 65, 200} {
		for _, sz := range [][2]int{{1, 37}, {4, 37}, {4, 300}} {
			nb, m := sz[0], sz[1]
			d, b, p := mat.NewDense(n, m, nil), mat.NewDense(n, nb, nil), mat.NewDense(m, nb, nil)
			for _, x := range []*mat.Dense{d, b, p} {
				raw := x.RawMatrix().Data
				for i := range raw {
					raw[i] = rng.NormFloat64() * 3
				}
			}
			want := mcr.SubtractBaseline(d, b, p)
			subtractBaselineInPlace(d, b, p)
			if !mat.Equal(d, want) {
				t.Fatalf("n %d, %d shapes: in place differs from D − B Pᵀ", n, nb)
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
	rng := rand.New(rand.NewPCG(7, 8))
	n, m := 150, 120
	axis := make([]float64, m)
	for j := range axis {
		axis[j] = 1000 + 2*float64(j)
	}
	d := mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			x := float64(j) / float64(m)
			c := float64(i) / float64(n)
			d.Set(i, j, c*math.Exp(-sq((x-0.3)/0.05))+(1-c)*math.Exp(-sq((x-0.6)/0.07))+0.01*float64(i%7)*x+1e-3*rng.NormFloat64())
		}
	}
	row, col := make([]float64, n), make([]float64, m)
	for i := range row {
		row[i] = 1e6 * (1 + 0.5*rng.Float64())
	}
	for j := range col {
		col[j] = 1 + rng.Float64()
	}
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
