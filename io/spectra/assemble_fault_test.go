package spectra

import (
	"runtime"
	"testing"

	"github.com/bandsolve/bandsolve/internal/fanout/fanouttest"
	"gonum.org/v1/gonum/mat"
)

// A fault (a panic) in a chunk of rows whose absorbances are formed on
// several goroutines (absorbances) reaches the caller, where the run's
// recovery (the one a batch puts around each run, cmd/bandsolve runOne)
// sees it, instead of ending the program from a worker goroutine: a panic
// not recovered on the goroutine it happens on ends the program (The Go
// Programming Language Specification, Handling panics). A difference matrix
// of 100 rows for 256 beams makes chunks 1 to 3 (64 rows each) fail on
// gonum's row check (mat.ErrRowAccess), at GOMAXPROCS 1 and 2.
func TestAbsorbanceFaultReachesTheCaller(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	const n, m = 256, 8
	v := mat.NewDense(n, m, nil)
	ref := make([]float64, m)
	for j := range ref {
		ref[j] = 2
		for i := 0; i < n; i++ {
			v.Set(i, j, 1)
		}
	}
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		for rep := 0; rep < 10; rep++ {
			got := fanouttest.Recovered(t, func() {
				absorbances(v, ref, nil, mat.NewDense(100, m, nil), nil, nil)
			})
			if got != mat.ErrRowAccess {
				t.Fatalf("GOMAXPROCS %d: the caller recovered %v, want %v", procs, got, mat.ErrRowAccess)
			}
		}
	}
}
