package svd

import (
	"fmt"
	"testing"

	"github.com/bandsolve/bandsolve/internal/cputime"
	"gonum.org/v1/gonum/mat"
)

// Benchmarks only (go test -bench): no timing assertions anywhere.

func benchMatrix(n, m int) *mat.Dense {
	rng := newRNG(uint64(n*7919 + m))
	d := noisyBilinear(rng, n, m, 4, 1e-3)
	return d
}

func BenchmarkDecompose(b *testing.B) {
	for _, sh := range [][2]int{{100, 1000}, {2000, 3000}} {
		d := benchMatrix(sh[0], sh[1])
		for _, c := range []struct {
			method string
			max    int
		}{{MethodAuto, 10}, {MethodExact, 0}, {MethodGram, 10}, {MethodRandomized, 10}} {
			if sh[0] > 1000 && c.method == MethodExact {
				continue // minutes with the pure-Go LAPACK; not a path auto takes at this size
			}
			b.Run(fmt.Sprintf("%dx%d/%s/r=%d", sh[0], sh[1], c.method, c.max), func(b *testing.B) {
				for b.Loop() {
					if _, err := Decompose(d, DecomposeOptions{Method: c.method, MaxFactors: c.max}); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}

func BenchmarkEFA(b *testing.B) {
	for _, sh := range [][2]int{{100, 1000}, {2000, 3000}} {
		d := benchMatrix(sh[0], sh[1])
		b.Run(fmt.Sprintf("%dx%d", sh[0], sh[1]), func(b *testing.B) {
			for b.Loop() {
				if _, err := EFA(d, 8); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

func BenchmarkEstimateRank(b *testing.B) {
	d := benchMatrix(2000, 3000)
	f, err := Decompose(d, DecomposeOptions{MaxFactors: 14})
	if err != nil {
		b.Fatal(err)
	}
	for b.Loop() {
		if _, err := EstimateRank(d, f, RankOptions{ReferenceRow: -1}); err != nil {
			b.Fatal(err)
		}
	}
}

// The sweeps alone on the scores of 24 factors of a 2000 × 3000 matrix of
// five species, the shape the pipeline's EFA runs on for 2000 spectra; the
// process CPU per run is reported too (the two sweeps run side by side).
func BenchmarkEFASweeps(b *testing.B) {
	rng := newRNG(2000)
	d := noisyBilinear(rng, 2000, 3000, 5, 1e-3)
	f, err := Decompose(d, DecomposeOptions{Method: MethodRandomized, MaxFactors: 24})
	if err != nil {
		b.Fatal(err)
	}
	cpu := cputime.Process()
	for b.Loop() {
		if _, err := efaSweeps(f, 2000, 3000, 6, false); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric((cputime.Process()-cpu)/float64(b.N)*1e3, "cpu-ms/op")
}

// BenchmarkAxisCorrelation is one measure of the noise's correlation along the axis at
// the size the default run of the 2000 × 3001 series takes: 22 residual rows of 3001
// points with 11 orthonormal directions projected out (the baseline order's fullest
// model), the lag window then 24.
func BenchmarkAxisCorrelation(b *testing.B) {
	const rows, m, p = 22, 3001, 11
	rng := newRNG(29)
	g := mat.NewDense(m, p, nil)
	for j := 0; j < m; j++ {
		for c := 0; c < p; c++ {
			g.Set(j, c, rng.NormFloat64())
		}
	}
	orthonormalize(g)
	e := mat.NewDense(rows, m, nil)
	for i := 0; i < rows; i++ {
		for j := 0; j < m; j++ {
			e.Set(i, j, rng.NormFloat64())
		}
	}
	for b.Loop() {
		AxisCorrelation(e, g)
	}
}
