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
			if n%2 == 1 {
				// Buffers cut from lent memory, enough for three pieces.
				p.borrow(make([]float64, 3*rowBlock(width)*width+5))
			}
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

// take cuts its buffers from lent memory while it lasts (borrow), each its
// own stretch of it, then makes the rest: buffers that overlapped would hand
// one piece's values to another (the contract above).
func TestRowPiecesBorrowDisjoint(t *testing.T) {
	const size = 10
	spare := make([]float64, 2*size+7)
	p := newRowPieces(1)
	p.borrow(spare)
	bufs := p.take(4, size)
	for k, b := range bufs {
		if len(b) != size || cap(b) != size {
			t.Fatalf("buffer %d has length %d capacity %d, want %d and %d", k, len(b), cap(b), size, size)
		}
		b[0] = float64(k + 1)
	}
	for k := 0; k < 2; k++ {
		if &bufs[k][0] != &spare[k*size] {
			t.Errorf("buffer %d is not the lent memory's stretch %d", k, k)
		}
	}
	if spare[0] != 1 || spare[size] != 2 || spare[2*size] != 0 {
		t.Errorf("lent memory holds %v, %v, %v at the buffers' starts, want 1, 2, 0", spare[0], spare[size], spare[2*size])
	}
	if bufs[2][0] != 3 || bufs[3][0] != 4 {
		t.Errorf("made buffers hold %v, %v, want 3, 4", bufs[2][0], bufs[3][0])
	}
	if again := p.take(4, size); &again[3][0] != &bufs[3][0] {
		t.Error("a second take made new buffers instead of reusing")
	}
}
