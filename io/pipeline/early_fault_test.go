package pipeline

import (
	"math"
	"runtime"
	"testing"

	"github.com/bandsolve/bandsolve/internal/fanout/fanouttest"
	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
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
		got := fanouttest.Recovered(t, func() {
			l.get()
		})
		if got != "a fault in the later" {
			t.Errorf("GOMAXPROCS %d: the taker recovered %v, want the later's fault", procs, got)
		}
	}
}

// The same for the constraint checks run beside the rest of a run
// (startChecks): a kinetic model inside the refits that panics reaches the
// goroutine that waits for the checks. Two Gaussian bands in an A -> B
// profile pair, a resolution with closure and non-negativity to check.
func TestChecksFaultReachesTheWaiter(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	const n, m = 30, 40
	c, s := mat.NewDense(n, 2, nil), mat.NewDense(m, 2, nil)
	for i := 0; i < n; i++ {
		a := math.Exp(-0.1 * float64(i))
		c.Set(i, 0, a)
		c.Set(i, 1, 1-a)
	}
	for j := 0; j < m; j++ {
		x := float64(j)
		s.Set(j, 0, math.Exp(-(x-12)*(x-12)/20))
		s.Set(j, 1, math.Exp(-(x-26)*(x-26)/20))
	}
	var d mat.Dense
	d.Mul(c, s.T())
	opt := mcr.Options{Mode: mcr.Species, Closure: true, Total: []float64{1}, Tolerance: 1e-6}
	fit, err := mcr.Resolve(mcr.Dense{D: &d}, c, opt)
	if err != nil {
		t.Fatal(err)
	}
	opt.HardModel = func(*mat.Dense) (*mat.Dense, error) { panic("a fault in the model") }
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		wait := startChecks(&Result{ALS: fit}, mcr.Dense{D: &d}, opt)
		got := fanouttest.Recovered(t, func() {
			wait()
		})
		if got != "a fault in the model" {
			t.Errorf("GOMAXPROCS %d: the waiter recovered %v, want the model's fault", procs, got)
		}
	}
}

// The same for the second start (beginSecondStart): a result without its
// data matrix makes the start's EFA fail on a nil pointer, a runtime error
// the waiter recovers.
func TestSecondStartFaultReachesTheWaiter(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		wait := beginSecondStart(&Result{Components: 2}, nil, mcr.Options{})
		got := fanouttest.Recovered(t, func() {
			wait()
		})
		if _, ok := got.(runtime.Error); !ok {
			t.Errorf("GOMAXPROCS %d: the waiter recovered %v, want a runtime error", procs, got)
		}
	}
}
