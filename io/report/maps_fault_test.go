package report

import (
	"fmt"
	"runtime"
	"testing"

	"github.com/bandsolve/bandsolve/internal/fanout/fanouttest"
)

// A fault (a panic) in a matrix's At while maps.csv is formatted on several
// goroutines (FormatMapsPart) reaches the caller, where the run's recovery
// (the one a batch puts around each run, cmd/bandsolve runOne) sees it,
// instead of ending the program from a worker goroutine: a panic not
// recovered on the goroutine it happens on ends the program (The Go
// Programming Language Specification, Handling panics). Every row of the
// residual panics; the lowest block's first one, row 0, is the panic
// raised, at GOMAXPROCS 1 and 2 and with 1 to 3 workers.
func TestMapsFaultReachesTheCaller(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	axis, times := []float64{1, 2, 3, 4}, make([]float64, 50)
	for i := range times {
		times[i] = float64(i)
	}
	mats := []MapMatrix{
		{Name: "data", At: func(i, j int) float64 { return float64(i + j) }},
		{Name: "residual", At: func(i, j int) float64 { panic(fmt.Sprintf("a fault in the residual at row %d", i)) }},
	}
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		for workers := 1; workers <= 3; workers++ {
			for rep := 0; rep < 10; rep++ {
				got := fanouttest.Recovered(t, func() {
					FormatMapsPart(axis, times, nil, mats, workers)
				})
				if want := "a fault in the residual at row 0"; got != want {
					t.Fatalf("GOMAXPROCS %d, %d workers: the caller recovered %v, want %q", procs, workers, got, want)
				}
			}
		}
	}
}
