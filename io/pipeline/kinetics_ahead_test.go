package pipeline

import (
	"runtime"
	"sync"
	"testing"

	"github.com/bandsolve/bandsolve/internal/fanout/fanouttest"
	"github.com/bandsolve/bandsolve/mcr/kinetics"
)

// inOrder's contract, checked on units that record when they run: every
// unit the caller waits for has run once, none starts more than lead
// units past the one waited for, the caller finds every result in the
// order it asks, and after stop a unit no worker started is run on the
// caller when it is waited for, and the others never (the guarantee
// swapCheck's figures rest on: they are each unit's own, not the
// schedule's).
func TestInOrderRunsAheadWithinLead(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	for _, procs := range []int{1, 2, 4} {
		runtime.GOMAXPROCS(procs)
		const n = 12
		var mu sync.Mutex
		waited := -1
		runs := make([]int, n)
		results := make([]int, n)
		units := make([]func(), n)
		for u := range units {
			units[u] = func() {
				mu.Lock()
				runs[u]++
				if lead := min(procs, n); u >= waited+lead && waited >= 0 {
					t.Errorf("GOMAXPROCS %d: unit %d started while the caller waited for %d (lead %d)", procs, u, waited, lead)
				}
				mu.Unlock()
				results[u] = u * u
			}
		}
		o := startInOrder(units)
		for u := 0; u < 7; u++ {
			mu.Lock()
			waited = u
			mu.Unlock()
			o.wait(u)
			if results[u] != u*u {
				t.Fatalf("GOMAXPROCS %d: unit %d's result %d after wait", procs, u, results[u])
			}
		}
		o.stop()
		mu.Lock()
		waited = n // after stop no bound is checked: the caller runs what it waits for
		mu.Unlock()
		o.wait(10)
		if results[10] != 100 {
			t.Errorf("GOMAXPROCS %d: unit 10 waited for after stop did not run", procs)
		}
		o.stop()
		for u, c := range runs {
			if c > 1 {
				t.Errorf("GOMAXPROCS %d: unit %d ran %d times", procs, u, c)
			}
			if u < 7 && c != 1 || u == 10 && c != 1 {
				t.Errorf("GOMAXPROCS %d: unit %d ran %d times, waited for", procs, u, c)
			}
			if u >= 6+min(procs, n) && u != 10 && c != 0 {
				t.Errorf("GOMAXPROCS %d: unit %d ran, beyond the lead of the last wait and never waited for", procs, u)
			}
		}
	}
}

// A fault (a panic) in a unit a worker runs reaches the caller when it
// waits for that unit, where the run's recovery (the one a batch puts
// around each run, cmd/bandsolve runOne) sees it, instead of ending the
// program from the worker's goroutine: a panic not recovered on the
// goroutine it happens on ends the program (The Go Programming Language
// Specification, Handling panics). The units before it are taken as
// usual, and stop still returns.
func TestInOrderFaultReachesTheCaller(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		const n, bad = 6, 3
		results := make([]int, n)
		units := make([]func(), n)
		for u := range units {
			units[u] = func() {
				if u == bad {
					panic("a fault in unit 3")
				}
				results[u] = u + 1
			}
		}
		o := startInOrder(units)
		got := fanouttest.Recovered(t, func() {
			for u := 0; u < n; u++ {
				o.wait(u)
				if results[u] != u+1 {
					t.Errorf("GOMAXPROCS %d: unit %d's result %d after wait", procs, u, results[u])
				}
			}
		})
		o.stop()
		if got != "a fault in unit 3" {
			t.Errorf("GOMAXPROCS %d: the caller recovered %v, want the fault of unit %d", procs, got, bad)
		}
	}
}

// Best's non-negative cost is made once, by a unit run ahead or by the
// caller (onceCost). A unit that panicked while making it must not leave it
// made: sync.Once counts a call that panicked as done ("if f panics, Do
// considers it to have returned", package sync documentation), and the
// unit's panic reaches the caller only if it waits for that unit, which it
// may not (the check starts over), so the caller would take a zero cost,
// "not made", and say the data cannot tell the orders apart, at
// GOMAXPROCS 2 and not at 1. The caller then makes it itself, where a
// panic, if any, is its own.
func TestOnceCostAfterAUnitPanicked(t *testing.T) {
	var c onceCost
	func() {
		defer func() { _ = recover() }()
		c.make(func() costValue { panic("a fault in a unit") })
	}()
	want := costValue{v: kinetics.NonNegCost{Cost: 12.5}, ok: true}
	if got := c.get(func() costValue { return want }); got != want {
		t.Errorf("cost %+v after a unit's panic, want %+v made by the caller", got, want)
	}
	if got := c.get(func() costValue { return costValue{} }); got != want {
		t.Errorf("cost %+v asked again, want %+v as made", got, want)
	}
}
