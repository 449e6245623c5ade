package pipeline

import (
	"errors"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/internal/fanout/fanouttest"
)

// A fault (a panic) in hashing one input on the goroutine of the input
// sums (startInputSums, startInputSumsAfter) becomes that file's error,
// which the manifest reports ('manifest: FILE: internal error while hashing
// it …'), instead of ending the program from the goroutine past the run's
// recovery (the one a batch puts around each run, cmd/bandsolve runOne): a
// panic not recovered on the goroutine it happens on ends the program (The
// Go Programming Language Specification, Handling panics). The files after
// it are still hashed (SHA-256 of "abc", FIPS 180-2 appendix B.1), sums
// begun after the faulty ones take them, a runtime error stays findable
// (errors.As), and no goroutine is left behind, at GOMAXPROCS 1 and 2.
func TestHashFaultIsTheFilesError(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	defer func() { hashInput = hashFileYielding }()
	dir := t.TempDir()
	abc, bad, badRuntime, last := filepath.Join(dir, "abc.csv"), filepath.Join(dir, "bad.csv"), filepath.Join(dir, "bad2.csv"), filepath.Join(dir, "last.csv")
	for _, p := range []string{abc, bad, badRuntime, last} {
		writeFile(t, p, []byte("abc"))
	}
	hashInput = func(p string, turn *hashTurn) (int64, string, error) {
		switch p {
		case bad:
			panic("a fault in hashing " + p)
		case badRuntime:
			var none []int
			_ = none[len(p)] // index out of range
		}
		return hashFileYielding(p, turn)
	}
	const fips = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		p := fanouttest.Recovered(t, func() {
			first := startInputSums([]string{abc, bad})
			sums := startInputSumsAfter(first, []string{abc, bad, badRuntime, last})
			for _, f := range []string{abc, last} {
				if n, sum, err := sums.hash(f); err != nil || n != 3 || sum != fips {
					t.Errorf("GOMAXPROCS %d: %s: %d bytes, %s, %v; want 3 bytes, %s", procs, f, n, sum, err, fips)
				}
			}
			for _, f := range []string{bad, badRuntime} {
				_, _, err := sums.hash(f)
				if err == nil || !strings.HasPrefix(err.Error(), f+": internal error while hashing it") {
					t.Errorf("GOMAXPROCS %d: %s: %v, want its internal error", procs, f, err)
				}
				var re runtime.Error
				if found := errors.As(err, &re); found != (f == badRuntime) {
					t.Errorf("GOMAXPROCS %d: %s: %v: a runtime error found %v", procs, f, err, found)
				}
			}
		})
		if p != nil {
			t.Fatalf("GOMAXPROCS %d: the sums panicked with %v, want the files' errors", procs, p)
		}
	}
}
