package mcr

import (
	"math/rand/v2"
	"testing"

	"github.com/bandsolve/bandsolve/internal/cputime"
	"gonum.org/v1/gonum/mat"
)

// BenchmarkFitWeighted2000x3001k5 is the fit figures' pass over the data of
// the whole-run benchmark's size: five components, row and channel weights.
// The process CPU per run is reported too (on a shared machine it moves
// less with the load than wall time).
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
	cpu := cputime.Process()
	for i := 0; i < b.N; i++ {
		FitWeighted(d, c, s, row, col, nil)
	}
	b.ReportMetric((cputime.Process()-cpu)/float64(b.N)*1e3, "cpu-ms/op")
}

// BenchmarkFindOutliers2000x3001k5 is the outlier test's pass over the same
// data with a two-term baseline.
func BenchmarkFindOutliers2000x3001k5(b *testing.B) {
	rng := rand.New(rand.NewPCG(5, 2001))
	n, m, k := 2000, 3001, 5
	d, c, s := mat.NewDense(n, m, nil), mat.NewDense(n, k, nil), mat.NewDense(m, k, nil)
	bl, p := mat.NewDense(n, 2, nil), mat.NewDense(m, 2, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, rng.NormFloat64())
		}
		for l := 0; l < k; l++ {
			c.Set(i, l, rng.Float64())
		}
		bl.Set(i, 0, rng.Float64())
		bl.Set(i, 1, rng.Float64())
	}
	for j := 0; j < m; j++ {
		for l := 0; l < k; l++ {
			s.Set(j, l, rng.Float64())
		}
		p.Set(j, 0, 1)
		p.Set(j, 1, float64(j)/float64(m))
	}
	for _, base := range []bool{false, true} {
		name := "none"
		bb, pp := (*mat.Dense)(nil), (*mat.Dense)(nil)
		if base {
			name, bb, pp = "baseline", bl, p
		}
		b.Run(name, func(b *testing.B) {
			cpu := cputime.Process()
			for i := 0; i < b.N; i++ {
				FindOutliers(d, c, s, bb, pp, nil, 0, nil)
			}
			b.ReportMetric((cputime.Process()-cpu)/float64(b.N)*1e3, "cpu-ms/op")
		})
	}
	// With noise weights, as the default run tests: each row's sums in the
	// data's units and in units of the noise.
	row, col := make([]float64, n), make([]float64, m)
	for i := range row {
		row[i] = 0.5 + rng.Float64()
	}
	for j := range col {
		col[j] = 0.5 + rng.Float64()
	}
	b.Run("weighted", func(b *testing.B) {
		cpu := cputime.Process()
		for i := 0; i < b.N; i++ {
			FindOutliersIn(d, c, s, nil, nil, OutlierInput{Sigma: 1, Row: row, Col: col})
		}
		b.ReportMetric((cputime.Process()-cpu)/float64(b.N)*1e3, "cpu-ms/op")
	})
}
