package mcr

import (
	"runtime"
	"testing"

	"github.com/bandsolve/bandsolve/internal/fanout/fanouttest"
	"gonum.org/v1/gonum/mat"
)

// A fault (a panic) in the workers of SolveMany and Bootstrap reaches the
// caller, where its recovery (the one a batch puts around each run,
// cmd/bandsolve runOne) sees it, instead of ending the program from a worker
// goroutine: a panic not recovered on the goroutine it happens on ends the
// program (The Go Programming Language Specification, Handling panics).
// SolveMany's fault is a fixed mask too short for the columns from 200 on,
// an index out of range in chunks 1 and 2 (128 columns each): chunk 1's
// message, the lowest chunk's, is the one raised, at GOMAXPROCS 1 and 2.
func TestWorkerFaultReachesTheCaller(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	const k, cols = 2, 3 * 128
	g := mat.NewSymDense(k, []float64{2, 0.5, 0.5, 1})
	b := mat.NewDense(k, cols, nil)
	for c := 0; c < cols; c++ {
		b.Set(0, c, 1)
		b.Set(1, c, float64(c%7)-3)
	}
	p := Problem{G: g, B: b, FixMask: [][]bool{make([]bool, 200), nil}, Fixed: mat.NewDense(k, cols, nil)}
	d, c0, _ := noisyTwoComponent(0.01, 6)
	opt := Options{Mode: Species, Tolerance: 1e-6}
	fit, err := Resolve(Dense{d}, c0, opt)
	if err != nil {
		t.Fatal(err)
	}
	opt.HardModel = func(*mat.Dense) (*mat.Dense, error) { panic("a fault in the model") }
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		for rep := 0; rep < 10; rep++ {
			got := fanouttest.Recovered(t, func() { SolveMany(p) })
			e, ok := got.(runtime.Error)
			if want := "runtime error: index out of range [200] with length 200"; !ok || e.Error() != want {
				t.Fatalf("SolveMany, GOMAXPROCS %d: the caller recovered %v, want %q", procs, got, want)
			}
		}
		got := fanouttest.Recovered(t, func() { Bootstrap(d, fit, opt, BootstrapOptions{Replicates: 6, Seed: 3}) })
		if got != "a fault in the model" {
			t.Errorf("Bootstrap, GOMAXPROCS %d: the caller recovered %v, want the model's fault", procs, got)
		}
	}
}

// The same for the range searches of FeasibleBands (allExtremes): with the
// last component's profile taken away after the setup, the searches fail
// on gonum's shape check (its panic mat.ErrShape); the caller recovers it.
func TestRangeSearchFaultReachesTheCaller(t *testing.T) {
	const n, m, k = 40, 60, 4
	c, s := bandsBenchPair(n, m, k)
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	o := BandOptions{Mode: Species, Tolerance: 1e-3, MaxEvaluations: 200, Alpha: 0.05}
	p := &bandProblem{c: c, s: s, n: n, m: m, k: k, opt: o}
	if err := p.setup(); err != nil {
		t.Fatal(err)
	}
	p.newWork()
	p.c = c.Slice(0, n, 0, k-1).(*mat.Dense)
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		got := fanouttest.Recovered(t, func() { p.allExtremes(nil) })
		if got != mat.ErrShape {
			t.Errorf("GOMAXPROCS %d: the caller recovered %v, want %v", procs, got, mat.ErrShape)
		}
	}
}

// The same for FitWeighted, whose data sums run on a goroutine beside the
// residual sums: a lookup of missing points that panics (on both, at the
// point (3, 5)) reaches the caller, and the goroutine's panic is not left to
// end the program, at GOMAXPROCS 1 and 2.
func TestWeightedFitFaultReachesTheCaller(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	const n, m = 8, 10
	d, c, s := mat.NewDense(n, m, nil), mat.NewDense(n, 1, nil), mat.NewDense(m, 1, nil)
	row, col := make([]float64, n), make([]float64, m)
	for i := range row {
		row[i] = 1
	}
	for j := range col {
		col[j] = 1
	}
	missing := func(i, j int) bool {
		if i == 3 && j == 5 {
			panic("a fault in the lookup")
		}
		return false
	}
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		for rep := 0; rep < 20; rep++ {
			got := fanouttest.Recovered(t, func() { FitWeighted(d, c, s, row, col, missing) })
			if got != "a fault in the lookup" {
				t.Fatalf("GOMAXPROCS %d: the caller recovered %v, want the lookup's fault", procs, got)
			}
		}
	}
}
