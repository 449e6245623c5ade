package pipeline

import (
	"runtime"
	"testing"
)

// A fault (a panic) in the function of a later reaches the goroutine that
// takes its value, where the run's recovery (the one a batch puts around
// each run, cmd/bandsolve runOne) sees it, instead of ending the program
// from the later's goroutine: a panic not recovered on the goroutine it
// happens on ends the program (The Go Programming Language Specification,
// Handling panics). At GOMAXPROCS 1 and 2.
func TestLaterFaultReachesTheTaker(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		l := startLater(func() int { panic("a fault in the later") })
		got := func() (p any) {
			defer func() { p = recover() }()
			l.get()
			return nil
		}()
		if got != "a fault in the later" {
			t.Errorf("GOMAXPROCS %d: the taker recovered %v, want the later's fault", procs, got)
		}
	}
}
