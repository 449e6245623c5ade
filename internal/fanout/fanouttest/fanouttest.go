// Package fanouttest checks, for tests of parallel loops, that a call
// whose workers panicked returned and left no goroutine behind: a worker
// left waiting on a channel or a condition holds its memory, and its
// caller too when the caller waits for it.
package fanouttest

import (
	"runtime"
	"testing"
	"time"
)

// Returned and settled bound the waits of Recovered: a call that has not
// returned within Returned is taken as blocked for good (the tests' calls
// take milliseconds), and goroutines still running Settled after it
// returned as left behind (a goroutine that has called its WaitGroup's
// Done may still be running for a moment).
const (
	Returned = time.Minute
	Settled  = 5 * time.Second
)

// Recovered calls f on a goroutine of its own and returns f's panic, nil
// when f returned normally. It fails t, with every goroutine's stack, when
// f has not returned within Returned, and when more goroutines are running
// than before the call once Settled has passed after it returned.
func Recovered(t testing.TB, f func()) any {
	t.Helper()
	before := runtime.NumGoroutine()
	done := make(chan any, 1)
	go func() {
		var p any
		defer func() { done <- p }()
		defer func() { p = recover() }()
		f()
	}()
	var p any
	select {
	case p = <-done:
	case <-time.After(Returned):
		t.Fatalf("the call has not returned after %v; goroutines:\n%s", Returned, stacks())
	}
	for end := time.Now().Add(Settled); runtime.NumGoroutine() > before; {
		if time.Now().After(end) {
			t.Fatalf("%d goroutines running after the call, %d before; goroutines:\n%s", runtime.NumGoroutine(), before, stacks())
		}
		time.Sleep(time.Millisecond)
	}
	return p
}

// stacks are the stacks of every goroutine.
func stacks() string {
	buf := make([]byte, 1<<20)
	return string(buf[:runtime.Stack(buf, true)])
}
