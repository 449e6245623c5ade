package pipeline

import (
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// docs/reproducibility.md promises that results depend on no working
// directory or absolute path and that a path echoed in the results comes out
// the same on a rerun: the one the user wrote. A command file in runs/ names
// its data as ../data/absorbance.csv (an A → B series capped at 4 under an
// opaque band, opaqueBeams), is run from the project folder, where the file
// opened is data/absorbance.csv, and verified from runs/, where it is
// ../data/absorbance.csv. The opaque-band note must name the path as
// written and verify must find every file (report.html included) the same.
// Before, the note named the path as opened and verify failed at
// summary.json.
func TestNotesNameThePathAsWritten(t *testing.T) {
	s := makeBateman(t, 3e-3, 1e-3, 0, 31, 2)
	opaqueBeams(s, 3.5, 31)
	path, caps := cappedAbsorbance(t, s, 4)
	if caps == 0 {
		t.Fatal("no value at the cap: the band is not opaque")
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	root := t.TempDir()
	for _, d := range []string{"data", "runs"} {
		if err := os.Mkdir(filepath.Join(root, d), 0o755); err != nil {
			t.Fatal(err)
		}
	}
	if err := os.WriteFile(filepath.Join(root, "data", "absorbance.csv"), b, 0o644); err != nil {
		t.Fatal(err)
	}
	cmd := "data ../data/absorbance.csv\nkind absorbance\nmodel A -> B\nt0 60\nuniqueness off\nchecks off\n"
	if err := os.WriteFile(filepath.Join(root, "runs", "opaque.bsr"), []byte(cmd), 0o644); err != nil {
		t.Fatal(err)
	}
	t.Chdir(root)
	st := NewSettings()
	if _, err := LoadCommandFile(filepath.Join("runs", "opaque.bsr"), st, nil); err != nil {
		t.Fatal(err)
	}
	out, err := filepath.Abs(filepath.Join("batch", "opaque")) // as run takes --out
	if err != nil {
		t.Fatal(err)
	}
	st.Out, st.Quiet = out, true
	if _, err := Execute(st, Streams{Out: io.Discard, Err: io.Discard}); err != nil {
		t.Fatal(err)
	}
	sum := readSummaryFile(t, filepath.Join("batch", "opaque"))
	found := false
	for _, n := range sum.Notes {
		if strings.Contains(n, "opaque band") {
			found = true
			if !strings.HasPrefix(n, "../data/absorbance.csv: ") {
				t.Errorf("the opaque-band note names another path than the command file's: %q", n)
			}
		}
	}
	if !found {
		t.Fatalf("no opaque-band note: %q", sum.Notes)
	}
	t.Chdir(filepath.Join(root, "runs"))
	v, err := Verify(filepath.Join("..", "batch", "opaque"), nil)
	if err != nil {
		t.Fatal(err)
	}
	if !v.OK() {
		t.Errorf("verify from runs/: %v", v.Differences[0])
	}
	if !strings.Contains(strings.Join(v.Compared, " "), "report.html") {
		t.Errorf("report.html not compared: %q", v.Compared)
	}
}
