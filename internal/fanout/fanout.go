// Package fanout carries a panic from the worker goroutines of a parallel
// loop to the goroutine that waits for them. A panic not recovered on the
// goroutine it happens on ends the program (The Go Programming Language
// Specification, Handling panics), past any recovery of the caller's, such
// as the one a batch puts around each run (cmd/bandsolve runOne). Each
// worker recovers once, around its whole loop, not around each piece, so the
// loops themselves are untouched; the caller waits for every worker and then
// raises the panic again.
//
// When several pieces panic, the one raised is the panic of the lowest piece
// number, whichever worker ran it or ended first: with pieces handed out in
// ascending order, every piece below the lowest failing one is run, so the
// panic raised does not depend on scheduling or GOMAXPROCS.
package fanout

import (
	"fmt"
	"sync"
)

// Fault keeps the panic of the lowest-numbered piece among a loop's workers.
// Its zero value is ready; it is safe for concurrent use.
type Fault struct {
	mu    sync.Mutex
	set   bool
	piece int
	value any
}

// Catch recovers a worker's panic and keeps it if *piece, the piece the worker
// was on, is below those kept so far; a nil piece counts as piece 0 (a
// single goroutine beside the caller). It must be deferred directly on the
// worker goroutine (defer f.Catch(&piece)), for recover to see the panic.
func (f *Fault) Catch(piece *int) {
	p := recover()
	if p == nil {
		return
	}
	at := 0
	if piece != nil {
		at = *piece
	}
	f.mu.Lock()
	defer f.mu.Unlock()
	if !f.set || at < f.piece {
		f.set, f.piece, f.value = true, at, p
	}
}

// Raise panics with the panic kept, if any. Call it once every worker has
// ended, on the goroutine that waited for them.
func (f *Fault) Raise() {
	if f.set {
		panic(f.value)
	}
}

// Error is a recovered panic p as an error, for a loop whose caller
// already returns errors and reports the panic as one (naming the file or
// path the piece was on): p itself when it is an error (a runtime.Error,
// mat.ErrShape …), so that errors.Is and errors.As still find it, else an
// error with p's text.
func Error(p any) error {
	if err, ok := p.(error); ok {
		return err
	}
	return fmt.Errorf("%v", p)
}
