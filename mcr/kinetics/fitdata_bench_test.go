package kinetics

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// chainData is invented data for the benchmarks below: the six-species
// chain A -> B -> C -> D -> E -> F of the pipeline's BenchmarkHardModelChain
// (k = 4·10⁻³ … 4.5·10⁻⁴ s⁻¹ over 6000 s) at n times × m channels, one
// Gaussian band per species, noise 10⁻³ and noise weights about 1/σ² that
// vary by channel and time, as the pipeline passes them.
func chainData(tb testing.TB, n, m int) (*Scheme, []float64, *mat.Dense, FitOptions, []float64) {
	s := mustParse(tb, "A -> B -> C -> D -> E -> F")
	k := []float64{4e-3, 2.2e-3, 1.3e-3, 8e-4, 4.5e-4}
	times := linspace(0, 6000, n)
	sim, err := s.Simulate(k, []float64{1, 0, 0, 0, 0, 0}, times, 0)
	if err != nil {
		tb.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(3, 17))
	d := mat.NewDense(n, m, nil)
	for j := 0; j < m; j++ {
		for c := 0; c < 6; c++ {
			u := (float64(j) - float64(m)*(0.1+0.15*float64(c))) / (0.03 * float64(m))
			g := math.Exp(-0.5 * u * u)
			for i := 0; i < n; i++ {
				d.Set(i, j, d.At(i, j)+sim.C.At(i, c)*g)
			}
		}
	}
	row, col := make([]float64, n), make([]float64, m)
	for i := range row {
		row[i] = 0.8 + 0.4*rng.Float64()
	}
	for j := range col {
		col[j] = 1e6 * (0.5 + rng.Float64())
	}
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, d.At(i, j)+1e-3*rng.NormFloat64())
		}
	}
	return s, times, d, FitOptions{RowWeights: row, ColWeights: col, NoResidual: true}, k
}

// BenchmarkFitData2000x3001Chain is one weighted fit of the data matrix at
// the size of the pipeline's six-species benchmark, started 10 % off the
// true rate constants with the weighted data and their reduction of an
// earlier fit, as the exchange check's refits are made.
func BenchmarkFitData2000x3001Chain(b *testing.B) {
	s, times, d, opt, k := chainData(b, 2000, 3001)
	opt.InitialK = make([]float64, len(k))
	for j, v := range k {
		opt.InitialK[j] = 1.1 * v
	}
	first, _, err := FitData(s, times, d, opt)
	if err != nil {
		b.Fatal(err)
	}
	opt.Scaled, opt.Reduced = first.Scaled, first.Reduced
	b.ReportAllocs()
	for b.Loop() {
		if _, _, err := FitData(s, times, d, opt); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkNonNegativeCost2000x3001Chain is one non-negative cost of the
// exchange check at the true rate constants (3001 channels' q × q NNLS).
func BenchmarkNonNegativeCost2000x3001Chain(b *testing.B) {
	s, times, d, opt, k := chainData(b, 2000, 3001)
	b.ReportAllocs()
	for b.Loop() {
		if _, err := NonNegativeCost(s, times, d, k, opt); err != nil {
			b.Fatal(err)
		}
	}
}
