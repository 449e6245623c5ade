package kinetics

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/bandsolve/bandsolve/internal/product"
	"gonum.org/v1/gonum/mat"
)

// pseudoSolve, NonNegativeCost and reduceData take Xᵀ D as (Dᵀ X)ᵀ from
// product.MulT. The reference is gonum v0.17's mat.Dense.Mul(x.T(), d)
// (blas/gonum Dgemm), which skips the terms with x_li = 0 where MulT adds
// them: for finite data the bits must agree, zeros in X included (rows of a
// model before t0 have them), at the chain benchmark's 2000 rows by 6
// columns and at odd shapes.
func TestTransposedProductMatchesGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	for _, tc := range []struct{ n, q, m int }{
		{1, 1, 1}, {3, 2, 5}, {7, 6, 300}, {130, 5, 1001}, {2000, 6, 601}, {403, 31, 520},
	} {
		x, d := mat.NewDense(tc.n, tc.q, nil), mat.NewDense(tc.n, tc.m, nil)
		for i := 0; i < tc.n; i++ {
			for a := 0; a < tc.q; a++ {
				if rng.IntN(7) > 0 {
					x.Set(i, a, rng.NormFloat64()*math.Exp(4*rng.NormFloat64()))
				}
			}
			for j := 0; j < tc.m; j++ {
				// Absorbance-like, noise growing as the beam weakens; some exact zeros.
				if rng.IntN(50) > 0 {
					d.Set(i, j, 2*rng.Float64()+rng.NormFloat64()*1e-3*math.Pow(10, rng.Float64()))
				}
			}
		}
		var want mat.Dense
		want.Mul(x.T(), d)
		got := product.MulT(d, x)
		for a := 0; a < tc.q; a++ {
			for j := 0; j < tc.m; j++ {
				if g, w := got.At(j, a), want.At(a, j); math.Float64bits(g) != math.Float64bits(w) {
					t.Fatalf("%d × %d by %d columns: entry (%d, %d) = %v, gonum %v", tc.n, tc.m, tc.q, a, j, g, w)
				}
			}
		}
	}
}
