package mcr

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// thinQR meets the definition of the thin QR factorisation (Golub & Van
// Loan, Matrix Computations, 4th ed., §5.2.6, from memory): A = Q R with
// QᵀQ = I (k × k) and R upper triangular, and agrees with gonum's full QR
// on the first k columns of Q and on R (the same Householder reflectors).
func TestThinQR(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, sz := range [][2]int{{7, 1}, {50, 5}, {301, 6}} {
		r, k := sz[0], sz[1]
		a := mat.NewDense(r, k, nil)
		for i := 0; i < r; i++ {
			for j := 0; j < k; j++ {
				a.Set(i, j, rng.NormFloat64())
			}
		}
		q, rr := thinQR(a)
		if qr, qc := q.Dims(); qr != r || qc != k {
			t.Fatalf("%d×%d: Q is %d×%d", r, k, qr, qc)
		}
		var qtq, back mat.Dense
		qtq.Mul(q.T(), q)
		back.Mul(q, rr)
		if !mat.EqualApprox(&qtq, eye(k), 1e-13) {
			t.Errorf("%d×%d: QᵀQ ≠ I", r, k)
		}
		if !mat.EqualApprox(&back, a, 1e-12) {
			t.Errorf("%d×%d: QR ≠ A", r, k)
		}
		for i := 0; i < k; i++ {
			for j := 0; j < i; j++ {
				if rr.At(i, j) != 0 {
					t.Errorf("%d×%d: R[%d,%d] = %g below the diagonal", r, k, i, j, rr.At(i, j))
				}
			}
		}
		var full mat.QR
		full.Factorize(a)
		var fq, fr mat.Dense
		full.QTo(&fq)
		full.RTo(&fr)
		for i := 0; i < r; i++ {
			for j := 0; j < k; j++ {
				if d := math.Abs(fq.At(i, j) - q.At(i, j)); d > 1e-13 {
					t.Fatalf("%d×%d: Q[%d,%d] differs from the full QR's by %g", r, k, i, j, d)
				}
			}
		}
		if !mat.EqualApprox(fr.Slice(0, k, 0, k), rr, 1e-13) {
			t.Errorf("%d×%d: R differs from the full QR's", r, k)
		}
	}
}

func eye(k int) *mat.Dense {
	e := mat.NewDense(k, k, nil)
	for i := 0; i < k; i++ {
		e.Set(i, i, 1)
	}
	return e
}
