package pipeline

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/demo"
	"github.com/bandsolve/bandsolve/io/spectra"
)

// quickRun runs the vendored urethane series (source as urethaneDir) with kind and
// reference, the resolution cut short: what is tested comes with the reading and the
// assembly.
func quickRun(t *testing.T, dir, kind, reference string) (*Result, error) {
	t.Helper()
	s := NewSettings()
	s.Data, s.Kind, s.TimesFromName = []string{dir}, kind, true
	if reference != "" {
		s.Reference = reference
	}
	s.Bands, s.Checks, s.MaxIter = "off", "off", 20
	return Run(s, nil)
}

// A --kind single-beam the user gave on absorbance is kept, but said: the urethane ATR
// exports (source as urethaneDir; its README: absorbance against the empty crystal) hold
// negative values and a first spectrum near zero, which an intensity cannot (Beer–Lambert,
// A = −log10(I/I0); common practice). Before, only a run with no --kind looked, and this
// one ended with no warning at all.
func TestSingleBeamKindGivenOnAbsorbanceWarns(t *testing.T) {
	r, err := quickRun(t, filepath.Join(urethaneDir, "catalyst-1.00"), "single-beam", "")
	if err != nil {
		t.Fatalf("a --kind given is not refused: %v", err)
	}
	w := strings.Join(r.Warnings, "\n")
	for _, want := range []string{"as --kind single-beam says", "zero or negative", "first spectrum lies near zero", "--kind absorbance", "--kind difference"} {
		if !strings.Contains(w, want) {
			t.Errorf("warnings lack %q: %q", want, r.Warnings)
		}
	}
	if strings.Contains(w, "no --kind was given") {
		t.Errorf("worded for a kind taken by default: %q", r.Warnings)
	}
}

// Single beams given as such draw no warning: uvSeries's throughput curves in arbitrary
// units 0.15…1.95, the same in counts, without noise, and the demo's single beams with
// their blank (all I = I0·10^(−A), positive: Beer–Lambert, definition). The absorbance of
// the same run given as single beams does, and is not refused.
func TestSingleBeamKindGivenOnBeamsQuiet(t *testing.T) {
	beams, abs := uvSeries(1, 1e-3)
	counts, _ := uvSeries(2e4, 20)
	noiseless, _ := uvSeries(1, 0)
	for name, ser := range map[string]*spectra.Series{"arbitrary units": beams, "counts": counts, "noiseless": noiseless} {
		r := &Result{}
		s := NewSettings()
		s.Data = []string{"uv.csv"}
		kind, err := beamKind(s, r, []*spectra.Series{ser}, "single-beam")
		if err != nil || kind != "single-beam" || len(r.Warnings) > 0 {
			t.Errorf("%s: kind %q, error %v, warnings %q; want single beams, quietly", name, kind, err, r.Warnings)
		}
	}
	r := &Result{}
	s := NewSettings()
	s.Data = []string{"uv.csv"}
	if _, err := beamKind(s, r, []*spectra.Series{abs}, "single-beam"); err != nil || len(r.Warnings) != 1 || !strings.Contains(r.Warnings[0], "as --kind single-beam says") {
		t.Errorf("absorbance given as single beams: error %v, warnings %q; want one warning, no refusal", err, r.Warnings)
	}
	dir := t.TempDir()
	truth := demo.Make(1)
	for name, b := range truth.Files() {
		if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	s = NewSettings()
	s.Data, s.Kind, s.Blanks, s.Pre = []string{filepath.Join(dir, "series.csv")}, "single-beam", []string{filepath.Join(dir, "blank.csv")}, truth.Pre
	s.Bands, s.Checks, s.MaxIter = "off", "off", 20
	dr, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, w := range dr.Warnings {
		if strings.Contains(w, "taken as single beams") {
			t.Errorf("the demo's single beams drew %q", w)
		}
	}
}
