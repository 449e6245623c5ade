package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// --drop FILE naming a file that is no spectrum (notes saved beside the
// exports, common practice) leaves it out before the names' times are read,
// says so in a note, and the run gives the times of the spectra alone: the
// folder's names s_0000 … s_0420 are seconds (testdata/bad/good.csv's times).
func TestDropLeavesStrayOut(t *testing.T) {
	w := t.TempDir()
	folder(t, w)
	writeFile(t, filepath.Join(w, "scans", "notes.txt"), "Operator: AB\nCrystal cleaned with IPA\n")
	out := filepath.Join(w, "out")
	r := run("resolve", "--data", filepath.Join(w, "scans"), "--times-from-name", "--drop", "notes.txt", "--report", "off", "--out", out, "--quiet")
	if r.panicked != nil || r.code != 0 {
		t.Fatalf("exit %d, panic %v, stderr %q", r.code, r.panicked, r.stderr)
	}
	sum, err := os.ReadFile(filepath.Join(out, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(sum), "notes.txt left out of the folder (--drop notes.txt): it does not read as a spectrum") {
		t.Errorf("summary.json has no note of notes.txt left out")
	}
	if strings.Contains(string(sum), "dropped by hand") {
		t.Errorf("summary.json sets a spectrum aside; notes.txt is none")
	}
}
