package pipeline

import (
	"math/rand/v2"
	"testing"

	"github.com/bandsolve/bandsolve/mcr"
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
