package spectra

import (
	"runtime"
	"sync"
	"sync/atomic"

	"github.com/bandsolve/bandsolve/internal/fanout"
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
//
// A panic in mapRow or reduce is raised again here once every worker has
// ended, the lowest piece's (rowPass.work).
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
	slots := 4 * w
	pieces := (n + b - 1) / b
	pass := &rowPass{n: n, b: b, width: width, pieces: pieces, slots: slots,
		bufs: p.take(slots, b*width), mapRow: mapRow, reduce: reduce,
		mapped: make([]bool, pieces), stop: pieces}
	pass.freed.L = &pass.mu
	var wg sync.WaitGroup
	for g := 1; g < w; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			pass.work()
		}()
	}
	pass.work()
	wg.Wait()
	pass.fault.Raise()
}

// rowPass is what the workers of one parallel mapRowsReusing share.
type rowPass struct {
	n, b, width    int
	pieces, slots  int
	bufs           [][]float64
	mapRow, reduce func(i int, out []float64)

	mu       sync.Mutex
	freed    sync.Cond // a buffer was freed, or stop lowered; L is &mu
	mapped   []bool
	next     int  // the next piece to reduce
	reducing bool // a worker is reducing pieces next, next+1, …
	claim    atomic.Int64
	stop     int // the lowest piece whose map or reduction panicked
	fault    fanout.Fault
}

// rows calls f on each row of piece k with the row's values in the
// piece's buffer.
func (s *rowPass) rows(k int, f func(i int, out []float64)) {
	buf := s.bufs[k%s.slots]
	for i := k * s.b; i < min(s.n, (k+1)*s.b); i++ {
		o := (i - k*s.b) * s.width
		f(i, buf[o:o+s.width])
	}
}

// work is one worker's part of the pass. A panic in a map or a reduction
// ends its worker; the others are woken and leave every piece from it on,
// but finish those below, so that the lowest piece's panic is the one
// raised whatever the scheduling (internal/fanout): pieces are claimed in
// ascending order, and each below the one that failed, mapped and reduced
// in turn, frees the buffer the next waits for. No worker is left waiting
// on freed. Within one piece all maps come before its reductions, where
// one goroutine (GOMAXPROCS 1) alternates them row by row.
func (s *rowPass) work() {
	at := -1 // the piece this worker maps or reduces
	defer s.fault.Catch(&at)
	ended := false
	defer func() {
		if !ended { // panicking: stop at this piece, wake the waiters
			s.mu.Lock()
			s.stop = min(s.stop, at)
			s.freed.Broadcast()
			s.mu.Unlock()
		}
	}()
	s.mapAndReduce(&at)
	ended = true
}

// mapAndReduce claims pieces in turn, maps each and, when it is next,
// reduces it and those mapped after it; *at is the piece it is on. A piece
// from stop on is left: its worker returns.
func (s *rowPass) mapAndReduce(at *int) {
	for {
		k := int(s.claim.Add(1) - 1)
		if k >= s.pieces {
			return
		}
		s.mu.Lock()
		for s.next <= k-s.slots && k < s.stop { // its buffer still holds piece k − slots
			s.freed.Wait()
		}
		if k >= s.stop {
			s.mu.Unlock()
			return
		}
		s.mu.Unlock()
		*at = k
		s.rows(k, s.mapRow)
		s.mu.Lock()
		s.mapped[k] = true
		if !s.reducing && s.next == k {
			s.reduceMapped(at)
		}
		s.mu.Unlock()
	}
}

// reduceMapped reduces piece next and the mapped pieces after it below
// stop, outside the lock, in order; the mutex orders these calls after the
// maps they read and before later reductions. Called with mu held.
func (s *rowPass) reduceMapped(at *int) {
	s.reducing = true
	for s.next < s.stop && s.mapped[s.next] {
		r := s.next
		s.mu.Unlock()
		*at = r
		s.rows(r, s.reduce)
		s.mu.Lock()
		s.next++
		s.freed.Broadcast()
	}
	s.reducing = false
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
