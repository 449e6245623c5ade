package spectra

import (
	"errors"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/internal/fanout/fanouttest"
)

// A fault (a panic) in reading one file of a folder, on a worker goroutine
// of ReadFolder, becomes that file's error instead of ending the program
// from the worker past the run's recovery (the one a batch puts around each
// run, cmd/bandsolve runOne): a panic not recovered on the goroutine it
// happens on ends the program (The Go Programming Language Specification,
// Handling panics). The error names the earliest faulty file (ReadFolder's
// order, by time), keeps a runtime error findable (errors.As), and no
// worker is left behind, at GOMAXPROCS 1 and 2. Real data: the four
// spectra of testdata/urethane-atr (TestFolderTimesFromRealStamps), times
// 0, 187, 439 and 3916 s from their names.
func TestFolderReadFaultIsTheFilesError(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	defer func() { readSpectrum = ReadSpectrum }()
	dir := filepath.Join("..", "..", "testdata", "urethane-atr")
	for _, tc := range []struct {
		name    string
		faulty  []string // the stamps of the files whose read panics
		want    string   // the file the error names
		runtime bool     // the panic is a runtime error (an index out of range)
	}{
		{"one file", []string{"14-56-58"}, "14-56-58", true},
		{"two files", []string{"15-59-07", "15-01-10"}, "15-01-10", false},
		{"every file", []string{"14-53-51", "14-56-58", "15-01-10", "15-59-07"}, "14-53-51", false},
	} {
		readSpectrum = func(path string) (*Spectrum, error) {
			for _, stamp := range tc.faulty {
				if strings.Contains(path, stamp) {
					if tc.runtime {
						var none []int
						return nil, errors.New(string(rune(none[len(stamp)]))) // index out of range
					}
					panic("a fault in reading " + stamp)
				}
			}
			return ReadSpectrum(path)
		}
		for _, procs := range []int{1, 2} {
			runtime.GOMAXPROCS(procs)
			for rep := 0; rep < 10; rep++ {
				var err error
				if p := fanouttest.Recovered(t, func() { _, err = ReadFolder(dir, FolderOptions{TimesFromName: true}) }); p != nil {
					t.Fatalf("%s, GOMAXPROCS %d: ReadFolder panicked with %v, want the file's error", tc.name, procs, p)
				}
				if err == nil || !strings.Contains(err.Error(), tc.want) || !strings.Contains(err.Error(), "internal error while reading it") {
					t.Fatalf("%s, GOMAXPROCS %d: error %v, want the internal error of the %s file", tc.name, procs, err, tc.want)
				}
				var re runtime.Error
				if found := errors.As(err, &re); found != tc.runtime {
					t.Fatalf("%s, GOMAXPROCS %d: error %v: a runtime error found %v, want %v", tc.name, procs, err, found, tc.runtime)
				}
			}
		}
	}
}
