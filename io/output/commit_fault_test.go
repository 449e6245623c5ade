package output

import (
	"errors"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"sync"
	"testing"

	"github.com/bandsolve/bandsolve/internal/fanout/fanouttest"
)

// A fault (a panic) in a flush on one of the goroutines that flush a stage
// (the commit's syncTree, the flusher beside the writes) becomes that
// path's error, which fails the commit as a failed flush does
// (TestCommitReportsAFailedFlush: no output folder, no stage left), instead
// of ending the program from the goroutine past the run's recovery (the one
// a batch puts around each run, cmd/bandsolve runOne): a panic not
// recovered on the goroutine it happens on ends the program (The Go
// Programming Language Specification, Handling panics). With two faults
// both are reported, in the order of the paths (the stage's folder before
// its figures folder, filepath.WalkDir's lexical order); a runtime error
// stays findable (errors.As); no goroutine is left behind; GOMAXPROCS 1
// and 2.
func TestFlushFaultFailsTheCommit(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	for _, tc := range []struct {
		name    string
		faulty  []string // names in the stage whose flush panics ("" the stage itself)
		once    bool     // only the first flush of each panics (the one beside the write)
		runtime bool     // the panic is a runtime error (an index out of range)
	}{
		{"at the commit", []string{"", "figures"}, false, false},
		{"a runtime error at the commit", []string{"figures"}, false, true},
		{"beside the writes", []string{"a.csv"}, true, false},
	} {
		for _, procs := range []int{1, 2} {
			runtime.GOMAXPROCS(procs)
			for rep := 0; rep < 5; rep++ {
				out := filepath.Join(t.TempDir(), "out")
				st, err := NewStage(out, false)
				if err != nil {
					t.Fatal(err)
				}
				var faulty []string
				for _, n := range tc.faulty {
					faulty = append(faulty, st.Path(n))
				}
				var mu sync.Mutex
				panicked := map[string]bool{}
				watchFlushes(t, func(p string) error {
					mu.Lock()
					again := panicked[p]
					panicked[p] = true
					mu.Unlock()
					if !slices.Contains(faulty, p) || (tc.once && again) {
						return nil
					}
					if tc.runtime {
						var none []int
						_ = none[len(p)] // index out of range
					}
					panic("a fault in flushing " + p)
				})
				if err := st.Mkdir("figures"); err != nil {
					t.Fatal(err)
				}
				for _, n := range []string{"a.csv", filepath.Join("figures", "c.svg"), ManifestName} {
					if err := st.Write(n, []byte(n)); err != nil {
						t.Fatal(err)
					}
				}
				if p := fanouttest.Recovered(t, func() { err = st.Commit() }); p != nil {
					t.Fatalf("%s, GOMAXPROCS %d: the commit panicked with %v, want an error", tc.name, procs, p)
				}
				checkFlushFault(t, tc.name, procs, err, faulty, tc.runtime)
				if _, err := os.Lstat(out); !os.IsNotExist(err) {
					t.Fatalf("%s: output folder made after a flush's fault (%v)", tc.name, err)
				}
				if _, err := os.Lstat(st.Dir); !os.IsNotExist(err) {
					t.Fatalf("%s: stage left after a flush's fault (%v)", tc.name, err)
				}
			}
		}
	}
}

// checkFlushFault checks the commit's error: each faulty path's internal
// error, in order, and a runtime error found when one was raised.
func checkFlushFault(t *testing.T, name string, procs int, err error, faulty []string, isRuntime bool) {
	t.Helper()
	if err == nil {
		t.Fatalf("%s, GOMAXPROCS %d: the commit succeeded, want the flush's fault", name, procs)
	}
	msg, at := err.Error(), -1
	for _, p := range faulty {
		i := strings.Index(msg, p+": internal error while flushing it to disk")
		if i <= at {
			t.Fatalf("%s, GOMAXPROCS %d: error %q, want %s's internal error after the earlier paths'", name, procs, msg, p)
		}
		at = i
	}
	var re runtime.Error
	if found := errors.As(err, &re); found != isRuntime {
		t.Fatalf("%s, GOMAXPROCS %d: error %v: a runtime error found %v, want %v", name, procs, err, found, isRuntime)
	}
}
