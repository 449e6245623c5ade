package svd

import (
	"fmt"
	"math"

	"github.com/bandsolve/bandsolve/internal/fresh"

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
	return ScaleInto(fresh.Matrix(n, m), d, row, col)
}

// ScaleInto writes √A D √B into out (n × m, which may be d itself: each
// value is read before it is overwritten) and returns out, the same values
// as Scale bit for bit. On large data it lets a caller rebuild the scaled
// matrix in a buffer it already holds instead of allocating one more
// data-sized matrix.
func ScaleInto(out, d *mat.Dense, row, col []float64) *mat.Dense {
	scaleRows(out, d, row, col, nil)
	return out
}

// scaleRows writes out = diag(√row) d diag(√col) a row at a time, and hands
// each written row to s while it is in cache (s nil: no screen).
func scaleRows(out, d *mat.Dense, row, col []float64, s *Screen) {
	n, m := d.Dims()
	sb := make([]float64, m)
	for j, b := range col {
		sb[j] = math.Sqrt(b)
	}
	for i := 0; i < n; i++ {
		sa := math.Sqrt(row[i])
		src, dst := d.RawRowView(i)[:m], out.RawRowView(i)[:m]
		if s == nil {
			for j, v := range src {
				dst[j] = sa * v * sb[j]
			}
			continue
		}
		// Screened as written (Screen.Written): the squares added to the
		// screen's sum in index order, one chain of additions whose
		// latency the scaling runs under, and Σ (x − x) for the check.
		sum, z := s.Sum(), 0.0
		for j, v := range src {
			x := sa * v * sb[j]
			dst[j] = x
			sum += x * x
			z += x - x
		}
		s.Written(i, dst, sum, z == 0)
	}
}

// ImputeMissing fills the missing points of the scaled matrix ds (missing[i]:
// the missing columns of row i) with its own rank-k model, in place, and
// returns the factors of the completed matrix and the passes made. The
// model is the rank-k least-squares fit to the observed points only (the
// weighted low-rank approximation with 0/1 weights; Gabriel & Zamir,
// Technometrics 1979, criss-cross regression): alternately each row's
// scores from its observed points, L_i = argmin Σ_{j obs} (d_ij − L_i·R_j)²,
// and each channel's loadings from its observed rows, then the missing
// points are refilled from L Rᵀ. Plain refilling from an SVD of the filled
// matrix (EM) converges the same way but crawls when a block of the matrix
// is missing, since the filled values then steer the loadings of their own
// columns. Stops when no filled value moves by more than tol (in the scaled
// matrix, units of the noise's standard deviation) or after maxIter passes.
func ImputeMissing(ds *mat.Dense, missing [][]int, k int, opt DecomposeOptions, tol float64, maxIter int) (*Factors, int, error) {
	n, m := ds.Dims()
	if len(missing) != n {
		return nil, 0, fmt.Errorf("svd: impute: %d rows of missing points for %d rows", len(missing), n)
	}
	byCol := make([][]int, m)
	for i, cols := range missing {
		for _, j := range cols {
			if j < 0 || j >= m {
				return nil, 0, fmt.Errorf("svd: impute: column %d outside 0..%d", j, m-1)
			}
			byCol[j] = append(byCol[j], i)
		}
	}
	f, err := Decompose(ds, opt)
	if err != nil {
		return nil, 0, fmt.Errorf("svd: impute: %w", err)
	}
	k = min(k, len(f.S))
	if k < 1 {
		return f, 0, nil
	}
	l := mat.NewDense(n, k, nil)
	for i := 0; i < n; i++ {
		for a := 0; a < k; a++ {
			l.Set(i, a, f.U.At(i, a)*f.S[a])
		}
	}
	r := mat.DenseCopyOf(f.V.Slice(0, m, 0, k))
	it := 0
	for it = 1; it <= maxIter; it++ {
		observedLS(ds, r, l, missing, false)
		observedLS(ds, l, r, byCol, true)
		moved := 0.0
		for i, cols := range missing {
			for _, j := range cols {
				v := 0.0
				for a := 0; a < k; a++ {
					v += l.At(i, a) * r.At(j, a)
				}
				moved = math.Max(moved, math.Abs(v-ds.At(i, j)))
				ds.Set(i, j, v)
			}
		}
		if moved <= tol {
			break
		}
	}
	if f, err = Decompose(ds, opt); err != nil {
		return nil, it, fmt.Errorf("svd: impute: %w", err)
	}
	return f, min(it, maxIter), nil
}

// observedLS sets each row of out (the scores of D's rows, or with trans
// the loadings of its columns) to the least-squares fit of that row (column)
// of D on the other factor x, over its observed entries: the normal
// equations (XᵀX − Σ_miss x xᵀ) y = Xᵀd − Σ_miss d x, solved by Cholesky
// (k × k, positive definite while the observed entries determine y; a row
// whose system is singular keeps its previous value).
func observedLS(d, x, out *mat.Dense, miss [][]int, trans bool) {
	p, k := out.Dims()
	var g mat.SymDense
	g.SymOuterK(1, x.T())
	var rhs mat.Dense
	if trans {
		rhs.Mul(d.T(), x)
	} else {
		rhs.Mul(d, x)
	}
	gi := mat.NewSymDense(k, nil)
	b := make([]float64, k)
	var ch mat.Cholesky
	var y mat.VecDense
	for q := 0; q < p; q++ {
		gi.CopySym(&g)
		copy(b, rhs.RawRowView(q))
		for _, o := range miss[q] {
			var dv float64
			if trans {
				dv = d.At(o, q)
			} else {
				dv = d.At(q, o)
			}
			xr := x.RawRowView(o)
			for a := 0; a < k; a++ {
				b[a] -= dv * xr[a]
				for c := a; c < k; c++ {
					gi.SetSym(a, c, gi.At(a, c)-xr[a]*xr[c])
				}
			}
		}
		if !ch.Factorize(gi) || ch.Cond() > 1e12 {
			continue
		}
		if err := ch.SolveVecTo(&y, mat.NewVecDense(k, b)); err != nil {
			continue
		}
		out.SetRow(q, y.RawVector().Data)
	}
}
