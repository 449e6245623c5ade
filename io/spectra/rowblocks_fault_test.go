package spectra

import (
	"fmt"
	"runtime"
	"testing"
	"time"

	"github.com/bandsolve/bandsolve/internal/fanout/fanouttest"
)

// A fault (a panic) in a map or a reduction of mapRowsReusing reaches the
// caller, where the run's recovery (the one a batch puts around each run,
// cmd/bandsolve runOne) sees it, instead of ending the program from a worker
// goroutine: a panic not recovered on the goroutine it happens on ends the
// program (The Go Programming Language Specification, Handling panics). The
// lowest piece's panic is raised, every row of the pieces below it is
// reduced, in order, once each, and no worker is left waiting for a buffer
// (fanouttest.Recovered counts the goroutines), at GOMAXPROCS 1 to 4 and on
// every repetition. 2560 rows of 8 values are 40 pieces of 64 rows; at
// GOMAXPROCS 2 the buffers hold 8 pieces, so a reduction held up (a slow
// fault in row 10) leaves the other worker waiting for a buffer when the
// reduction fails.
func TestMapRowsFaultReachesTheCaller(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	const n, width, piece = 2560, 8, 64
	type fault struct {
		row    int
		reduce bool // in the reduction, else in the map
		slow   bool // after a wait of 5 ms
	}
	for _, tc := range []struct {
		name   string
		faults []fault
		want   string
	}{
		{"one map", []fault{{row: 200}}, "a fault in the map of row 200"},
		{"one reduction", []fault{{row: 1000, reduce: true}}, "a fault in the reduction of row 1000"},
		{"two maps", []fault{{row: 2000}, {row: 300}}, "a fault in the map of row 300"},
		{"a reduction below a map", []fault{{row: 1300}, {row: 1200, reduce: true}}, "a fault in the reduction of row 1200"},
		{"the first row", []fault{{row: 0}, {row: 2559}}, "a fault in the map of row 0"},
		{"workers waiting for buffers", []fault{{row: 10, reduce: true, slow: true}}, "a fault in the reduction of row 10"},
	} {
		low := n // the first row of the lowest faulty piece
		for _, f := range tc.faults {
			low = min(low, f.row/piece*piece)
		}
		fails := func(i int, reduce bool) {
			for _, f := range tc.faults {
				if f.row == i && f.reduce == reduce {
					if f.slow {
						time.Sleep(5 * time.Millisecond)
					}
					what := map[bool]string{false: "map", true: "reduction"}[reduce]
					panic(fmt.Sprintf("a fault in the %s of row %d", what, i))
				}
			}
		}
		for _, procs := range []int{1, 2, 3, 4} {
			runtime.GOMAXPROCS(procs)
			p := newRowPieces(width)
			for rep := 0; rep < 10; rep++ {
				next, order := 0, ""
				mapRow := func(i int, out []float64) {
					fails(i, false)
					out[0] = float64(i)
				}
				reduce := func(i int, out []float64) {
					fails(i, true)
					if (i != next || out[0] != float64(i)) && order == "" {
						order = fmt.Sprintf("row %d reduced with %v where %d was next", i, out[0], next)
					}
					next++
				}
				got := fanouttest.Recovered(t, func() { mapRowsReusing(p, n, mapRow, reduce) })
				if got != tc.want {
					t.Fatalf("%s, GOMAXPROCS %d: the caller recovered %v, want %q", tc.name, procs, got, tc.want)
				}
				if order != "" {
					t.Fatalf("%s, GOMAXPROCS %d: %s", tc.name, procs, order)
				}
				if next < low {
					t.Fatalf("%s, GOMAXPROCS %d: %d rows reduced, want every row below the faulty piece's (%d)", tc.name, procs, next, low)
				}
			}
		}
	}
}
