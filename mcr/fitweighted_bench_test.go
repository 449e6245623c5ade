package mcr

import (
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// BenchmarkFitWeighted2000x3001k5 is the fit figures' pass over the data of
// the whole-run benchmark's size: five components, row and channel weights.
func BenchmarkFitWeighted2000x3001k5(b *testing.B) {
	rng := rand.New(rand.NewPCG(5, 2000))
	n, m, k := 2000, 3001, 5
	d, c, s := mat.NewDense(n, m, nil), mat.NewDense(n, k, nil), mat.NewDense(m, k, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, rng.NormFloat64())
		}
		for l := 0; l < k; l++ {
			c.Set(i, l, rng.Float64())
		}
	}
	for j := 0; j < m; j++ {
		for l := 0; l < k; l++ {
			s.Set(j, l, rng.Float64())
		}
	}
	row, col := rowColWeights(rng, n, m)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		FitWeighted(d, c, s, row, col, nil)
	}
}
