package fanouttest

import (
	"fmt"
	"runtime"
	"strings"
	"sync"
	"testing"
)

// fakeT records Recovered's failure instead of failing the test; its
// Fatalf ends the goroutine that calls it, as testing.T's does.
type fakeT struct {
	testing.TB
	failure string
}

func (f *fakeT) Helper() {}
func (f *fakeT) Fatalf(format string, args ...any) {
	f.failure = fmt.Sprintf(format, args...)
	runtime.Goexit()
}

// check runs Recovered on a fakeT and returns the panic and the failure.
func check(f func()) (p any, failure string) {
	var ft fakeT
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		p = Recovered(&ft, f)
	}()
	wg.Wait()
	return p, ft.failure
}

// Recovered returns the call's panic, and fails a call that leaves a
// goroutine blocked behind it (the leak a worker waiting on a channel
// nobody sends on makes), naming the blocked goroutine in the stacks.
// A call that ends every goroutine it starts passes.
func TestRecoveredFindsWhatIsLeftBehind(t *testing.T) {
	p, failure := check(func() { panic("a fault") })
	if p != "a fault" || failure != "" {
		t.Errorf("a panicking call: panic %v, failure %q; want the panic and no failure", p, failure)
	}
	var wg sync.WaitGroup
	p, failure = check(func() {
		wg.Add(1)
		go func() { defer wg.Done() }()
		wg.Wait()
	})
	if p != nil || failure != "" {
		t.Errorf("a call that waits for its goroutine: panic %v, failure %q; want neither", p, failure)
	}
	never := make(chan int)
	defer close(never)
	_, failure = check(func() { go func() { <-never }() })
	if !strings.Contains(failure, "goroutines started during the call still running") || !strings.Contains(failure, "TestRecoveredFindsWhatIsLeftBehind") {
		t.Errorf("a call that leaves a goroutine blocked: failure %q, want the goroutines left and their stacks", failure)
	}
}

// A goroutine that was running before the call and ends during it does
// not hide one the call leaves blocked: the count of goroutines is the
// same before and after (runtime.NumGoroutine counts goroutines, not which
// ones), but the blocked one was started by the call. This is what a test
// repeated with -count met: the previous repetition's released goroutine
// ended during the next call, and TestRecoveredFindsWhatIsLeftBehind failed
// in 5 of 9 runs of go test -count=3 -cpu 1,2,4.
func TestRecoveredIsNotFooledByAGoroutineEnding(t *testing.T) {
	release, ended := make(chan struct{}), make(chan struct{})
	go func() {
		<-release
		close(ended)
	}()
	never := make(chan int)
	defer close(never)
	_, failure := check(func() {
		n := runtime.NumGoroutine()
		close(release)
		<-ended
		for runtime.NumGoroutine() >= n { // the released goroutine has gone
			runtime.Gosched()
		}
		go func() { <-never }()
	})
	if !strings.Contains(failure, "TestRecoveredIsNotFooledByAGoroutineEnding") {
		t.Errorf("a goroutine left blocked while another ended: failure %q, want the blocked goroutine's stack", failure)
	}
}
