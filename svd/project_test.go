package svd

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// On a matrix of exact rank 6 kept whole by a truncation to 10 factors, the projected
// factors are the singular value decomposition of D (I − Q Qᵀ) itself (Eckart & Young,
// Psychometrika 1936: the SVD is unique up to signs for distinct values; reference:
// gonum's LAPACK SVD of the projected matrix), and the energy is ‖D (I − Q Qᵀ)‖².
func TestProjectFactorsMatchesDirect(t *testing.T) {
	const n, m, k = 60, 80, 6
	rng := rand.New(rand.NewPCG(4, 4))
	a, b := mat.NewDense(n, k, nil), mat.NewDense(k, m, nil)
	for i := 0; i < n; i++ {
		for c := 0; c < k; c++ {
			a.Set(i, c, rng.NormFloat64())
		}
	}
	for c := 0; c < k; c++ {
		for j := 0; j < m; j++ {
			b.Set(c, j, rng.NormFloat64())
		}
	}
	var d mat.Dense
	d.Mul(a, b)
	axis := make([]float64, m)
	col := make([]float64, m)
	for j := range axis {
		axis[j], col[j] = float64(j), 0.5+rng.Float64()
	}
	f, err := Decompose(&d, DecomposeOptions{MaxFactors: 10, Method: "exact"})
	if err != nil {
		t.Fatal(err)
	}
	q := PolyBasis(axis, 2, col)
	var dq mat.Dense
	dq.Mul(&d, q)
	got, err := ProjectFactors(f, q, &dq)
	if err != nil {
		t.Fatal(err)
	}
	direct, err := RemovePolynomialWeighted(&d, axis, 2, col)
	if err != nil {
		t.Fatal(err)
	}
	want, err := Decompose(direct, DecomposeOptions{Method: "exact"})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(got.FrobeniusSq-want.FrobeniusSq) > 1e-9*want.FrobeniusSq {
		t.Errorf("energy %v, want %v", got.FrobeniusSq, want.FrobeniusSq)
	}
	for c := 0; c < k; c++ {
		if math.Abs(got.S[c]-want.S[c]) > 1e-9*want.S[0] {
			t.Errorf("σ_%d = %v, want %v", c+1, got.S[c], want.S[c])
		}
		var dot float64
		for j := 0; j < m; j++ {
			dot += got.V.At(j, c) * want.V.At(j, c)
		}
		if math.Abs(math.Abs(dot)-1) > 1e-8 {
			t.Errorf("right vector %d: |cos| %v with the direct one", c+1, math.Abs(dot))
		}
	}
}
