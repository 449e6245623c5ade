package pipeline

import (
	"bytes"
	"slices"
	"sync"
	"sync/atomic"

	"github.com/bandsolve/bandsolve/internal/fanout"
	"github.com/bandsolve/bandsolve/internal/vecmath"
	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/report"
	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
)

// later is a value computed on its own goroutine from startLater on and taken
// where it is used; a nil later has none.
type later[T any] struct {
	done  chan struct{}
	v     T
	fault fanout.Fault // f's panic, raised again by get
}

func startLater[T any](f func() T) *later[T] {
	l := &later[T]{done: make(chan struct{})}
	go func() {
		defer close(l.done)
		defer l.fault.Catch(nil)
		l.v = f()
	}()
	return l
}

// get waits for the value, or panics with f's panic (on f's goroutine it
// would end the program, past a batch's recovery per run); ok is false for
// a nil later.
func (l *later[T]) get() (v T, ok bool) {
	if l == nil {
		return v, false
	}
	<-l.done
	l.fault.Raise()
	return l.v, true
}

// earlyFiles are the two largest result files after the report's, maps.csv
// and uniqueness.csv, formatted on goroutines from the start of finish,
// beside the writers that come before theirs (those keep one core busy).
// Each is still written at its own writer's turn, so that the stage lists
// its files in the same order: verify reports differences in that order.
type earlyFiles struct {
	maps  *later[mapsFile]
	bands *later[bandsFile]
}

// mapsFile is maps.csv and the report's Maps read from it.
type mapsFile struct {
	csv  []byte
	maps *report.Maps
}

// startEarlyFiles begins formatting the files writeMaps and
// writeBandsAndIntervals write. The goroutines only read r.
func startEarlyFiles(r *Result) earlyFiles {
	var e earlyFiles
	if wantMaps(r) {
		e.maps = startLater(func() mapsFile {
			if f, ok := r.ahead.mapsFile(r); ok {
				return f // joined from the parts formatted ahead
			}
			return formatMaps(r)
		})
	}
	if wantBands(r) {
		parse := r.ahead.drawsResults(r)
		e.bands = startLater(func() bandsFile { return formatBands(r, parse) })
	}
	return e
}

// wait returns once both are formatted: no goroutine outlives finish.
func (e earlyFiles) wait() {
	e.maps.get()
	e.bands.get()
}

// bandsFile is uniqueness.csv and, when asked for, its table as
// report.ParseTable reads it (nil when not asked for, or when a half did
// not parse).
type bandsFile struct {
	csv   []byte
	table *report.Table
}

// formatBands makes uniqueness.csv in two halves of its row blocks, the
// second on a goroutine of its own, and with parse each half's table
// beside it: the spectra and profiles figures drawn beside the writers
// wait for that table (aheadResults), and the writing phase's core left
// idle while the run's goroutine waits for the file takes half of the
// work. The file is the first half followed by the second's rows.
//
// The table is the whole file's: each half is whole records (bandsPart
// writes whole rows, a quoted name with a line break included), and a CSV
// reader carries nothing from one record to the next (RFC 4180), so the
// records of the header and first half followed by those of the second
// half are the records of the whole.
func formatBands(r *Result, parse bool) bandsFile {
	if f, ok := r.ahead.bandBlocks().join(r, parse); ok {
		return f
	}
	sr := newSideRows(r)
	blocks := 2 * len(r.Constraints.Bands.Bands)
	h, rows := sr.halfOfBlocks(blocks)
	second := startLater(func() bandsFile {
		return sr.bandsHalf(r, h, blocks, sizeOfRows(rows), parse)
	})
	// No goroutine outlives the run, not even when the first half panics.
	defer func() { <-second.done }()
	first := sr.bandsHalf(r, 0, h, sr.size(), parse)
	rest, _ := second.get()
	header := bytes.IndexByte(rest.csv, '\n') + 1
	out := bandsFile{csv: append(first.csv, rest.csv[header:]...)}
	if first.table != nil && rest.table != nil {
		t := *first.table
		t.Text = append(make([][]string, 0, len(t.Text)+len(rest.table.Text)), t.Text...)
		t.Text = append(t.Text, rest.table.Text...)
		out.table = &t
	}
	return out
}

// halfOfBlocks is the row block where uniqueness.csv's rows are split in
// two halves as near equal as the blocks allow, and the rows after it.
func (sr sideRows) halfOfBlocks(blocks int) (h, after int) {
	total := 0
	for q := 0; q < blocks; q++ {
		total += sr.blockRows(q)
	}
	after, best := total, total // best: |rows before − rows after| at h
	for q, before := 0, 0; q <= blocks; q++ {
		if d := max(total-2*before, 2*before-total); d < best {
			h, after, best = q, total-before, d
		}
		if q < blocks {
			before += sr.blockRows(q)
		}
	}
	return h, after
}

// bandsHalf is uniqueness.csv's header and row blocks [from, to), parsed
// by report.ParseTable when parse is set.
func (sr sideRows) bandsHalf(r *Result, from, to, size int, parse bool) bandsFile {
	f := bandsFile{csv: sr.bandsPart(r, from, to, size).Bytes()}
	if parse {
		f.table, _ = report.ParseTable("uniqueness.csv", f.csv)
	}
	return f
}

// bandBlocks are uniqueness.csv's row blocks formatted, and parsed for the
// figures, while the uniqueness ranges of the other components are still
// searched: each component's spectrum and profile blocks on goroutines of
// their own from the moment both ends of its range are found
// (mcr.BandOptions.Found). The searches' last minutes keep one core of two
// busy, and the writing phase, which waited for the whole file before the
// figures could begin, is left the last component's blocks.
//
// Nothing formatted ahead is trusted as it is: each block keeps copies of
// the values it was formatted from, taken where the band was found (the
// run's goroutine waits in the search then), and the blocks are joined
// into the file only where the run's final values are the same bits
// (join); otherwise the file is formatted at its writer's turn as before.
type bandBlocks struct {
	parse  bool
	due    atomic.Bool // the file is waited for: no more stepping aside
	shared sync.Once
	in     rowInputs // the first band's copy
	sr     sideRows  // in's rows, formatted once
	blocks []*later[bandBlock]
}

// bandBlock is one row block: its file (header and rows), its table when
// parsed, and the values it was formatted from.
type bandBlock struct {
	csv                    []byte
	table                  *report.Table
	solution, atMin, atMax []float64
	conv                   [2]bool
}

// found is the mcr.BandOptions.Found that begins r's blocks (nil when bb
// is nil). It runs on a search goroutine while the run's goroutine waits
// for the searches, and copies what the blocks read from r.
func (bb *bandBlocks) found(r *Result) func(j int, b mcr.Band) {
	if bb == nil {
		return nil
	}
	k := r.Components
	bb.blocks = make([]*later[bandBlock], 2*k)
	var first sync.Once
	return func(j int, b mcr.Band) {
		first.Do(func() { bb.in = rowInputsOf(r, true) })
		for side, q := range []int{2 * j, 2*j + 1} {
			blk := bandBlock{conv: [2]bool{b.MinConverged, b.MaxConverged}}
			if side == 0 {
				blk.solution, blk.atMin, blk.atMax = mat.Col(nil, j, r.ALS.S), slices.Clone(b.MinSpectrum), slices.Clone(b.MaxSpectrum)
			} else {
				blk.solution, blk.atMin, blk.atMax = mat.Col(nil, j, r.ALS.C), slices.Clone(b.MinProfile), slices.Clone(b.MaxProfile)
			}
			bb.blocks[q] = startLater(func() bandBlock { return bb.format(q, blk) })
		}
	}
}

// format writes block q of blk's values, at a low priority until the
// file is waited for: while any goroutine waits for a processor (the
// searches, the checks, the figures drawn ahead keep both cores busy until
// the searches' last minutes) it sleeps rather than take one from them,
// as the inputs' hashing does (hashYielding).
func (bb *bandBlocks) format(q int, blk bandBlock) bandBlock {
	sleepWhileBusy(runnableSample(), func() bool { return !bb.due.Load() })
	bb.shared.Do(func() { bb.sr = bb.in.sideRows() })
	band := mcr.Band{MinConverged: blk.conv[0], MaxConverged: blk.conv[1]}
	band.MinSpectrum, band.MaxSpectrum = blk.atMin, blk.atMax
	if q%2 == 1 {
		band.MinSpectrum, band.MaxSpectrum = nil, nil
		band.MinProfile, band.MaxProfile = blk.atMin, blk.atMax
	}
	var w output.CSV
	w.Grow(sizeOfRows(len(blk.solution) + 1))
	w.Row(bandsHeader)
	bb.sr.writeBlock(&w, q, func(i int) float64 { return blk.solution[i] }, &band)
	blk.csv = w.Bytes()
	if bb.parse {
		blk.table, _ = report.ParseTable("uniqueness.csv", blk.csv)
	}
	return blk
}

// holds says block q of r's uniqueness.csv would be formatted from the
// same bits as blk was.
func (blk bandBlock) holds(r *Result, q int) bool {
	j, band := q/2, r.Constraints.Bands.Bands[q/2]
	if blk.conv != [2]bool{band.MinConverged, band.MaxConverged} {
		return false
	}
	if q%2 == 0 {
		return sameColumn(blk.solution, r.ALS.S, j) && vecmath.SameBits(blk.atMin, band.MinSpectrum) && vecmath.SameBits(blk.atMax, band.MaxSpectrum)
	}
	return sameColumn(blk.solution, r.ALS.C, j) && vecmath.SameBits(blk.atMin, band.MinProfile) && vecmath.SameBits(blk.atMax, band.MaxProfile)
}

// sameColumn says x holds column j of a, bit for bit.
func sameColumn(x []float64, a *mat.Dense, j int) bool {
	n, k := a.Dims()
	return n == len(x) && j < k && vecmath.SameBits(x, mat.Col(nil, j, a))
}

// join is uniqueness.csv put together from the blocks, with its table
// when asked and every block was parsed; ok is false when a block is
// missing or r's values are no longer those a block was formatted from.
func (bb *bandBlocks) join(r *Result, parse bool) (f bandsFile, ok bool) {
	if bb == nil || len(bb.blocks) != 2*len(r.Constraints.Bands.Bands) {
		return f, false
	}
	bb.due.Store(true)
	blocks := make([]bandBlock, len(bb.blocks))
	for q, l := range bb.blocks {
		if blocks[q], ok = l.get(); !ok {
			return f, false
		}
	}
	if len(blocks) == 0 || !bb.in.same(rowInputsOf(r, false)) {
		return f, false
	}
	size := 0
	for q, blk := range blocks {
		if !blk.holds(r, q) {
			return f, false
		}
		size += len(blk.csv)
	}
	// The file is the header and each block's rows after it; the table
	// the header's and the blocks' records in turn (see formatBands).
	header := bytes.IndexByte(blocks[0].csv, '\n') + 1
	f.csv = append(make([]byte, 0, size), blocks[0].csv[:header]...)
	rows := 0
	for _, blk := range blocks {
		f.csv = append(f.csv, blk.csv[header:]...)
		if blk.table != nil {
			rows += len(blk.table.Text)
		}
	}
	if parse {
		t := &report.Table{}
		for _, blk := range blocks {
			if blk.table == nil {
				t = nil
				break
			}
			if t.Text == nil {
				*t = *blk.table
				t.Text = make([][]string, 0, rows)
			}
			t.Text = append(t.Text, blk.table.Text...)
		}
		f.table = t
	}
	return f, true
}

// wait returns once every block is formatted (none when bb is nil): no
// goroutine outlives the run.
func (bb *bandBlocks) wait() {
	if bb != nil {
		bb.due.Store(true)
		for _, l := range bb.blocks {
			if l != nil {
				<-l.done
			}
		}
	}
}
