package mcr

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// benchProblem is the profile step of a 2000 × 3001 problem with k
// components: a Gram matrix of non-negative spectra and noisy right-hand sides
// of which many give negative unconstrained solutions.
func benchProblem(k, p int) Problem {
	rng := rand.New(rand.NewPCG(3, 4))
	a := mat.NewDense(2000, k, nil)
	for i := 0; i < 2000; i++ {
		for j := 0; j < k; j++ {
			a.Set(i, j, math.Abs(rng.NormFloat64()))
		}
	}
	g := mat.NewSymDense(k, nil)
	g.SymOuterK(1, a.T())
	rhs := mat.NewDense(k, p, nil)
	for i := 0; i < k; i++ {
		for j := 0; j < p; j++ {
			rhs.Set(i, j, rng.NormFloat64()*100)
		}
	}
	return Problem{G: g, B: rhs}
}

func BenchmarkSolveMany5x3001(b *testing.B) {
	p := benchProblem(5, 3001)
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		if _, err := SolveMany(p); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkSolveManyClosure5x3001(b *testing.B) {
	p := benchProblem(5, 3001)
	p.Equality, p.Total = ones(5), []float64{1}
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		if _, err := SolveMany(p); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkNNLSColumnByColumn is the textbook baseline: Lawson–Hanson on the
// full 2000-row system for each of 300 right-hand sides.
func BenchmarkNNLSColumnByColumn300(b *testing.B) {
	rng := rand.New(rand.NewPCG(5, 6))
	a := mat.NewDense(2000, 5, nil)
	for i := 0; i < 2000; i++ {
		for j := 0; j < 5; j++ {
			a.Set(i, j, math.Abs(rng.NormFloat64()))
		}
	}
	rhs := make([][]float64, 300)
	for c := range rhs {
		rhs[c] = make([]float64, 2000)
		for i := range rhs[c] {
			rhs[c][i] = rng.NormFloat64()
		}
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		for _, r := range rhs {
			if _, err := NNLS(a, r); err != nil {
				b.Fatal(err)
			}
		}
	}
}
