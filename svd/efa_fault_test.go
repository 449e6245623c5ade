package svd

import (
	"runtime"
	"testing"

	"github.com/bandsolve/bandsolve/internal/fanout/fanouttest"
	"gonum.org/v1/gonum/mat"
)

// A fault (a panic) in the backward sweep of EFA, on its own goroutine,
// reaches the caller instead of ending the program past the caller's
// recovery (the one a batch puts around each run, cmd/bandsolve runOne): a
// panic not recovered on the goroutine it happens on ends the program (The
// Go Programming Language Specification, Handling panics). Asking for no
// factors makes both sweeps panic on gonum's zero-size check
// (mat.ErrZeroLength); the caller recovers it and the backward sweep's
// panic does not end the test binary, at GOMAXPROCS 1 and 2.
func TestSweepFaultReachesTheCaller(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	const n, k = 12, 3
	u := mat.NewDense(n, k, nil)
	for i := 0; i < n; i++ {
		u.Set(i, i%k, 1)
	}
	fac := &Factors{U: u, S: []float64{3, 2, 1}, V: mat.NewDense(5, k, nil)}
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		for rep := 0; rep < 20; rep++ {
			got := fanouttest.Recovered(t, func() {
				efaSweeps(fac, n, 5, 0, true)
			})
			if got != mat.ErrZeroLength {
				t.Fatalf("GOMAXPROCS %d: the caller recovered %v, want %v", procs, got, mat.ErrZeroLength)
			}
		}
	}
}
