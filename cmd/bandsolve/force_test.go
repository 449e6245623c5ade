package main

import (
	"os"
	"os/exec"
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
	writeText(t, filepath.Join(d, "manifest.json"), `{"tool": "bandsolve", "files": ["input/series.csv", "as-run.bsr", "manifest.json"]}`)
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

// A closed stdout (bandsolve resolve … | head -1) used to kill the run
// with SIGPIPE before its commit: exit 141, no results. The summary is now
// printed after the commit and a broken pipe ends nothing: exit 0, results
// in place, no staging folder left.
func TestClosedStdoutKeepsResults(t *testing.T) {
	w := t.TempDir()
	out := filepath.Join(w, "out")
	cmd := exec.Command(os.Args[0], "-test.run=^TestMainProcess$", "--", "resolve", "--data", filepath.Join(badDir, "good.csv"), "--out", out)
	cmd.Env = append(os.Environ(), "BANDSOLVE_TEST_MAIN=1")
	stdout, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	stdout.Close() // the reader is gone before anything is written
	err = cmd.Wait()
	if err != nil {
		t.Fatalf("exit: %v, want 0", err)
	}
	if _, err := os.Stat(filepath.Join(out, "summary.json")); err != nil {
		t.Errorf("results missing: %v", err)
	}
	if ents, _ := os.ReadDir(w); len(ents) != 1 {
		t.Errorf("beside the results: %d entries, want only out", len(ents))
	}
}

// A file a user saved into a results folder (notes, a plot from the
// results) stops --force, with or without it, and is never deleted; once
// it is moved out, --force replaces the results. The manifest lists every
// file the run wrote, and only those go (docs/security.md).
func TestForceKeepsAUsersFileInResults(t *testing.T) {
	w := t.TempDir()
	out := filepath.Join(w, "demo")
	if r := run("demo", "--out", out, "--quiet"); r.code != exitOK {
		t.Fatalf("demo: exit %d, %s", r.code, r.stderr)
	}
	notes := filepath.Join(out, "figures", "my-notes.txt")
	writeText(t, notes, "k1 looks high\n")
	before := hashTree(t, w, "")
	for _, force := range []bool{true, false} {
		args := []string{"demo", "--out", out, "--quiet"}
		if force {
			args = append(args, "--force")
		}
		r := run(args...)
		if r.code != exitRun || !strings.Contains(r.stderr, "holds figures/my-notes.txt, which bandsolve did not write") {
			t.Errorf("force %v: exit %d, %q", force, r.code, r.stderr)
		}
	}
	sameHashes(t, "refused --force", before, hashTree(t, w, ""))
	if err := os.Rename(notes, filepath.Join(w, "my-notes.txt")); err != nil {
		t.Fatal(err)
	}
	if r := run("report", out, "--quiet"); r.code != exitOK {
		t.Fatalf("report: exit %d, %s", r.code, r.stderr)
	}
	if r := run("demo", "--out", out, "--force", "--quiet"); r.code != exitOK {
		t.Errorf("--force once the notes are out: exit %d, %s", r.code, r.stderr)
	}
	if ents, _ := os.ReadDir(w); len(ents) != 2 {
		t.Errorf("beside the results: %d entries, want the results and the notes", len(ents))
	}
}
