package pipeline

import (
	"errors"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// Closure asks each spectrum's concentrations to sum to a total (Σc = 1,
// the mass balance of a closed system; common practice in curve
// resolution): a time at which every component is held at zero cannot
// meet it. The refusal names the settings that held them (--efa-windows
// on), the time and the spectrum, and what to change, where ALS had said
// "closure cannot hold: every component is fixed in column 0".
func TestClosableRowsNamesTheSettings(t *testing.T) {
	r := &Result{Settings: NewSettings(), Components: 2, D: mat.NewDense(3, 4, nil), Times: []float64{0, 30, 60},
		Experiments: []*Experiment{{Source: "run.csv", FirstRow: 0, Rows: 3}}, ExpOfRow: []int{0, 0, 0},
		Rank: &svd.RankReport{Estimate: 1}}
	r.Settings.Closure = "1"
	opt := mcr.Options{Closure: true, ZeroProfiles: [][]bool{{false, true, false}, {true, true, false}}}
	err := closableRows(r, opt, "--efa-windows on", "evolving factor analysis finds none of them present")
	want := "--efa-windows on with --closure 1: every one of the 2 components is held at zero at 30 s (spectrum 2 of run.csv), where evolving factor analysis finds none of them present, so their concentrations cannot sum to 1 there; ask for fewer components (--components N; the rank estimate is 1), or leave out --efa-windows on, or give --closure off"
	var ue *UsageError
	if err == nil || err.Error() != want || !errors.As(err, &ue) {
		t.Errorf("got %v, want the usage error %q", err, want)
	}
	// One component left free at every time: closure can hold.
	opt.ZeroProfiles[0][1] = false
	if err := closableRows(r, opt, "--zero-window", ""); err != nil {
		t.Errorf("a free component at every time: %v", err)
	}
	// Without closure nothing is asked of the sum.
	opt.ZeroProfiles[0][1], opt.Closure = true, false
	if err := closableRows(r, opt, "--zero-window", ""); err != nil {
		t.Errorf("no closure: %v", err)
	}
}

// A path that a command file cannot hold (a line break in a file name)
// gets the advice to rename it (docs/errors.md: one line, what, where,
// what to do).
func TestRenameAdvice(t *testing.T) {
	s := NewSettings()
	s.Data = []string{"in/s.csv"}
	if a := renameAdvice(s); a != "" {
		t.Errorf("plain name: %q", a)
	}
	s.Data = []string{"in/s\nfake error line.csv"}
	if a := renameAdvice(s); !strings.Contains(a, "rename the file or folder --data names") {
		t.Errorf("name with a line break: %q", a)
	}
}

// A manifest changed by hand is refused in a reader's terms: the field and
// the kind of value (JSON, RFC 8259: object, array, string), never Go's
// type names.
func TestManifestFaultInReadersTerms(t *testing.T) {
	_, err := parseManifest("out/manifest.json", []byte(`{"tool":"bandsolve","supplied":["../x.csv"]}`))
	want := `out/manifest.json: not a valid manifest: the field "supplied" holds a string where an object belongs, near byte 42`
	if err == nil || !strings.HasPrefix(err.Error(), want) || strings.Contains(err.Error(), "pipeline.") || !strings.Contains(err.Error(), "run the analysis again") {
		t.Errorf("got %v, want %q and advice", err, want)
	}
}

// A --vapour spectrum without narrow lines is a fault of that file: the
// message names it (docs/errors.md: what, where, what to do), where it had
// named only the --data file whose axis it was put on.
func TestVapourFaultNamesTheFile(t *testing.T) {
	s := NewSettings()
	s.Vapour = []string{"humid.csv", "flat.csv"}
	err := vapourFault(s, "run.csv", &svd.LineError{Lines: []int{2}, Msg: "line spectrum 2 has no narrow lines (its high-pass keeps 1e-30 of its energy)"})
	want := "--vapour flat.csv: line spectrum 2 has no narrow lines (its high-pass keeps 1e-30 of its energy), on the channels of run.csv; give the vapour's absorbance spectrum"
	if err == nil || !strings.HasPrefix(err.Error(), want) {
		t.Errorf("got %v, want %q", err, want)
	}
	err = vapourFault(s, "run.csv", &svd.LineError{Lines: []int{1, 2}, Msg: "line spectra 1 and 2 have the same lines (cosine 1.0000): give one"})
	if err == nil || !strings.HasPrefix(err.Error(), "--vapour humid.csv and flat.csv: line spectra 1 and 2") {
		t.Errorf("two alike: %v", err)
	}
}
