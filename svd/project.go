package svd

import (
	"fmt"

	products "github.com/bandsolve/bandsolve/internal/product"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// ProjectFactors returns the leading factors of D (I − Q Qᵀ) from the truncated factors f
// of D (Q: m × p with orthonormal columns, dq = D Q): with W = Σ Vᵀ (r × m), the product
// U W (I − Q Qᵀ) = U (W − (W Q) Qᵀ) has the factors U P, σ, R from the thin SVD
// W − (W Q) Qᵀ = P σ Rᵀ of an r × m matrix, and the energy ‖D‖² − ‖D Q‖² exactly
// (Pythagoras: D Q Qᵀ and D (I − Q Qᵀ) are orthogonal). The factors are exact when D
// lies in the span of f (a truncation that keeps all of the signal), and otherwise leave
// out only the tail's projection: O(r² m + r n) work instead of a new decomposition of an
// n × m matrix.
func ProjectFactors(f *Factors, q, dq *mat.Dense) (*Factors, error) {
	if f == nil || f.U == nil || f.V == nil || q == nil || dq == nil {
		return nil, fmt.Errorf("svd: project factors: missing factors or basis")
	}
	n, r := f.U.Dims()
	m, _ := f.V.Dims()
	if qm, _ := q.Dims(); qm != m {
		return nil, fmt.Errorf("svd: project factors: basis has %d rows, factors %d", qm, m)
	}
	if dn, _ := dq.Dims(); dn != n {
		return nil, fmt.Errorf("svd: project factors: D Q has %d rows, factors %d", dn, n)
	}
	w := mat.NewDense(r, m, nil)
	for a := 0; a < r; a++ {
		for j := 0; j < m; j++ {
			w.Set(a, j, f.S[a]*f.V.At(j, a))
		}
	}
	var wq, proj mat.Dense
	wq.Mul(w, q)
	proj.Mul(&wq, q.T())
	w.Sub(w, &proj)
	// mat.SVD's thin factorization of W, on W itself (thinSVD), its right
	// vectors' rows in the projection's memory, spent once subtracted.
	k := min(r, m)
	pr := proj.RawMatrix()
	vt := blas64.General{Rows: k, Cols: m, Stride: m, Data: pr.Data[:k*m]}
	vals, pl, ok := thinSVD(w.RawMatrix(), vt)
	if !ok {
		return nil, fmt.Errorf("svd: project factors: SVD of the %d × %d core did not converge", r, m)
	}
	u := mat.NewDense(n, k, nil)
	products.MulTo(u, f.U, mat.NewDense(r, k, pl.Data)) // mat.Dense.Mul's bits
	out := &Factors{U: u, S: vals, V: rightVectors(vt, k), Method: f.Method,
		FrobeniusSq: max(f.FrobeniusSq-frobeniusSq(dq), 0)}
	fixSigns(out)
	return out, nil
}
