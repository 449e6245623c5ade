package pipeline

import (
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// Difference spectra carry their reference already (ΔA = A − A_ref was taken before they
// were exported; definition), so --reference cannot apply: one usage line, where before the
// option was dropped without a word (mean:3 gave the same bytes as none).
func TestReferenceWithDifferenceRefused(t *testing.T) {
	dir := filepath.Join(urethaneDir, "catalyst-1.00")
	files, _ := filepath.Glob(filepath.Join(dir, "*.CSV"))
	for _, ref := range []string{"mean:3", files[0]} {
		_, err := quickRun(t, dir, "difference", ref)
		if _, ok := err.(*UsageError); !ok {
			t.Fatalf("--reference %s with --kind difference: error %T %v, want a usage error", ref, err, err)
		}
		msg := err.Error()
		for _, want := range []string{"--reference " + ref, "--kind difference", "carry their reference", "leave out --reference", "--kind absorbance"} {
			if !strings.Contains(msg, want) {
				t.Errorf("message lacks %q: %s", want, msg)
			}
		}
		if strings.Contains(msg, "\n") {
			t.Errorf("more than one line: %q", msg)
		}
	}
}

// On absorbance input --reference sets the state of the differences ΔA = A − A_ref (the
// rank of ΔA, the difference map, the default t0) and a note says so. mean:3 averages the
// series' first three spectra, stamped 14-53-51, 14-54-12 and 14-54-32 in their names (the
// data set's README: the time is the name's stamp), so t0 is 41 s; before, nothing said
// what the option did.
func TestAbsorbanceReferenceMeanSaid(t *testing.T) {
	r, err := quickRun(t, filepath.Join(urethaneDir, "catalyst-1.00"), "absorbance", "mean:3")
	if err != nil {
		t.Fatal(err)
	}
	e := r.Experiments[0]
	if !slices.Equal(e.RefRows, []int{0, 1, 2}) || e.T0 != 41 {
		t.Errorf("reference rows %v, t0 %g s; want the first three, t0 = 41 s", e.RefRows, e.T0)
	}
	note := referenceNoteOf(r)
	for _, want := range []string{"--reference mean:3 sets the state", "ΔA = A − A_ref", "the mean of the first 3 spectra (0–41 s)", "t0 (here 41 s)", "rank of ΔA"} {
		if !strings.Contains(note, want) {
			t.Errorf("note lacks %q: %q", want, note)
		}
	}
}

// A --reference FILE that is one of the series' own spectra stays in the series at its time
// and is the reference state: the series keeps its 58 spectra (the data set's README) and
// the times of its stamps, 0 and 21 s for the first two (14-53-51, 14-54-12 in their names).
// Before, the file was left out: 57 spectra, every time 21 s earlier. The tenth file
// (14-56-58) as reference gives t0 = 187 s and ΔA's zero row there.
func TestAbsorbanceReferenceOwnFile(t *testing.T) {
	dir := filepath.Join(urethaneDir, "catalyst-1.00")
	files, _ := filepath.Glob(filepath.Join(dir, "*.CSV"))
	slices.Sort(files) // the stamps of one day sort as their times
	for _, c := range []struct {
		file int
		t0   float64
	}{{0, 0}, {9, 187}} {
		r, err := quickRun(t, dir, "absorbance", files[c.file])
		if err != nil {
			t.Fatal(err)
		}
		n, _ := r.D.Dims()
		e := r.Experiments[0]
		if n != 58 || r.Times[0] != 0 || r.Times[1] != 21 {
			t.Errorf("file %d: %d spectra, times %g, %g s; want 58, 0 and 21 s", c.file+1, n, r.Times[0], r.Times[1])
		}
		if !slices.Equal(e.RefRows, []int{c.file}) || e.T0 != c.t0 {
			t.Errorf("file %d: reference rows %v, t0 %g s; want [%d], %g s", c.file+1, e.RefRows, e.T0, c.file, c.t0)
		}
		if note := referenceNoteOf(r); !strings.Contains(note, "the series' own spectrum at") || !strings.Contains(note, "kept in the series") {
			t.Errorf("file %d: note %q", c.file+1, note)
		}
	}
}

// A reference recorded apart and kept in the data folder under a name without a stamp is
// still left out of the series (the folder's fixed files are: the times table, the blank),
// and the note says it is not one of the series' spectra.
func TestAbsorbanceReferenceApartInFolder(t *testing.T) {
	src := filepath.Join(urethaneDir, "catalyst-1.00")
	files, _ := filepath.Glob(filepath.Join(src, "*.CSV"))
	dir := t.TempDir()
	for _, f := range files {
		copyFile(t, f, filepath.Join(dir, filepath.Base(f)))
	}
	ref := filepath.Join(dir, "reference.csv")
	copyFile(t, files[0], ref)
	r, err := quickRun(t, dir, "absorbance", ref)
	if err != nil {
		t.Fatal(err)
	}
	if n, _ := r.D.Dims(); n != 58 || len(r.Experiments[0].RefRows) != 0 {
		t.Errorf("%d spectra, reference rows %v; want the series' 58 and no reference row", n, r.Experiments[0].RefRows)
	}
	if note := referenceNoteOf(r); !strings.Contains(note, "recorded apart from the series") {
		t.Errorf("note %q", note)
	}
}

func referenceNoteOf(r *Result) string {
	for _, n := range r.Notes {
		if strings.Contains(n, "--reference") {
			return n
		}
	}
	return ""
}

func copyFile(t *testing.T, from, to string) {
	t.Helper()
	b, err := os.ReadFile(from)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(to, b, 0o644); err != nil {
		t.Fatal(err)
	}
}
