package mcr

import (
	"math"
	"math/rand/v2"
	"runtime"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Type-7 quantiles by their definition h = (N−1)p (Hyndman & Fan 1996):
// for 1, 2, 3, 4 the 25th percentile is 1.75 and the 95th 3.85 (also what
// numpy.percentile returns by default, from memory).
func TestQuantile7(t *testing.T) {
	x := []float64{1, 2, 3, 4}
	for _, c := range []struct{ p, want float64 }{{0.25, 1.75}, {0.95, 3.85}, {0, 1}, {1, 4}, {0.5, 2.5}} {
		if got := quantile7(x, c.p); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("quantile %.2f = %g, want %g", c.p, got, c.want)
		}
	}
}

func noisyTwoComponent(sigma float64, seed uint64) (*mat.Dense, *mat.Dense, *mat.Dense) {
	n, m := 60, 50
	c := mat.NewDense(n, 2, nil)
	for i := 0; i < n; i++ {
		a := math.Exp(-4 * float64(i) / float64(n-1))
		c.SetRow(i, []float64{a, 1 - a})
	}
	s := mat.NewDense(m, 2, nil)
	for i := 0; i < m; i++ {
		x := float64(i) / float64(m-1)
		s.SetRow(i, []float64{bump(x, -0.1, 0.55), bump(x, 0.4, 1.1)})
	}
	var d mat.Dense
	d.Mul(c, s.T())
	rng := rand.New(rand.NewPCG(seed, 3))
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, d.At(i, j)+sigma*rng.NormFloat64())
		}
	}
	return &d, c, s
}

// The bootstrap spread of a spectrum point must match least-squares theory:
// with the profiles known, var(ŝ_j) = σ² [(CᵀC)⁻¹]_jj (Gauss–Markov), and
// the residual bootstrap reproduces it up to the factor (n − p)/n (Efron &
// Tibshirani 1993, §9.5). The profiles are estimated too, so the check
// allows ±35 %.
func TestBootstrapSpreadMatchesLeastSquares(t *testing.T) {
	const sigma = 0.01
	d, c, _ := noisyTwoComponent(sigma, 5)
	opt := Options{Mode: Species, Closure: true, Total: []float64{1}, Tolerance: 1e-6}
	fit, err := Resolve(Dense{d}, c, opt)
	if err != nil {
		t.Fatal(err)
	}
	iv, err := Bootstrap(d, fit, opt, BootstrapOptions{Replicates: 40, Seed: 7, KeepScale: true})
	if err != nil {
		t.Fatal(err)
	}
	var inv mat.Dense
	if err := inv.Inverse(gram(c)); err != nil {
		t.Fatal(err)
	}
	m, _ := fit.S.Dims()
	for j := 0; j < 2; j++ {
		want := sigma * math.Sqrt(inv.At(j, j))
		mean := 0.0
		for i := 0; i < m; i++ {
			mean += iv.SpectraSD.At(i, j)
		}
		mean /= float64(m)
		t.Logf("component %d: bootstrap sd %.4g, least squares %.4g", j+1, mean, want)
		if mean < 0.65*want || mean > 1.35*want {
			t.Errorf("component %d: bootstrap sd %.4g, least-squares theory %.4g", j+1, mean, want)
		}
		for i := 0; i < m; i++ {
			if iv.SpectraLow.At(i, j) > iv.SpectraHigh.At(i, j) {
				t.Fatalf("interval reversed at %d", i)
			}
		}
	}
}

// Same seed, any number of threads: identical intervals (determinism rule).
func TestBootstrapDeterministicAcrossThreads(t *testing.T) {
	d, c, _ := noisyTwoComponent(0.01, 6)
	opt := Options{Mode: Species, Tolerance: 1e-6}
	fit, err := Resolve(Dense{d}, c, opt)
	if err != nil {
		t.Fatal(err)
	}
	run := func(procs int) *Intervals {
		old := runtime.GOMAXPROCS(procs)
		defer runtime.GOMAXPROCS(old)
		iv, err := Bootstrap(d, fit, opt, BootstrapOptions{Replicates: 12, Seed: 3})
		if err != nil {
			t.Fatal(err)
		}
		return iv
	}
	a, b := run(1), run(4)
	if !mat.Equal(a.SpectraLow, b.SpectraLow) || !mat.Equal(a.ProfilesHigh, b.ProfilesHigh) || !mat.Equal(a.SpectraSD, b.SpectraSD) {
		t.Error("bootstrap intervals depend on GOMAXPROCS")
	}
	c2 := run(2)
	if !mat.Equal(a.ProfilesLow, c2.ProfilesLow) {
		t.Error("bootstrap intervals depend on GOMAXPROCS")
	}
}
