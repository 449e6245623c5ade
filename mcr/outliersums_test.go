package mcr

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The outlier test takes three sums of each residual row in one pass: Σ e_j² of the
// row, and Σ x_j², Σ x_j x_{j+1} of the row in units of the noise, x_j = e_j·(√a_i·√b_j).
// Each must be the definition's sum, its terms added one at a time in index order, to
// the last bit (the outputs' bytes depend on it: docs/reproducibility.md).
func TestScaledSquaresAndLagAreTheDefinitionsBits(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 21))
	for _, m := range []int{1, 2, 3, 8, 301, 3001} {
		e, col := make([]float64, m), make([]float64, m)
		for j := range e {
			e[j] = rng.NormFloat64() * math.Exp(3*rng.NormFloat64())
			col[j] = math.Sqrt(rng.ExpFloat64())
		}
		a := math.Sqrt(rng.ExpFloat64())
		var wantD, want, wantLag float64 // the definitions, term by term
		x := make([]float64, m)
		for j, v := range e {
			wantD += v * v
			x[j] = v * (a * col[j])
			want += x[j] * x[j]
		}
		for j := 0; j+1 < m; j++ {
			wantLag += x[j] * x[j+1]
		}
		gotD, got, gotLag := scaledSquaresAndLag(e, col, a)
		for _, c := range []struct {
			name      string
			got, want float64
		}{{"Σ e²", gotD, wantD}, {"Σ x²", got, want}, {"Σ x x₊₁", gotLag, wantLag}} {
			if math.Float64bits(c.got) != math.Float64bits(c.want) {
				t.Errorf("m = %d: %s = %x, the definition %x", m, c.name, c.got, c.want)
			}
		}
	}
}
