package mcr

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// bandsBenchPair is a k-component pair on n times × m channels: first-order
// profiles with staggered rates (each component dominant for a while) and
// two Gaussian bands per spectrum, one of them its own; the shape of the
// benchmark data in io/pipeline, so the ranges are bounded.
func bandsBenchPair(n, m, k int) (*mat.Dense, *mat.Dense) {
	c := mat.NewDense(n, k, nil)
	for i := 0; i < n; i++ {
		t := float64(i) / float64(n-1)
		for j := 0; j < k; j++ {
			centre := (float64(j) + 0.5) / float64(k)
			x := (t - centre) / (0.6 / float64(k))
			c.Set(i, j, math.Exp(-0.5*x*x)+0.02)
		}
	}
	s := mat.NewDense(m, k, nil)
	for q := 0; q < m; q++ {
		u := float64(q) / float64(m-1)
		for j := 0; j < k; j++ {
			own := (float64(j) + 0.5) / float64(k)
			shared := math.Mod(own+0.37, 1)
			s.Set(q, j, gauss(u, own, 0.3/float64(k))+0.4*gauss(u, shared, 0.5/float64(k)))
		}
	}
	return c, s
}

// BenchmarkFeasibleBands measures the uniqueness ranges within the noise on
// the shape of a 2000 × 3001 series (docs/performance-history.md): 4, 5 and 6
// components, with the allowance of a residual at 1 % lack of fit.
func BenchmarkFeasibleBands(b *testing.B) {
	for _, k := range []int{4, 5, 6} {
		b.Run(fmt.Sprintf("2000x3001k%d", k), func(b *testing.B) {
			c, s := bandsBenchPair(2000, 3001, k)
			norm := traceProd(gram(c), gram(s))
			evals := 0
			for i := 0; i < b.N; i++ {
				got, err := FeasibleBands(c, s, BandOptions{Mode: Species, ResidualSS: 1e-4 * norm})
				if err != nil {
					b.Fatal(err)
				}
				evals = got.Evaluations
			}
			b.ReportMetric(float64(evals), "evaluations")
		})
	}
}
