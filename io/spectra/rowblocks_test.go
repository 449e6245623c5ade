package spectra

import (
	"fmt"
	"math/rand/v2"
	"runtime"
	"testing"
	"time"
)

// mapRowsReusing's contract (definition: the same as mapping then reducing
// each row in turn on one goroutine): every row is reduced exactly once, in
// ascending order, one call at a time, with the values its own map wrote,
// at any GOMAXPROCS and for pieces of uneven cost, buffers reused across
// passes.
func TestMapRowsReusingReducesInOrder(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	rng := rand.New(rand.NewPCG(5, 6))
	for _, procs := range []int{1, 2, 3, 4} {
		runtime.GOMAXPROCS(procs)
		for _, sz := range [][2]int{{1, 3}, {7, 9000}, {64, 1000}, {500, 700}, {2001, 301}} {
			n, width := sz[0], sz[1]
			p := newRowPieces(width)
			for pass := 0; pass < 2; pass++ {
				slow := rng.IntN(n) // a row whose map takes longer
				next, inside := 0, 0
				mapRow := func(i int, out []float64) {
					if i == slow {
						time.Sleep(time.Millisecond)
					}
					for j := range out {
						out[j] = float64(i*width + j + pass)
					}
				}
				// reduce may run on a worker goroutine, where t.Fatalf
				// would end that worker with the reduction unfinished and
				// the others waiting: the first fault is kept and said
				// after the call.
				var fault string
				reduce := func(i int, out []float64) {
					defer func() { next++; inside-- }()
					if inside++; inside != 1 && fault == "" {
						fault = "reductions overlap"
					}
					if i != next && fault == "" {
						fault = fmt.Sprintf("row %d reduced where %d was next", i, next)
					}
					for j, v := range out {
						if v != float64(i*width+j+pass) && fault == "" {
							fault = fmt.Sprintf("row %d value %d is %v", i, j, v)
						}
					}
				}
				mapRowsReusing(p, n, mapRow, reduce)
				if fault != "" {
					t.Fatalf("GOMAXPROCS %d, %d × %d: %s", procs, n, width, fault)
				}
				if next != n {
					t.Fatalf("GOMAXPROCS %d, %d × %d: %d of %d rows reduced", procs, n, width, next, n)
				}
			}
		}
	}
}
