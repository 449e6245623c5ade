package pipeline

import (
	"bytes"

	"github.com/bandsolve/bandsolve/internal/fanout"
	"github.com/bandsolve/bandsolve/io/report"
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
