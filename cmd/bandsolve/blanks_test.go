package main

import (
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// scaleBeams writes src's CSV to dst with every value after the first
// column (the axis) times f: a source or cell passing a share f of the
// light, which the ratio to a blank scaled alike cancels (A = −log10(I/I_blank),
// the definition of absorbance against a background).
func scaleBeams(t *testing.T, src, dst string, f float64) {
	t.Helper()
	b, err := os.ReadFile(src)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimRight(string(b), "\n"), "\n")
	for i := 1; i < len(lines); i++ {
		cells := strings.Split(lines[i], ",")
		for j := 1; j < len(cells); j++ {
			v, err := strconv.ParseFloat(cells[j], 64)
			if err != nil {
				t.Fatalf("%s line %d: %v", src, i+1, err)
			}
			cells[j] = strconv.FormatFloat(v*f, 'g', -1, 64)
		}
		lines[i] = strings.Join(cells, ",")
	}
	writeText(t, dst, strings.Join(lines, "\n")+"\n")
}

// Two experiments, each with its own blank: the command line pairs them in
// the order of --data, the as-run record keeps both, and verify reruns the
// record to the same bytes. Before, the second --blank silently replaced
// the first for every experiment.
func TestBlankPerExperiment(t *testing.T) {
	root := t.TempDir()
	a, b := filepath.Join(root, "a"), filepath.Join(root, "b")
	writeDemoInputs(t, a)
	writeDemoInputs(t, b)
	scaleBeams(t, filepath.Join(a, "series.csv"), filepath.Join(b, "series.csv"), 0.5)
	scaleBeams(t, filepath.Join(a, "blank.csv"), filepath.Join(b, "blank.csv"), 0.5)
	out := filepath.Join(root, "out")
	r := run("resolve", "--data", filepath.Join(a, "series.csv"), "--data", filepath.Join(b, "series.csv"),
		"--blank", filepath.Join(a, "blank.csv"), "--blank", filepath.Join(b, "blank.csv"),
		"--kind", "single-beam", "--pre", "3", "--report", "off", "--uniqueness", "off", "--checks", "off",
		"--out", out, "--quiet")
	if r.code != 0 {
		t.Fatalf("exit %d: %s", r.code, r.stderr)
	}
	rec, err := os.ReadFile(filepath.Join(out, "as-run.bsr"))
	if err != nil {
		t.Fatal(err)
	}
	var blanks []string
	for _, l := range strings.Split(string(rec), "\n") {
		if f := strings.Fields(l); len(f) == 2 && f[0] == "blank" {
			blanks = append(blanks, f[1])
		}
	}
	if len(blanks) != 2 || !strings.HasSuffix(blanks[0], "a/blank.csv") || !strings.HasSuffix(blanks[1], "b/blank.csv") {
		t.Errorf("as-run.bsr records blanks %q, want a/blank.csv then b/blank.csv", blanks)
	}
	if v := run("verify", out); v.code != 0 {
		t.Errorf("verify of two blanks: exit %d\n%s%s", v.code, v.stdout, v.stderr)
	}
	// Two blanks for one experiment pair with nothing: a usage error, one line.
	bad := run("resolve", "--data", filepath.Join(a, "series.csv"), "--blank", filepath.Join(a, "blank.csv"),
		"--blank", filepath.Join(b, "blank.csv"), "--kind", "single-beam", "--out", filepath.Join(root, "bad"))
	if bad.code != exitUsage || strings.Count(strings.TrimSpace(bad.stderr), "\n") != 0 || !strings.Contains(bad.stderr, "--blank is given 2 times for 1 --data") {
		t.Errorf("two blanks, one experiment: exit %d, %q", bad.code, bad.stderr)
	}
}
