package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The audit's --force cases through the real command: each is refused
// before anything is read, with the reason, and every file stays.
func TestForceNeverDeletesInputsOrOthersFiles(t *testing.T) {
	w := t.TempDir()
	good, err := os.ReadFile(filepath.Join(badDir, "good.csv"))
	if err != nil {
		t.Fatal(err)
	}
	// A folder made by bandsolve whose record reads d/input: rerunning
	// it into itself would delete its input.
	d := filepath.Join(w, "d")
	writeText(t, filepath.Join(d, "manifest.json"), `{"tool": "bandsolve"}`)
	writeText(t, filepath.Join(d, "input", "series.csv"), string(good))
	writeText(t, filepath.Join(d, "as-run.bsr"), "data input/series.csv\n")
	// A command file whose out names a sibling folder of other files.
	writeText(t, filepath.Join(w, "good.csv"), string(good))
	writeText(t, filepath.Join(w, "thesis", "chapter1.tex"), "keep me\n")
	writeText(t, filepath.Join(w, "exp.bsr"), "data good.csv\nout thesis\nforce\n")
	before := hashTree(t, w, "")

	r := run("run", filepath.Join(d, "as-run.bsr"), "--out", d, "--force", "--quiet")
	if r.code != exitRun || !strings.Contains(r.stderr, "series.csv, an input of this run") {
		t.Errorf("run d/as-run.bsr --out d --force: exit %d, %q", r.code, r.stderr)
	}
	r = run("run", filepath.Join(w, "exp.bsr"), "--quiet")
	if r.code != exitRun || !strings.Contains(r.stderr, "thesis: holds files bandsolve did not write") {
		t.Errorf("out thesis + force: exit %d, %q", r.code, r.stderr)
	}
	sameHashes(t, "refused --force", before, hashTree(t, w, ""))
	if after := hashTree(t, w, ""); len(after) != len(before) {
		t.Errorf("files in the project: %d before, %d after", len(before), len(after))
	}
}
