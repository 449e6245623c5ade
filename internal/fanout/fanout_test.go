package fanout

import (
	"errors"
	"runtime"
	"testing"

	"github.com/bandsolve/bandsolve/internal/fanout/fanouttest"
)

// Error keeps a panic that is an error as that error: a run-time panic's
// value implements runtime.Error (The Go Programming Language
// Specification, Run-time panics), which errors.As must still find once
// the panic is returned as an error; any other value gives its text.
func TestErrorKeepsThePanicValue(t *testing.T) {
	p := fanouttest.Recovered(t, func() {
		var none []int
		_ = none[len(t.Name())]
	})
	var re runtime.Error
	if err := Error(p); !errors.As(err, &re) || err != p {
		t.Errorf("Error(%v) = %v, want the runtime error itself", p, err)
	}
	if err := Error("a fault in piece 3"); err == nil || err.Error() != "a fault in piece 3" {
		t.Errorf("Error of a string = %v, want its text", err)
	}
	if err := Error(7); err == nil || err.Error() != "7" {
		t.Errorf("Error of 7 = %v, want 7", err)
	}
}
