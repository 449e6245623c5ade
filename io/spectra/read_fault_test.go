package spectra

import (
	"fmt"
	"runtime"
	"testing"

	"github.com/bandsolve/bandsolve/internal/fanout/fanouttest"
)

// A fault (a panic) in a chunk of a matrix CSV's rows, parsed on several
// goroutines, reaches the caller, where the run's recovery (the one a batch
// puts around each run, cmd/bandsolve runOne) sees it, instead of ending
// the program from a worker goroutine: a panic not recovered on the
// goroutine it happens on ends the program (The Go Programming Language
// Specification, Handling panics). The lowest chunk's panic is raised, and
// a runtime error of a bug (an index out of range) is raised as itself, not
// reported as the file changing while it was read: only a fault on memory
// has an Addr method (runtime/debug.SetPanicOnFault's documentation;
// TestGuardFaultTruncatedMapping keeps that case an error). The file is
// largeCSV's, mapped (2 MB, 118 chunks of 64 rows); GOMAXPROCS 1 and 2,
// goroutines counted.
func TestMatrixParseFaultReachesTheCaller(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	defer func() { chunkStarts = nil }()
	p := largeCSV(t, "")
	for _, tc := range []struct {
		name   string
		faulty []int // chunks whose parse panics
		index  bool  // with an index out of range, else a string
		want   string
	}{
		{"one chunk", []int{5}, false, "a fault in chunk 5"},
		{"two chunks", []int{9, 3}, false, "a fault in chunk 3"},
		{"a runtime error", []int{2}, true, "runtime error: index out of range [2] with length 0"},
	} {
		chunkStarts = func(c int) {
			for _, f := range tc.faulty {
				if c == f {
					if tc.index {
						var none []int
						_ = none[c]
					}
					panic(fmt.Sprintf("a fault in chunk %d", c))
				}
			}
		}
		for _, procs := range []int{1, 2} {
			runtime.GOMAXPROCS(procs)
			for rep := 0; rep < 5; rep++ {
				var err error
				got := fanouttest.Recovered(t, func() { _, err = ReadMatrixCSV(p) })
				if fmt.Sprint(got) != tc.want {
					t.Fatalf("%s, GOMAXPROCS %d: the caller recovered %v (error %v), want %q", tc.name, procs, got, err, tc.want)
				}
				if _, isRuntime := got.(runtime.Error); isRuntime != tc.index {
					t.Fatalf("%s, GOMAXPROCS %d: the panic %v is a runtime error: %v", tc.name, procs, got, isRuntime)
				}
			}
		}
	}
}
