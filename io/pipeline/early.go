package pipeline

import (
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
	bands *later[[]byte]
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
		e.bands = startLater(func() []byte { return bandsCSV(r) })
	}
	return e
}

// wait returns once both are formatted: no goroutine outlives finish.
func (e earlyFiles) wait() {
	e.maps.get()
	e.bands.get()
}
