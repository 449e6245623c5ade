package spectra

import (
	"runtime"
	"sync"

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
}

func newRowPieces(width int) *rowPieces { return &rowPieces{width: width} }

// take returns k buffers of size values each, made on first use.
func (p *rowPieces) take(k, size int) [][]float64 {
	for len(p.bufs) < k {
		p.bufs = append(p.bufs, make([]float64, size))
	}
	return p.bufs[:k]
}

// mapRowsReusing computes, for every row i of [0, n), p.width values per row
// with mapRow(i, out) on up to GOMAXPROCS goroutines, and hands them to
// reduce(i, out) on the calling goroutine in ascending i: the per-value work
// (logarithms, divisions) runs in parallel, the sums over rows in one fixed
// order. out is only valid during the call.
//
// Its buffers come from p; values left in them from an earlier pass are
// never read, since mapRow writes a row's values before reduce reads them.
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
	type piece struct {
		r0, r1 int
		buf    []float64
		done   chan struct{}
	}
	slots := 4 * w
	free := make(chan []float64, slots)
	for _, buf := range p.take(slots, b*width) {
		free <- buf
	}
	work := make(chan *piece, slots)
	ordered := make(chan *piece, slots)
	go func() {
		// Pieces are handed out in row order and queued for the reduction
		// in the same order; a buffer is reused only once reduced.
		for r := 0; r < n; r += b {
			p := &piece{r0: r, r1: min(r+b, n), buf: <-free, done: make(chan struct{})}
			work <- p
			ordered <- p
		}
		close(work)
		close(ordered)
	}()
	var wg sync.WaitGroup
	for g := 0; g < w; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for p := range work {
				for i := p.r0; i < p.r1; i++ {
					o := (i - p.r0) * width
					mapRow(i, p.buf[o:o+width])
				}
				close(p.done)
			}
		}()
	}
	for p := range ordered {
		<-p.done
		for i := p.r0; i < p.r1; i++ {
			o := (i - p.r0) * width
			reduce(i, p.buf[o:o+width])
		}
		free <- p.buf
	}
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
