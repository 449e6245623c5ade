package svd

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Scale returns √A D √B (A = diag(row), B = diag(col)): with weights
// w_ij = a_i b_j = 1/σ²_ij the scaled matrix's noise is white with unit
// variance, so the rank criteria see the noise floor they assume (σ = 1,
// Marchenko–Pastur edge √n + √m) instead of being led by a few very noisy
// channels; maximum-likelihood PCA with row × column error structure
// (Wentzell, Andrews, Hamilton, Faber & Kowalski, J. Chemometrics 1997).
func Scale(d *mat.Dense, row, col []float64) *mat.Dense {
	n, m := d.Dims()
	out := mat.NewDense(n, m, nil)
	sb := make([]float64, m)
	for j, b := range col {
		sb[j] = math.Sqrt(b)
	}
	for i := 0; i < n; i++ {
		sa := math.Sqrt(row[i])
		src, dst := d.RawRowView(i)[:m], out.RawRowView(i)
		for j, v := range src {
			dst[j] = sa * v * sb[j]
		}
	}
	return out
}

// ImputeMissing fills the missing points of the scaled matrix ds (missing[i]:
// the missing columns of row i) with its own rank-k model, in place: the
// expectation–maximisation iteration for a low-rank model with missing
// values (fill, decompose, refill from U_k Σ_k V_kᵀ; e.g. Troyanskaya et al.,
// Bioinformatics 2001, "SVDimpute", and Kiers, Psychometrika 1997, for the
// weighted least-squares view). Each pass lowers the rank-k residual at the
// observed points; it stops when no filled value moves by more than tol (in
// the scaled matrix, tol is in units of the noise's standard deviation) or
// after maxIter passes. It returns the factors of the completed matrix and
// the number of passes.
func ImputeMissing(ds *mat.Dense, missing [][]int, k int, opt DecomposeOptions, tol float64, maxIter int) (*Factors, int, error) {
	n, m := ds.Dims()
	if len(missing) != n {
		return nil, 0, fmt.Errorf("svd: impute: %d rows of missing points for %d rows", len(missing), n)
	}
	f, err := Decompose(ds, opt)
	if err != nil {
		return nil, 0, fmt.Errorf("svd: impute: %w", err)
	}
	k = min(k, len(f.S))
	if k < 1 {
		return f, 0, nil
	}
	it := 0
	for it = 1; it <= maxIter; it++ {
		moved := 0.0
		for i, cols := range missing {
			for _, j := range cols {
				if j < 0 || j >= m {
					return nil, it, fmt.Errorf("svd: impute: column %d outside 0..%d", j, m-1)
				}
				v := 0.0
				for l := 0; l < k; l++ {
					v += f.U.At(i, l) * f.S[l] * f.V.At(j, l)
				}
				moved = math.Max(moved, math.Abs(v-ds.At(i, j)))
				ds.Set(i, j, v)
			}
		}
		if f, err = Decompose(ds, opt); err != nil {
			return nil, it, fmt.Errorf("svd: impute: %w", err)
		}
		if moved <= tol {
			break
		}
	}
	return f, min(it, maxIter), nil
}
