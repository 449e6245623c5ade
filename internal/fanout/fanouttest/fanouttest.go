// Package fanouttest checks, for tests of parallel loops, that a call
// whose workers panicked returned and left no goroutine behind: a worker
// left waiting on a channel or a condition holds its memory, and its
// caller too when the caller waits for it.
package fanouttest

import (
	"runtime"
	"strings"
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
// f has not returned within Returned, and when a goroutine started during
// the call is still running Settled after it returned. Goroutines are told
// apart by their ids (runtime.Stack's "goroutine N [state]:" headers; an id
// is never given twice), not counted: a goroutine that was running before
// the call and ended during it, such as one a previous test released,
// would otherwise hide one the call left behind.
func Recovered(t testing.TB, f func()) any {
	t.Helper()
	before := goroutineIDs(stacks())
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
	for end := time.Now().Add(Settled); ; time.Sleep(time.Millisecond) {
		all := stacks()
		left := 0
		for id := range goroutineIDs(all) {
			if !before[id] {
				left++
			}
		}
		if left == 0 {
			return p
		}
		if time.Now().After(end) {
			t.Fatalf("%d goroutines started during the call still running %v after it returned; goroutines:\n%s", left, Settled, all)
		}
	}
}

// goroutineIDs are the ids of the goroutines in stacks' text.
func goroutineIDs(all string) map[string]bool {
	ids := map[string]bool{}
	for _, line := range strings.Split(all, "\n") {
		if rest, ok := strings.CutPrefix(line, "goroutine "); ok {
			if id, _, ok := strings.Cut(rest, " "); ok {
				ids[id] = true
			}
		}
	}
	return ids
}

// stacks are the stacks of every goroutine, in a buffer grown until they fit.
func stacks() string {
	for size := 1 << 20; ; size *= 2 {
		buf := make([]byte, size)
		if n := runtime.Stack(buf, true); n < size {
			return string(buf[:n])
		}
	}
}
