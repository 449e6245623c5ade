package main

// Command files, batches, verify and interruption, tried through the real
// commands as a user would.

import (
	"bytes"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/bandsolve/bandsolve/io/demo"
	"github.com/bandsolve/bandsolve/io/pipeline"
)

// writeDemoInputs writes the invented demo series and blank into dir.
func writeDemoInputs(t *testing.T, dir string) {
	t.Helper()
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	for name, b := range demo.Make(1).Files() {
		if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

func writeText(t *testing.T, path, text string) {
	t.Helper()
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
}

const quickSettings = "kind single-beam\npre 3\nreport off\nbands off\n"

func TestRunCommandFile(t *testing.T) {
	root := t.TempDir()
	writeDemoInputs(t, filepath.Join(root, "data"))
	file := filepath.Join(root, "exp", "exp1.bsr")
	writeText(t, file, "# demo data, two components forced\npaths-from ../data\ndata series.csv\nblank 'blank.csv'\n"+quickSettings+"components 2   # fewer than the rank\n")
	r := run("run", file, "--quiet")
	if r.code != 0 {
		t.Fatalf("exit %d: %s", r.code, r.stderr)
	}
	// No out in the file and none given: NAME-results beside the file.
	out := filepath.Join(root, "exp", "exp1-results")
	if got := readSummary(t, out)["components"]; got != 2.0 {
		t.Errorf("components = %v, the file says 2", got)
	}
	// The record is a command file that gives the same analysis.
	rec, err := os.ReadFile(filepath.Join(out, pipeline.RecordName))
	if err != nil {
		t.Fatal(err)
	}
	for _, line := range []string{"paths-from       ../../data", "data             series.csv", "components       2", "seed             1", "tolerance        "} {
		if !strings.Contains(string(rec), line) {
			t.Errorf("as-run record lacks %q:\n%s", line, rec)
		}
	}
	// Flags override the file; paths on the command line are relative to
	// the working folder.
	out2 := filepath.Join(root, "over")
	r = run("run", file, "--components", "3", "--blank", filepath.Join(root, "data", "blank.csv"), "--out", out2, "--quiet")
	if r.code != 0 {
		t.Fatalf("exit %d: %s", r.code, r.stderr)
	}
	if got := readSummary(t, out2)["components"]; got != 3.0 {
		t.Errorf("components = %v, --components 3 should override the file", got)
	}
	// Rerunning the record reproduces the results (outside the record,
	// whose paths-from depends on where the folder is).
	out3 := filepath.Join(root, "again")
	r = run("run", filepath.Join(out, pipeline.RecordName), "--out", out3, "--quiet")
	if r.code != 0 {
		t.Fatalf("rerun of the record: exit %d: %s", r.code, r.stderr)
	}
	for _, f := range []string{"spectra.csv", "profiles.csv", "summary.json"} {
		a, _ := os.ReadFile(filepath.Join(out, f))
		b, _ := os.ReadFile(filepath.Join(out3, f))
		if len(a) == 0 || !bytes.Equal(a, b) {
			t.Errorf("%s differs between the run and the rerun of its record", f)
		}
	}
}

func TestRunCommandFileErrors(t *testing.T) {
	root := t.TempDir()
	for _, c := range []struct{ name, text, want string }{
		{"misspelt.bsr", "data x.csv\ncomponets 2\n", "misspelt.bsr:2:1: unknown keyword \"componets\" (did you mean \"components\"?)"},
		{"value.bsr", "data x.csv\nclosure  maybe\n", "value.bsr:2:10: \"maybe\": want off"},
		{"escape.bsr", "data x.csv\nout ../../elsewhere\n", "escape.bsr:2:5: out \"../../elsewhere\" leaves the command file's folder"},
		{"network.bsr", "data https://example.org/x.jdx\n", "is a network address"},
	} {
		t.Run(c.name, func(t *testing.T) {
			p := filepath.Join(root, c.name)
			writeText(t, p, c.text)
			r := run("run", p)
			if r.code != exitUsage {
				t.Errorf("exit %d, want %d", r.code, exitUsage)
			}
			if !strings.Contains(r.stderr, c.want) {
				t.Errorf("stderr %q\nwant it to contain %q", r.stderr, c.want)
			}
		})
	}
	if r := run("run"); r.code != exitUsage {
		t.Errorf("run without files: exit %d", r.code)
	}
}

// A record rerun without --out is refused in one line saying to give
// --out: its default folder, NAME-results beside the file, lies inside the
// results it records, which --force then refuses to replace
// (docs/reproducibility.md reruns a record with --out: "bandsolve run
// demo-results/as-run.bsr --out again"). Nothing is written.
func TestRunRecordWithoutOutRefused(t *testing.T) {
	root := t.TempDir()
	writeDemoInputs(t, filepath.Join(root, "data"))
	file := filepath.Join(root, "exp", "exp1.bsr")
	writeText(t, file, "paths-from ../data\ndata series.csv\nblank blank.csv\n"+quickSettings+"checks off\n")
	out := filepath.Join(root, "first")
	if r := run("run", file, "--out", out, "--quiet"); r.code != 0 {
		t.Fatalf("exit %d: %s", r.code, r.stderr)
	}
	before, _ := os.ReadDir(out)
	record := filepath.Join(out, pipeline.RecordName)
	r := run("run", record, "--quiet")
	if r.code != exitUsage || !strings.Contains(r.stderr, "give --out for the rerun") || strings.Count(r.stderr, "\n") != 1 {
		t.Errorf("exit %d, %q; want exit 2 and one line saying to give --out", r.code, r.stderr)
	}
	if after, _ := os.ReadDir(out); len(after) != len(before) {
		t.Errorf("the refused rerun changed the results folder: %d entries, were %d", len(after), len(before))
	}
	if r := run("run", record, "--out", filepath.Join(root, "again"), "--quiet"); r.code != 0 {
		t.Errorf("with --out: exit %d: %s", r.code, r.stderr)
	}
}

// --out on the command line overrides a file's out line that breaks the
// output rule: docs/command-files.md, "bandsolve run exp1.bsr --components 2
// --out trial/     # flags override the file" and "The command line is not
// bound by the output rule: `--out DIR` writes where the person running the
// command says"; the refusal itself says "(or give --out on the command
// line)".
func TestRunOutFlagOverridesFileOut(t *testing.T) {
	root := t.TempDir()
	writeDemoInputs(t, filepath.Join(root, "data"))
	head := "paths-from ../data\ndata series.csv\nblank blank.csv\n" + quickSettings + "checks off\n"
	for _, c := range []struct{ name, out string }{
		{"outside", "out ../../elsewhere\n"},
		{"absolute", "out " + filepath.Join(root, "abs") + "\n"},
	} {
		file := filepath.Join(root, "exp", c.name+".bsr")
		writeText(t, file, head+c.out)
		if r := run("run", file, "--quiet"); r.code != exitUsage {
			t.Errorf("%s without --out: exit %d, want the refusal (2)", c.name, r.code)
		}
		dest := filepath.Join(root, "given", c.name)
		if r := run("run", file, "--out", dest, "--quiet"); r.code != 0 {
			t.Errorf("%s with --out: exit %d: %s", c.name, r.code, r.stderr)
		}
		if _, err := os.Stat(filepath.Join(dest, "summary.json")); err != nil {
			t.Errorf("%s with --out: no results in --out (%v)", c.name, err)
		}
	}
	if _, err := os.Stat(filepath.Join(root, "abs")); err == nil {
		t.Error("the file's absolute out was written although --out replaced it")
	}
}

// A fault of the run that a setting of the file caused is put at the
// file's line and column, with the keyword as the file writes it, as
// docs/command-files.md promises for every fault; a path written from the
// working folder rather than the file's is pointed out. The same fault
// from the command line is the flag's, unplaced.
func TestRunFaultsNameTheLine(t *testing.T) {
	root := t.TempDir()
	writeDemoInputs(t, filepath.Join(root, "exp", "data"))
	t.Chdir(root)
	head := "data data/series.csv\nblank data/blank.csv\n" + quickSettings // lines 1-6
	for _, c := range []struct {
		name, text string
		code       int
		want       []string
	}{
		{"missing.bsr", "data data/seriess.csv\n", exitRun, []string{"exp/missing.bsr:1:6: exp/data/seriess.csv: cannot read", "check the data path"}},
		{"relpath.bsr", "data exp/data/series.csv\n", exitRun, []string{"exp/relpath.bsr:1:6: ", "start at the folder its paths are read from, exp, not the working folder: write data data/series.csv"}},
		{"model.bsr", head + "model A ->\n", exitUsage, []string{"exp/model.bsr:7:7: model \"A ->\": column 5: expected a species name"}},
		{"kstart.bsr", head + "model A -> B\nk-start 1=abc\n", exitUsage, []string{"exp/kstart.bsr:8:9: k-start 1=abc: want a rate constant > 0"}},
		{"region.bsr", head + "region 9000:8500\n", exitUsage, []string{"exp/region.bsr:7:8: region 9000:8500: the regions select no axis point"}},
		// A missing file of another option than data is placed as data's
		// is (docs/command-files.md: "a data path that does not exist" is
		// "put at the line that set the option, named by its keyword").
		{"blank.bsr", "data data/series.csv\nblank data/blnk.csv\n" + quickSettings, exitRun, []string{"exp/blank.bsr:2:7: exp/data/blnk.csv: cannot read", "check the blank path"}},
		{"known.bsr", head + "known-spectrum 1=data/pure.csv\n", exitRun, []string{"exp/known.bsr:7:16: exp/data/pure.csv: cannot read", "check the known-spectrum path"}},
		{"vapour.bsr", head + "vapour data/vap.csv\n", exitRun, []string{"exp/vapour.bsr:7:8: exp/data/vap.csv: cannot read", "check the vapour path"}},
		{"init.bsr", head + "init data/start.csv\n", exitRun, []string{"exp/init.bsr:7:6: exp/data/start.csv: cannot read", "check the init path"}},
		// Every option a placed fault names is written as the file writes
		// it, not only the first ("Options given on the command line keep
		// their flags in messages": the others are keywords), and the
		// option is named once.
		{"both-times.bsr", head + "times t.csv\ntimes-from-name\n", exitUsage, []string{"exp/both-times.bsr:7:7: times and times-from-name both give the times: use one"}},
		{"t0.bsr", head + "t0 5\n", exitUsage, []string{"exp/t0.bsr:7:4: t0 needs model, e.g. model 'A -> B -> C'"}},
		{"refmean.bsr", head + "reference mean:0\n", exitUsage, []string{"exp/refmean.bsr:7:11: reference \"mean:0\": mean:N needs a whole number"}},
	} {
		t.Run(c.name, func(t *testing.T) {
			p := filepath.Join("exp", c.name)
			writeText(t, p, c.text)
			r := run("run", p, "--quiet")
			if r.code != c.code {
				t.Errorf("exit %d, want %d: %s", r.code, c.code, r.stderr)
			}
			for _, w := range c.want {
				if !strings.Contains(r.stderr, w) {
					t.Errorf("stderr %q\nwant it to contain %q", r.stderr, w)
				}
			}
			if strings.Contains(r.stderr, "--") || strings.Count(strings.TrimSpace(r.stderr), "\n") > 0 {
				t.Errorf("stderr %q: want one line naming the keyword, not the flag", r.stderr)
			}
		})
	}
	writeText(t, filepath.Join("exp", "plain.bsr"), head)
	r := run("run", filepath.Join("exp", "plain.bsr"), "--quiet", "--region", "9000:8500")
	if r.code != exitUsage || !strings.Contains(r.stderr, "bandsolve run: --region 9000:8500: the regions select no axis point") {
		t.Errorf("a region from the command line: exit %d, %q", r.code, r.stderr)
	}
	// From the command line, the option is named once, as a flag.
	r = run("resolve", "--data", "exp/data/series.csv", "--reference", "mean:0", "--out", filepath.Join(root, "cl-ref"), "--quiet")
	if r.code != exitUsage || !strings.HasPrefix(r.stderr, "bandsolve resolve: --reference \"mean:0\": mean:N needs") {
		t.Errorf("--reference mean:0: exit %d, %q", r.code, r.stderr)
	}
	// From the command line, the missing file's flag is named.
	for _, flag := range []string{"known-spectrum=1=nope.csv", "vapour=nope.csv", "init=nope.csv"} {
		name, _, _ := strings.Cut(flag, "=")
		r := run("resolve", "--data", "exp/data/series.csv", "--blank", "exp/data/blank.csv", "--kind", "single-beam", "--pre", "3",
			"--report", "off", "--bands", "off", "--out", filepath.Join(root, "cl-"+name), "--quiet", "--"+flag)
		if r.code != exitRun || !strings.Contains(r.stderr, "nope.csv: cannot read") || !strings.Contains(r.stderr, "check the --"+name+" path") {
			t.Errorf("--%s: exit %d, %q; want exit 1 naming the file and the flag", flag, r.code, r.stderr)
		}
	}
}

// A link inside the file's folder that points outside it does not let a
// command file write elsewhere, and the refusal names the out line and its
// value's column, as every fault of a command file does
// (docs/command-files.md).
func TestRunOutThroughLink(t *testing.T) {
	root := t.TempDir()
	elsewhere := t.TempDir()
	writeDemoInputs(t, root)
	if err := os.Symlink(elsewhere, filepath.Join(root, "link")); err != nil {
		t.Skip("no symbolic links:", err)
	}
	p := filepath.Join(root, "l.bsr")
	before := "data series.csv\nblank blank.csv\n" + quickSettings
	writeText(t, p, before+"out link/results\n")
	r := run("run", p, "--quiet")
	at := fmt.Sprintf("%s:%d:5: output folder", p, strings.Count(before, "\n")+1)
	if r.code != exitUsage || !strings.Contains(r.stderr, "not inside the command file's folder") || !strings.Contains(r.stderr, at) {
		t.Errorf("exit %d, stderr %q; want %q", r.code, r.stderr, at)
	}
	if ents, _ := os.ReadDir(elsewhere); len(ents) != 0 {
		t.Errorf("something was written through the link: %v", ents)
	}
}

// Several files: each runs on its own, one failure stops none of the
// others, a table lists every outcome, the exit status says one failed.
func TestRunBatchIsolation(t *testing.T) {
	root := t.TempDir()
	writeDemoInputs(t, root)
	writeText(t, filepath.Join(root, "runs", "a.bsr"), "paths-from ..\ndata series.csv\nblank blank.csv\n"+quickSettings)
	writeText(t, filepath.Join(root, "runs", "b.bsr"), "paths-from ..\ndata series.csv\nblnak blank.csv\n")
	writeText(t, filepath.Join(root, "runs", "c.bsr"), "paths-from ..\ndata series.csv\n"+quickSettings+"components 2\n")
	writeText(t, filepath.Join(root, "runs", "d.bsr"), "paths-from ..\ndata missing.csv\n")
	out := filepath.Join(root, "batch")
	r := run("run", filepath.Join(root, "runs", "*.bsr"), "--out", out, "--quiet")
	if r.code != exitRun {
		t.Errorf("exit %d, want %d when one file fails", r.code, exitRun)
	}
	for _, want := range []string{"4 command file(s): 2 ok, 2 failed", "a.bsr", "b.bsr:3:1: unknown keyword \"blnak\" (did you mean \"blank\"?)", "missing.csv"} {
		if !strings.Contains(r.stdout, want) {
			t.Errorf("summary table lacks %q:\n%s", want, r.stdout)
		}
	}
	if got := readSummary(t, filepath.Join(out, "a"))["components"]; got != 3.0 {
		t.Errorf("a: components %v, want 3 (rank estimate)", got)
	}
	// c's "components 2" stays in c: the runs share no settings.
	if got := readSummary(t, filepath.Join(out, "c"))["components"]; got != 2.0 {
		t.Errorf("c: components %v, want 2", got)
	}
	for _, f := range []string{"b", "d"} {
		if _, err := os.Stat(filepath.Join(out, f)); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("failed run %s left an output folder", f)
		}
	}
	// a alone gives the same bytes as a in the batch.
	alone := filepath.Join(root, "alone")
	if r := run("run", filepath.Join(root, "runs", "a.bsr"), "--out", alone, "--quiet"); r.code != 0 {
		t.Fatal(r.stderr)
	}
	// (Not the record: its paths-from depends on where the folder is.)
	for _, f := range []string{"spectra.csv", "profiles.csv", "summary.json", "rank.csv", "iterations.csv"} {
		a, _ := os.ReadFile(filepath.Join(alone, f))
		b, _ := os.ReadFile(filepath.Join(out, "a", f))
		if len(a) == 0 || !bytes.Equal(a, b) {
			t.Errorf("%s of a differs between the batch and a run on its own", f)
		}
	}
}

// The demo's folder holds its inputs and its check against the truth;
// verify reproduces every file of it.
func TestVerifyDemo(t *testing.T) {
	out := filepath.Join(t.TempDir(), "demo")
	if r := run("demo", "--out", out, "--quiet"); r.code != 0 {
		t.Fatal(r.stderr)
	}
	r := run("verify", out)
	if r.code != 0 || !strings.Contains(r.stdout, "is reproduced exactly") || !strings.Contains(r.stdout, "report.html") {
		t.Fatalf("untouched demo folder: exit %d\n%s\n%s", r.code, r.stdout, r.stderr)
	}
}

func TestVerifyFindsChanges(t *testing.T) {
	root := t.TempDir()
	writeDemoInputs(t, filepath.Join(root, "data"))
	if err := os.Mkdir(filepath.Join(root, "results"), 0o755); err != nil {
		t.Fatal(err)
	}
	// Relative paths, as typed in a shell: they keep the folder movable.
	t.Chdir(root)
	out := filepath.Join("results", "r1")
	if r := run("resolve", "--data", "data/series.csv", "--blank", "data/blank.csv",
		"--pre", "3", "--report", "off", "--uniqueness", "off", "--out", out, "--quiet"); r.code != 0 {
		t.Fatal(r.stderr)
	}
	if r := run("verify", out, "--quiet"); r.code != 0 {
		t.Fatalf("untouched folder: exit %d: %s", r.code, r.stderr)
	}
	// A changed result file is named with its first differing line.
	spectra := filepath.Join(out, "spectra.csv")
	orig, err := os.ReadFile(spectra)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.SplitAfter(string(orig), "\n")
	lines[6] = strings.Replace(lines[6], ",", ",9", 1)
	writeText(t, spectra, strings.Join(lines, ""))
	r := run("verify", out, "--quiet")
	if r.code != exitRun || !strings.Contains(r.stderr, "spectra.csv:7: differs") {
		t.Errorf("tampered spectra.csv: exit %d, stderr %q", r.code, r.stderr)
	}
	// verify --help: --quiet prints "nothing but the first difference or
	// error": no note of the builds (a test binary records no commit).
	if strings.Contains(r.stderr, "note:") || !strings.HasPrefix(r.stderr, "bandsolve verify: ") {
		t.Errorf("verify --quiet printed more than the difference: %q", r.stderr)
	}
	writeText(t, spectra, string(orig))
	// A changed input is caught by its SHA-256 before any rerun.
	blank := filepath.Join(root, "data", "blank.csv")
	b, _ := os.ReadFile(blank)
	writeText(t, blank, string(b)+"\n")
	r = run("verify", out, "--quiet")
	if r.code != exitRun || !strings.Contains(r.stderr, "input ../../data/blank.csv: SHA-256 mismatch") {
		t.Errorf("tampered input: exit %d, stderr %q", r.code, r.stderr)
	}
	writeText(t, blank, string(b))
	// A spectrum added to a data folder is named as an input not listed.
	tr := demo.Make(1)
	scans := filepath.Join(root, "scans")
	for i := 0; i < len(tr.Times); i += 10 {
		var b strings.Builder
		b.WriteString("wavenumber,intensity\n")
		for j, x := range tr.Axis {
			fmt.Fprintf(&b, "%g,%g\n", x, tr.Beams.At(i, j))
		}
		writeText(t, filepath.Join(scans, fmt.Sprintf("scan_%04g.csv", tr.Times[i])), b.String())
	}
	if r := run("resolve", "--data", "scans", "--times-from-name", "--blank", "data/blank.csv", "--pre", "1",
		"--report", "off", "--uniqueness", "off", "--out", "results/r2", "--quiet"); r.code != 0 {
		t.Fatal(r.stderr)
	}
	extra, _ := os.ReadFile(filepath.Join(scans, "scan_3000.csv"))
	writeText(t, filepath.Join(scans, "scan_3600.csv"), string(extra))
	r = run("verify", filepath.Join("results", "r2"), "--quiet")
	if r.code != exitRun || !strings.Contains(r.stderr, "the rerun also read ../../scans/scan_3600.csv, which the manifest does not list") {
		t.Errorf("added spectrum: exit %d, stderr %q", r.code, r.stderr)
	}
	os.RemoveAll(scans)
	os.RemoveAll(filepath.Join(root, "results", "r2"))
	// The folder moves with its inputs: same relative places, same bytes.
	moved := filepath.Join(t.TempDir(), "elsewhere")
	if err := os.Rename(root, moved); err != nil {
		t.Skip("cannot move the folder:", err)
	}
	if r := run("verify", filepath.Join(moved, "results", "r1"), "--quiet"); r.code != 0 {
		t.Errorf("moved folder: exit %d: %s", r.code, r.stderr)
	}
	// A folder that is not there cannot be read: exit 1, as a missing
	// --data file or command file (docs/errors.md, "Exit codes").
	if r := run("verify", filepath.Join(moved, "nowhere")); r.code != exitRun || !strings.Contains(r.stderr, "nowhere: cannot read: no such file or directory") {
		t.Errorf("verify of a missing folder: exit %d, stderr %q", r.code, r.stderr)
	}
}

// Inputs named by absolute paths are checked where they are, and verify
// says that the folder is tied to them.
func TestVerifyAbsoluteInputs(t *testing.T) {
	root := t.TempDir()
	writeDemoInputs(t, root)
	out := filepath.Join(root, "r")
	if r := run("resolve", "--data", filepath.Join(root, "series.csv"), "--blank", filepath.Join(root, "blank.csv"),
		"--pre", "3", "--report", "off", "--uniqueness", "off", "--out", out, "--quiet"); r.code != 0 {
		t.Fatal(r.stderr)
	}
	r := run("verify", out)
	if r.code != 0 || !strings.Contains(r.stdout, "names inputs by absolute path") {
		t.Errorf("exit %d, stdout %q, stderr %q", r.code, r.stdout, r.stderr)
	}
}

// TestMainProcess is not a test: TestInterrupt runs the test binary as the
// bandsolve command through it.
func TestMainProcess(t *testing.T) {
	if os.Getenv("BANDSOLVE_TEST_MAIN") != "1" {
		t.Skip("helper process only")
	}
	args := os.Args
	for i, a := range args {
		if a == "--" {
			args = args[i+1:]
			break
		}
	}
	os.Exit(mainArgs(args, pipeline.Streams{Out: os.Stdout, Err: os.Stderr}))
}

// An interrupted run leaves the earlier results as they were and removes
// its staging folder.
func TestInterrupt(t *testing.T) {
	root := t.TempDir()
	out := filepath.Join(root, "demo")
	// Earlier results, which the interrupted run was told to replace.
	writeText(t, filepath.Join(out, "summary.json"), "{\"earlier\": true}\n")
	// The manifest marks the folder as bandsolve's, which --force requires.
	writeText(t, filepath.Join(out, "manifest.json"), "{\"tool\": \"bandsolve\", \"files\": [\"summary.json\", \"manifest.json\"]}\n")
	cmd := exec.Command(os.Args[0], "-test.run=^TestMainProcess$", "--", "demo", "--out", out, "--force", "--quiet")
	cmd.Env = append(os.Environ(), "BANDSOLVE_TEST_MAIN=1")
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	// Wait until the run has its staging folder (the demo stages before it
	// computes), then interrupt it.
	partial := func() []string {
		m, _ := filepath.Glob(filepath.Join(root, ".demo.partial-*"))
		return m
	}
	exited, signalled := signalWhen(cmd, os.Interrupt, func() bool { return len(partial()) > 0 })
	if !signalled || exited == nil {
		t.Skip("the run completed before it could be interrupted")
	}
	var ee *exec.ExitError
	if !errors.As(exited, &ee) || ee.ExitCode() != exitInterrupted {
		t.Fatalf("exit %v, want %d; stderr %s", exited, exitInterrupted, stderr.String())
	}
	if !strings.Contains(stderr.String(), "earlier results are untouched") {
		t.Errorf("stderr %q does not say what was kept", stderr.String())
	}
	if p := partial(); len(p) > 0 {
		t.Errorf("staging folder left behind: %v", p)
	}
	after, err := os.ReadFile(filepath.Join(out, "summary.json"))
	if err != nil || string(after) != "{\"earlier\": true}\n" {
		t.Errorf("earlier results changed by the interrupted run: %q (%v)", after, err)
	}
	if ents, _ := os.ReadDir(out); len(ents) != 2 {
		t.Errorf("the output folder holds %d entries, want only the earlier two files", len(ents))
	}
}

// --bands was renamed --uniqueness; the old name still works until 1.0 on
// the command line and in command files (CONTRACT.md), prints a one-line
// note, is hidden from --help, and the as-run record writes the new name, so
// verify reproduces the folder.
func TestOldBandsNameStillWorks(t *testing.T) {
	root := t.TempDir()
	writeDemoInputs(t, filepath.Join(root, "data"))
	t.Chdir(root)
	r := run("resolve", "--data", "data/series.csv", "--blank", "data/blank.csv", "--pre", "3",
		"--report", "off", "--bands", "off", "--out", "flag")
	if r.code != 0 || strings.Count(r.stderr, "--bands is now --uniqueness") != 1 {
		t.Fatalf("--bands off: exit %d, stderr %q", r.code, r.stderr)
	}
	rec, err := os.ReadFile(filepath.Join("flag", "as-run.bsr"))
	if err != nil || !strings.Contains(string(rec), "\nuniqueness       off") || strings.Contains(string(rec), "\nbands") {
		t.Errorf("as-run record (err %v) should say 'uniqueness off':\n%s", err, rec)
	}
	if _, err := os.Stat(filepath.Join("flag", "uniqueness.csv")); err == nil {
		t.Error("uniqueness.csv written with --bands off")
	}
	if v := run("verify", "flag", "--quiet"); v.code != 0 {
		t.Errorf("verify after --bands: exit %d: %s", v.code, v.stderr)
	}
	writeText(t, "old.bsr", "data data/series.csv\nblank data/blank.csv\npre 3\nreport off\nbands off\nout cmdfile\n")
	if r := run("run", "old.bsr"); r.code != 0 || !strings.Contains(r.stderr, "--bands is now --uniqueness") {
		t.Errorf("command file with 'bands off': exit %d, stderr %q", r.code, r.stderr)
	}
	if h := run("resolve", "--help"); strings.Contains(h.stdout, "--bands") || !strings.Contains(h.stdout, "--uniqueness") {
		t.Error("--help should show --uniqueness and hide --bands")
	}
}

// A --model whose species cannot be given components (here two species on
// one component) does not throw the resolution away: the folder is written
// with the reason in summary.json and on the terminal, and the exit code
// says the run did not do all it was asked (2: a setting is at fault).
func TestUnmappableModelKeepsTheResolution(t *testing.T) {
	root := t.TempDir()
	writeDemoInputs(t, filepath.Join(root, "data"))
	t.Chdir(root)
	r := run("resolve", "--data", "data/series.csv", "--blank", "data/blank.csv", "--pre", "3",
		"--report", "off", "--uniqueness", "off", "--model", "A -> B -> C", "--map", "A=1,B=1,C=2", "--out", "res")
	if r.code != exitUsage || !strings.Contains(r.stderr, "kinetics not done") || !strings.Contains(r.stderr, "component 1 is given to both A and B") {
		t.Fatalf("exit %d, stderr %q", r.code, r.stderr)
	}
	if !strings.Contains(r.stdout, "warning: kinetics not done") {
		t.Errorf("terminal summary lacks the reason:\n%s", r.stdout)
	}
	for _, f := range []string{"spectra.csv", "profiles.csv", "summary.json", "as-run.bsr"} {
		if _, err := os.Stat(filepath.Join("res", f)); err != nil {
			t.Errorf("%s not written: %v", f, err)
		}
	}
	if _, err := os.Stat(filepath.Join("res", "kinetics.csv")); err == nil {
		t.Error("kinetics.csv written for kinetics that were not done")
	}
	sum := readSummary(t, "res")
	if why, _ := sum["kinetics_not_done"].(string); !strings.Contains(why, "given to both") {
		t.Errorf("summary kinetics_not_done = %q", why)
	}
	if _, ok := sum["kinetics"]; ok {
		t.Error("summary has a kinetics key for kinetics that were not done")
	}
}

// staging says whether the staging folder of out/name is there (a folder:
// the probe file Check writes under the same prefix is not one).
func staging(out, name string) bool {
	m, _ := filepath.Glob(filepath.Join(out, "."+name+".partial-*"))
	for _, p := range m {
		if st, err := os.Stat(p); err == nil && st.IsDir() {
			return true
		}
	}
	return false
}

// A batch interrupted before any run finished leaves no --out folder it
// made (docs/errors.md: "a failed or interrupted run removes the staging
// folder and leaves the output folder as it was", here: not there).
func TestInterruptedBatchLeavesNoFolder(t *testing.T) {
	root := campaignFiles(t, 2)
	out := filepath.Join(root, "new", "batch")
	cmd := exec.Command(os.Args[0], "-test.run=^TestMainProcess$", "--", "run", filepath.Join(root, "runs", "*.bsr"), "--out", out, "-j", "1", "--quiet")
	cmd.Env = append(os.Environ(), "BANDSOLVE_TEST_MAIN=1")
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	exited, signalled := signalWhen(cmd, syscall.SIGTERM, func() bool { return staging(out, "r0") })
	if _, err := os.Stat(filepath.Join(out, "r0")); !signalled || err == nil {
		t.Skip("the first run completed before it could be interrupted")
	}
	var ee *exec.ExitError
	if !errors.As(exited, &ee) || ee.ExitCode() != exitInterrupted {
		t.Fatalf("exit %v, want %d; stderr %s", exited, exitInterrupted, stderr.String())
	}
	if _, err := os.Stat(filepath.Join(root, "new")); err == nil {
		filepath.WalkDir(filepath.Join(root, "new"), func(p string, d fs.DirEntry, err error) error { t.Log("left: ", p); return nil })
		t.Error("the interrupted batch left the --out folders it made")
	}
}

// signalWhen waits for the started cmd, sending it sig once, the first time
// ready says so (polled every millisecond), and returns its exit and
// whether it was signalled.
func signalWhen(cmd *exec.Cmd, sig os.Signal, ready func() bool) (exited error, signalled bool) {
	done := make(chan error, 1)
	go func() { done <- cmd.Wait() }()
	for {
		select {
		case exited = <-done:
			return exited, signalled
		default:
		}
		if !signalled && ready() {
			cmd.Process.Signal(sig)
			signalled = true
		}
		time.Sleep(time.Millisecond)
	}
}
