package spectra

import (
	"runtime"
	"sync"
	"sync/atomic"

	"github.com/bandsolve/bandsolve/internal/product"
)

// Work on the rows of a data-sized matrix on up to GOMAXPROCS goroutines,
// with results that do not depend on how many ran: each row is done by one
// call, and sums across rows are taken afterwards in row order by one
// goroutine (a floating-point sum depends on its order).

// rowBlock is how many rows one piece of parallel work covers: enough that
// handing a piece out costs little next to it, few enough that the buffers
// in flight stay small (4 × GOMAXPROCS pieces of rowBlock × m values).
func rowBlock(m int) int {
	return max(1, min(64, (1<<16)/max(m, 1)))
}

// eachRowBlock runs f on [r0, r1) blocks covering [0, n), on up to
// GOMAXPROCS goroutines. f must only write what belongs to its rows.
func eachRowBlock(n, m int, f func(r0, r1 int)) {
	product.FixedBlocks(n, rowBlock(m), f)
}

// rowPieces are the buffers mapRowsReusing hands its pieces of rows round
// in (4 × GOMAXPROCS of rowBlock rows), kept for the next pass over rows of
// the same width: the weight fits make two or four such passes, and memory
// new to the process costs more on first touch than the pass's writing.
type rowPieces struct {
	width int
	bufs  [][]float64
	spare []float64 // memory to cut buffers from before making any (borrow)
}

func newRowPieces(width int) *rowPieces { return &rowPieces{width: width} }

// borrow lends the pieces memory that the caller will overwrite in full
// once they are no longer used: the buffers are cut from it while it
// lasts. A data-sized matrix about to be written is such memory, already
// the process's to fault in: the pieces then add no pages of their own
// (4 MB of them at 2000 × 3001 with a blank, each page's first touch about
// 10 µs on the benchmark machine).
func (p *rowPieces) borrow(spare []float64) { p.spare = spare }

// take returns k buffers of size values each, made on first use.
func (p *rowPieces) take(k, size int) [][]float64 {
	for len(p.bufs) < k {
		if len(p.spare) >= size {
			p.bufs = append(p.bufs, p.spare[:size:size])
			p.spare = p.spare[size:]
			continue
		}
		p.bufs = append(p.bufs, make([]float64, size))
	}
	return p.bufs[:k]
}

// mapRowsReusing computes, for every row i of [0, n), p.width values per row
// with mapRow(i, out) on up to GOMAXPROCS goroutines, and hands them to
// reduce(i, out) in ascending i, one call at a time: the per-value work
// (logarithms, divisions) runs in parallel, the sums over rows in one fixed
// order. out is only valid during the call.
//
// The reduction has no goroutine of its own: the worker that maps the
// piece of rows next in order reduces it, and every piece after it already
// mapped, while the others go on mapping. A reducer goroutine beside
// GOMAXPROCS mappers waited for a processor while the mappers ran ahead
// and filled every buffer, then reduced alone while they waited: the
// passes kept 1.2–1.5 of 2 cores busy where the maps alone keep both.
//
// Its buffers come from p, piece k in buffer k mod slots; a piece is mapped
// only once the piece slots before it is reduced. Values left in them from
// an earlier pass are never read, since mapRow writes a row's values before
// reduce reads them.
func mapRowsReusing(p *rowPieces, n int, mapRow func(i int, out []float64), reduce func(i int, out []float64)) {
	width := p.width
	b := rowBlock(width)
	w := runtime.GOMAXPROCS(0)
	if w < 2 || n <= b {
		buf := p.take(1, b*width)[0][:width]
		for i := 0; i < n; i++ {
			mapRow(i, buf)
			reduce(i, buf)
		}
		return
	}
	pieces := (n + b - 1) / b
	slots := 4 * w
	bufs := p.take(slots, b*width)
	rows := func(k int, f func(i int, out []float64)) {
		buf := bufs[k%slots]
		for i := k * b; i < min(n, (k+1)*b); i++ {
			o := (i - k*b) * width
			f(i, buf[o:o+width])
		}
	}
	var (
		mu       sync.Mutex
		freed    = sync.NewCond(&mu)
		mapped   = make([]bool, pieces)
		next     int  // the next piece to reduce
		reducing bool // a worker is reducing pieces next, next+1, …
		claim    atomic.Int64
	)
	work := func() {
		for {
			k := int(claim.Add(1) - 1)
			if k >= pieces {
				return
			}
			mu.Lock()
			for next <= k-slots { // its buffer still holds piece k − slots
				freed.Wait()
			}
			mu.Unlock()
			rows(k, mapRow)
			mu.Lock()
			mapped[k] = true
			if reducing || next != k {
				mu.Unlock()
				continue
			}
			// Piece k is next: reduce it and the mapped pieces after it,
			// outside the lock, in order; the mutex orders these calls
			// after the maps they read and before later reductions.
			reducing = true
			for next < pieces && mapped[next] {
				r := next
				mu.Unlock()
				rows(r, reduce)
				mu.Lock()
				next++
				freed.Broadcast()
			}
			reducing = false
			mu.Unlock()
		}
	}
	var wg sync.WaitGroup
	for g := 1; g < w; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			work()
		}()
	}
	work()
	wg.Wait()
}

// scratch hands out buffers of one length for the blocks of product.FixedBlocks and
// takes them back, so that a pass over the data allocates one per worker
// rather than one per block (at 20 000 × 3000 the noise model's blocks
// alone made 0.5 GB of garbage, which let the heap grow by as much).
type scratch struct {
	free chan []float64
	size int
}

func newScratch(size int) *scratch {
	return &scratch{free: make(chan []float64, runtime.GOMAXPROCS(0)), size: size}
}

// get returns a buffer of the scratch's length; its values are left over
// from its last use.
func (s *scratch) get() []float64 {
	select {
	case b := <-s.free:
		return b
	default:
		return make([]float64, s.size)
	}
}

func (s *scratch) put(b []float64) {
	select {
	case s.free <- b:
	default:
	}
}
