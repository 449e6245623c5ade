package product

import (
	"fmt"
	"runtime"
	"sync/atomic"
	"testing"

	"github.com/bandsolve/bandsolve/internal/fanout/fanouttest"
)

// A fault (a panic) in one piece of Each or FixedBlocks reaches the caller,
// where its recovery (the one a batch puts around each run, cmd/bandsolve
// runOne) sees it, instead of ending the program from a worker goroutine: a
// panic not recovered on the goroutine it happens on ends the program (The
// Go Programming Language Specification, Handling panics). Every piece
// below the fault has run; with two faults the lower one's panic is raised,
// at GOMAXPROCS 1 and 2 and on every repetition.
func TestFanOutFaultReachesTheCaller(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	const n, b = 40, 4 // 40 tasks; 10 blocks of 4
	for _, tc := range []struct {
		name string
		bad  []int // faulty pieces: tasks, or rows of blocks
		want string
	}{
		{"one fault", []int{12}, "a fault in piece 12"},
		{"two faults", []int{8, 28}, "a fault in piece 8"},
		{"first piece", []int{0, 36}, "a fault in piece 0"},
	} {
		for _, procs := range []int{1, 2} {
			runtime.GOMAXPROCS(procs)
			for rep := 0; rep < 20; rep++ {
				var ran [n]atomic.Bool
				piece := func(i int) {
					for _, x := range tc.bad {
						if i == x {
							panic(fmt.Sprintf("a fault in piece %d", i))
						}
					}
					ran[i].Store(true)
				}
				got := fanouttest.Recovered(t, func() { Each(n, piece) })
				if got != tc.want {
					t.Fatalf("Each, %s, GOMAXPROCS %d: the caller recovered %v, want %q", tc.name, procs, got, tc.want)
				}
				for i := 0; i < tc.bad[0]; i++ {
					if !ran[i].Load() {
						t.Fatalf("Each, %s, GOMAXPROCS %d: task %d, below the fault, did not run", tc.name, procs, i)
					}
				}
				got = fanouttest.Recovered(t, func() {
					FixedBlocks(n, b, func(r0, r1 int) {
						for i := r0; i < r1; i++ {
							piece(i)
						}
					})
				})
				if got != tc.want {
					t.Fatalf("FixedBlocks, %s, GOMAXPROCS %d: the caller recovered %v, want %q", tc.name, procs, got, tc.want)
				}
			}
		}
	}
}
