package svd

import (
	"errors"
	"fmt"

	"gonum.org/v1/gonum/mat"
)

// MethodSpan is Factors.Method for DecomposeInSpan.
const MethodSpan = "span"

// DecomposeInSpan returns factors of d restricted to the row space spanned by
// the columns of basis (m × p): with Q an orthonormal basis of that span,
// W = D Q is n × p and its thin SVD W = Ũ Σ Zᵀ gives D ≈ Ũ Σ (Q Z)ᵀ
// (the Rayleigh–Ritz step of Halko, Martinsson & Tropp, SIAM Review 2011,
// Algorithm 5.1, with the range basis supplied). One pass over d instead of
// the six of a randomized SVD, which is the point: a matrix whose row space
// is known to lie close to another's (difference spectra ΔA = A − 1·a_refᵀ
// lie in the row space of A plus a_ref) is decomposed in that space.
// Directions inside the span are exact; the values are lower bounds of d's
// own (Cauchy interlacing, a projection cannot raise singular values), so
// noise values come out low rather than high. FrobeniusSq is that of the
// whole d, so tails still count everything outside the span.
func DecomposeInSpan(d *mat.Dense, basis *mat.Dense) (*Factors, error) {
	if err := checkMatrix(d); err != nil {
		return nil, fmt.Errorf("svd: decompose in span: %w", err)
	}
	if basis == nil || basis.IsEmpty() {
		return nil, errors.New("svd: decompose in span: no basis")
	}
	n, m := d.Dims()
	bm, p := basis.Dims()
	if bm != m {
		return nil, fmt.Errorf("svd: decompose in span: basis has %d rows, the data %d columns", bm, m)
	}
	if p > m {
		return nil, fmt.Errorf("svd: decompose in span: %d basis vectors for %d columns", p, m)
	}
	q := mat.DenseCopyOf(basis)
	orthonormalize(q)
	w := mat.NewDense(n, p, nil)
	w.Mul(d, q)
	var s mat.SVD
	if !s.Factorize(w, mat.SVDThin) {
		return nil, errors.New("svd: decompose in span: SVD of the projection did not converge")
	}
	vals := s.Values(nil)
	var u, z, v mat.Dense
	s.UTo(&u)
	s.VTo(&z)
	v.Mul(q, &z)
	f := truncate(&u, vals, &v, min(len(vals), p))
	f.Method = MethodSpan
	f.FrobeniusSq = frobeniusSq(d)
	fixSigns(f)
	return f, nil
}
