package main

// Campaigns: -j, --shard and collect through the real commands.

import (
	"bytes"
	"encoding/csv"
	"io/fs"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/campaign"
	"github.com/bandsolve/bandsolve/io/pipeline"
)

// folderBytes maps every file under dir (relative name) to its bytes,
// except the manifest, which records when and where the run was made.
func folderBytes(t *testing.T, dir string) map[string][]byte {
	t.Helper()
	got := map[string][]byte{}
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || !d.Type().IsRegular() || d.Name() == pipeline.ManifestName {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		got[rel], err = os.ReadFile(p)
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	return got
}

func sameFolders(t *testing.T, what, want, got string) {
	t.Helper()
	a, b := folderBytes(t, want), folderBytes(t, got)
	if len(a) < 5 || len(a) != len(b) {
		t.Errorf("%s: %d files, want %d (%s)", what, len(b), len(a), want)
	}
	for name, w := range a {
		if !bytes.Equal(w, b[name]) {
			t.Errorf("%s: %s differs from the run on its own", what, name)
		}
	}
}

// campaignFiles writes the demo data and n command files runs/r0.bsr … that
// differ in their settings; the first draws the report.
func campaignFiles(t *testing.T, n int) string {
	root := t.TempDir()
	writeDemoInputs(t, root)
	for i := 0; i < n; i++ {
		extra := "report off\nchecks off\n" // quick
		if i == 0 {
			extra = "report on\n"
		}
		writeText(t, filepath.Join(root, "runs", "r"+strconv.Itoa(i)+".bsr"),
			"paths-from ..\ndata series.csv\nblank blank.csv\nkind single-beam\npre 3\nbands off\n"+extra+"components "+strconv.Itoa(2+i%2)+"\n")
	}
	return root
}

// -j 3 gives each run the bytes it gives alone (CONTRACT.md: "same bytes
// as one by one"), and the log of the batch is the one -j 1 prints.
func TestRunParallelSameBytes(t *testing.T) {
	root := campaignFiles(t, 3)
	glob := filepath.Join(root, "runs", "*.bsr")
	seq := run("run", glob, "--out", filepath.Join(root, "seq"), "-j", "1")
	par := run("run", glob, "--out", filepath.Join(root, "par"), "-j", "3")
	if seq.code != 0 || par.code != 0 {
		t.Fatalf("exit %d / %d: %s %s", seq.code, par.code, seq.stderr, par.stderr)
	}
	if want := strings.ReplaceAll(seq.stdout, "seq", "par"); par.stdout != want {
		t.Errorf("-j 3 printed\n%s\nwhile -j 1 printed\n%s", par.stdout, seq.stdout)
	}
	if err := os.Mkdir(filepath.Join(root, "one"), 0o755); err != nil {
		t.Fatal(err)
	}
	for i := 0; i < 3; i++ {
		name := "r" + strconv.Itoa(i)
		alone := filepath.Join(root, "one", name)
		if r := run("run", filepath.Join(root, "runs", name+".bsr"), "--out", alone, "--quiet"); r.code != 0 {
			t.Fatal(r.stderr)
		}
		sameFolders(t, name+" with -j 3", alone, filepath.Join(root, "par", name))
	}
	if _, err := os.Stat(filepath.Join(root, "par", "r0", "report.html")); err != nil {
		t.Errorf("the run with the report wrote none: %v", err)
	}
}

// Two files naming the same output folder run one after the other, as
// without -j: the first writes it, the second is refused (earlier results).
func TestRunParallelSameFolder(t *testing.T) {
	for _, j := range []string{"1", "2"} {
		root := t.TempDir()
		writeDemoInputs(t, root)
		for _, n := range []string{"a", "b"} {
			writeText(t, filepath.Join(root, n+".bsr"), "data series.csv\nblank blank.csv\n"+quickSettings+"out shared\n")
		}
		r := run("run", filepath.Join(root, "a.bsr"), filepath.Join(root, "b.bsr"), "-j", j, "--quiet")
		if r.code != exitRun || !regexp.MustCompile(`a\.bsr +ok`).MatchString(r.stdout) || !regexp.MustCompile(`b\.bsr +failed`).MatchString(r.stdout) {
			t.Errorf("-j %s: exit %d, want a ok and b failed:\n%s", j, r.code, r.stdout)
		}
	}
}

func TestRunFlagsRefused(t *testing.T) {
	for _, c := range []struct{ args, want string }{
		{"-j 0", "-j \"0\": give a whole number"},
		// The flag as the user wrote it, long or short.
		{"--jobs two", "--jobs \"two\": give a whole number"},
		{"--jobs=two", "--jobs \"two\": give a whole number"},
		{"--shard 4/4", "I counts from 0"},
		{"--shard 1", "give I/N"},
		// run's own flags are suggested for a slip, a swap of two letters
		// counting as one edit (docs/command-files.md: "edit distance with
		// swapped letters counting once"; Damerau 1964).
		{"--shadr 1/2", "unknown flag: --shadr (did you mean --shard?)"},
		{"--shar 1/2", "unknown flag: --shar (did you mean --shard?)"},
		{"--jbos 2", "unknown flag: --jbos (did you mean --jobs?)"},
		{"--skip-dnoe", "unknown flag: --skip-dnoe (did you mean --skip-done?)"},
		{"--blnak b.csv", "unknown flag: --blnak (did you mean --blank?)"},
	} {
		r := run(append([]string{"run", "x.bsr"}, strings.Fields(c.args)...)...)
		if r.code != exitUsage || !strings.Contains(r.stderr, c.want) || strings.Count(r.stderr, "\n") != 1 {
			t.Errorf("%s: exit %d, %q; want exit 2 and one line with %q", c.args, r.code, r.stderr, c.want)
		}
	}
}

// collect --out names a file: a path through a file, or into a folder that
// is not there, is refused in one line naming the path and what to do
// (docs/errors.md), with no temporary name of the program in it.
func TestCollectOutRefused(t *testing.T) {
	w := t.TempDir()
	writeFile(t, filepath.Join(w, "notes.txt"), "keep me\n")
	for _, c := range []struct{ out, want string }{
		{filepath.Join(w, "notes.txt", "table.csv"), "part of the path is a file, not a folder; name a file in an existing folder"},
		{filepath.Join(w, "later", "table.csv"), "folder " + filepath.Join(w, "later") + " does not exist; make it, or name a file in an existing folder"},
	} {
		r := run("collect", w, "--out", c.out)
		if r.panicked != nil {
			t.Fatalf("%s: panic: %v", c.out, r.panicked)
		}
		if r.code != exitRun || !strings.HasPrefix(r.stderr, "bandsolve collect: --out "+c.out+": "+c.want+"\n") ||
			strings.Contains(r.stderr, "partial") {
			t.Errorf("--out %s: exit %d, %q; want exit 1 and first %q", c.out, r.code, r.stderr, c.want)
		}
	}
	if b, err := os.ReadFile(filepath.Join(w, "notes.txt")); err != nil || string(b) != "keep me\n" {
		t.Errorf("the file in the path changed: %q, %v", b, err)
	}
}

// docCommands returns the bandsolve command lines of docs/campaigns.md's
// shell blocks, in order.
func docCommands(t *testing.T) []string {
	b, err := os.ReadFile(filepath.Join("..", "..", "docs", "campaigns.md"))
	if err != nil {
		t.Fatal(err)
	}
	var lines []string
	inBlock := false
	for _, l := range strings.Split(string(b), "\n") {
		switch {
		case strings.HasPrefix(l, "```"):
			inBlock = !inBlock
		case inBlock && strings.HasPrefix(l, "bandsolve "):
			lines = append(lines, l)
		}
	}
	return lines
}

// The Slurm example of docs/campaigns.md, run as written with the array
// index set by hand as Slurm would set it (0 … 3 for --array=0-3): the
// shares give every file exactly once, each with the bytes of the whole
// batch run at once, and collect then tabulates all of them.
func TestSlurmArrayExample(t *testing.T) {
	cmds := docCommands(t)
	if len(cmds) != 2 || !strings.Contains(cmds[0], "SLURM_ARRAY_TASK_ID") || !strings.Contains(cmds[1], "collect") {
		t.Fatalf("docs/campaigns.md's shell blocks hold %q; the test expects the array task, then collect", cmds)
	}
	root := campaignFiles(t, 5)
	t.Chdir(root)
	for task := 0; task < 4; task++ {
		t.Setenv("SLURM_ARRAY_TASK_ID", strconv.Itoa(task))
		args := shellArgs(t, cmds[0])
		if r := run(args[1:]...); r.code != 0 {
			t.Fatalf("task %d: %v: exit %d: %s", task, args, r.code, r.stderr)
		}
		// Round robin: after task i, files k ≤ … with k mod 4 ≤ i exist.
		for k := 0; k < 5; k++ {
			_, err := os.Stat(filepath.Join("batch", "r"+strconv.Itoa(k), "summary.json"))
			if done := k%4 <= task; done != (err == nil) {
				t.Errorf("after task %d: r%d written = %v, want %v", task, k, err == nil, done)
			}
		}
	}
	if r := run("run", "runs/*.bsr", "--out", "whole", "--quiet"); r.code != 0 {
		t.Fatal(r.stderr)
	}
	for k := 0; k < 5; k++ {
		name := "r" + strconv.Itoa(k)
		sameFolders(t, name+" from its shard", filepath.Join("whole", name), filepath.Join("batch", name))
	}
	// shellLine expands batch/*/ to the sorted folders before bandsolve
	// sees them, as a shell's pathname expansion does (POSIX §2.13.3).
	args := shellArgs(t, cmds[1])[1:]
	if r := run(args...); r.code != 0 {
		t.Fatalf("%v: exit %d: %s", args, r.code, r.stderr)
	}
	b, err := os.ReadFile("batch.csv")
	if err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil || len(rows) != 6 {
		t.Fatalf("batch.csv: %d rows, %v; want a header and 5", len(rows), err)
	}
	for k := 1; k <= 5; k++ {
		want := readSummary(t, rows[k][0])["components"]
		if rows[k][1] != "ok" || rows[k][2] != strconv.Itoa(int(want.(float64))) {
			t.Errorf("batch.csv row %d = %q; summary.json says components %v", k, rows[k], want)
		}
	}
}

// shellArgs splits a docs command line as a POSIX shell would (shellLine,
// docs_test.go), failing the test on a line the splitter refuses.
func shellArgs(t *testing.T, line string) []string {
	t.Helper()
	args, stdout, err := shellLine(line)
	if err != nil || stdout != "" {
		t.Fatalf("docs command %q: %v (redirect %q)", line, err, stdout)
	}
	return args
}

// TestCollectHelpNamesEveryColumn: collect --help lists the columns of the
// table collect writes, every one, in the table's order (the table is the
// definition; users' scripts read the columns by the help's word).
func TestCollectHelpNamesEveryColumn(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "run")
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	summary := `{"kinetics": {"model": "A -> B", "rate_constants": [{"step": "A -> B", "k_per_s": 0.001}]}}`
	if err := os.WriteFile(filepath.Join(dir, "summary.json"), []byte(summary), 0o644); err != nil {
		t.Fatal(err)
	}
	tab, _ := campaign.Collect([]string{dir})
	help := strings.Join(strings.Fields(collectHelp), " ")
	at := 0
	for _, col := range tab.Header {
		name := regexp.MustCompile(`\[.*\]$`).ReplaceAllString(col, "[STEP]")
		if strings.Contains(col, " | ") {
			name = regexp.MustCompile(`\[.*\]$`).ReplaceAllString(col, "[FIT | STEPS | STEP]")
		}
		i := strings.Index(help[at:], name)
		if i < 0 {
			t.Errorf("collect --help does not name column %q after %q", name, help[:at])
			continue
		}
		at += i + len(name)
	}
}

// fileStamps maps every file under dir to its bytes and modification time,
// manifest included: a skipped folder must not be touched at all.
func fileStamps(t *testing.T, dir string) map[string]string {
	t.Helper()
	got := map[string]string{}
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		info, err := d.Info()
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		got[rel] = info.ModTime().String() + "\x00" + string(b)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return got
}

// TestRunSkipDone: a campaign rerun after adding one command file. Without
// --skip-done every earlier file fails on its existing folder (exit 1);
// with it the earlier files are listed as skipped, the new one runs, the
// exit status is 0, and the earlier folders keep every byte and time
// stamp, a file the user put there included. A folder whose record has
// other settings, and one bandsolve did not make, are errors that name the
// cause, and nothing in them is removed or changed; --force then replaces
// the first and still refuses the second (docs/reproducibility.md: --force
// replaces only an output folder of bandsolve).
func TestRunSkipDone(t *testing.T) {
	root := campaignFiles(t, 2)
	glob := filepath.Join(root, "runs", "*.bsr")
	batch := filepath.Join(root, "batch")
	if r := run("run", glob, "--out", batch, "--quiet"); r.code != 0 {
		t.Fatal(r.stdout, r.stderr)
	}
	writeText(t, filepath.Join(batch, "r1", "my-notes.txt"), "kept\n")
	before := map[string]map[string]string{"r0": fileStamps(t, filepath.Join(batch, "r0")), "r1": fileStamps(t, filepath.Join(batch, "r1"))}
	writeText(t, filepath.Join(root, "runs", "r2.bsr"), "paths-from ..\ndata series.csv\nblank blank.csv\nkind single-beam\npre 3\nbands off\nreport off\nchecks off\ncomponents 2\nregion 1800:1000\n")
	if r := run("run", glob, "--out", batch); r.code != exitRun || !strings.Contains(r.stdout, "3 command file(s): 1 ok, 2 failed") {
		t.Errorf("without --skip-done: exit %d\n%s", r.code, r.stdout)
	}
	os.RemoveAll(filepath.Join(batch, "r2"))
	r := run("run", glob, "--out", batch, "--skip-done")
	if r.code != 0 || !strings.Contains(r.stdout, "3 command file(s): 1 ok, 2 skipped, 0 failed") ||
		!regexp.MustCompile(`r0\.bsr +skipped`).MatchString(r.stdout) || !regexp.MustCompile(`r2\.bsr +ok`).MatchString(r.stdout) {
		t.Fatalf("--skip-done: exit %d\n%s%s", r.code, r.stdout, r.stderr)
	}
	for name, was := range before {
		now := fileStamps(t, filepath.Join(batch, name))
		if len(now) != len(was) {
			t.Errorf("%s: %d files, had %d", name, len(now), len(was))
		}
		for f, w := range was {
			if now[f] != w {
				t.Errorf("%s/%s changed though skipped", name, f)
			}
		}
	}
	// Other settings in r0's command file: its folder is another analysis.
	r0 := filepath.Join(root, "runs", "r0.bsr")
	text, _ := os.ReadFile(r0)
	writeText(t, r0, strings.Replace(string(text), "components 2", "components 3", 1))
	if err := os.MkdirAll(filepath.Join(batch, "r3"), 0o755); err != nil {
		t.Fatal(err)
	}
	writeText(t, filepath.Join(batch, "r3", "keep.txt"), "not bandsolve's\n")
	writeText(t, filepath.Join(root, "runs", "r3.bsr"), "paths-from ..\ndata series.csv\nblank blank.csv\n"+quickSettings)
	r = run("run", glob, "--out", batch, "--skip-done")
	if r.code != exitRun || !strings.Contains(r.stdout, `components is "2" there and "3" here; it is kept: give --force`) ||
		!strings.Contains(r.stdout, "holds no manifest.json") {
		t.Errorf("another analysis: exit %d\n%s", r.code, r.stdout)
	}
	if b, err := os.ReadFile(filepath.Join(batch, "r3", "keep.txt")); err != nil || string(b) != "not bandsolve's\n" {
		t.Errorf("a folder bandsolve did not make lost its file: %v", err)
	}
	if now := fileStamps(t, filepath.Join(batch, "r0")); now["summary.json"] != before["r0"]["summary.json"] {
		t.Errorf("r0 of other settings was changed without --force")
	}
	r = run("run", glob, "--out", batch, "--skip-done", "--force", "--quiet")
	if r.code != exitRun || !regexp.MustCompile(`r0\.bsr +ok`).MatchString(r.stdout) || !regexp.MustCompile(`r3\.bsr +failed`).MatchString(r.stdout) {
		t.Errorf("--force: exit %d\n%s", r.code, r.stdout)
	}
	if b, err := os.ReadFile(filepath.Join(batch, "r3", "keep.txt")); err != nil || string(b) != "not bandsolve's\n" {
		t.Errorf("--force removed a file bandsolve did not make: %v", err)
	}
}

// TestRunFolderSuggestsPattern: a folder of command files given for the
// files is a usage slip (exit 2, CONTRACT.md) told in one line that names
// the folder and the quoted pattern to give instead (DEVELOPERS.md,
// Errors); in a batch it is one failed row and the others still run.
func TestRunFolderSuggestsPattern(t *testing.T) {
	root := t.TempDir()
	runs := filepath.Join(root, "runs")
	if err := os.MkdirAll(runs, 0o755); err != nil {
		t.Fatal(err)
	}
	r := run("run", runs+"/")
	want := "bandsolve run: " + runs + "/: is a folder, not a command file; give the command files in it, e.g. bandsolve run '" + filepath.Join(runs, "*.bsr") + "' (quoted: bandsolve expands the pattern)\n"
	if r.code != exitUsage || r.stderr != want {
		t.Errorf("exit %d, %q\nwant exit 2, %q", r.code, r.stderr, want)
	}
	r = run("run", runs, filepath.Join(root, "nosuch.bsr"), "--quiet")
	if r.code == 0 || !regexp.MustCompile(`runs +failed +- +is a folder`).MatchString(r.stdout) {
		t.Errorf("in a batch: exit %d\n%s", r.code, r.stdout)
	}
}

// A run that resolves the data but cannot fit the model asked for writes
// its results and fails (CONTRACT.md's exit codes: 0 only when ok). The invented demo holds three species and the file asks for
// 'A -> B' (two) with no --map. collect must not call that folder ok, must
// name the model asked for and say why the kinetics were not done; and
// --skip-done must not pass it as done with exit 0, where a plain run
// fails (docs/campaigns.md). Before, status ok, kinetics_model empty, no
// note, and "skipped" with exit 0.
func TestKineticsNotDoneInCampaign(t *testing.T) {
	root := t.TempDir()
	writeDemoInputs(t, root)
	writeText(t, filepath.Join(root, "runs", "r0.bsr"),
		"paths-from ..\ndata series.csv\nblank blank.csv\nkind single-beam\npre 3\nbands off\nreport off\nchecks off\nmodel A -> B\n")
	writeText(t, filepath.Join(root, "runs", "r1.bsr"), // a batch of two: folders batch/r0 and batch/r1
		"paths-from ..\ndata series.csv\nblank blank.csv\nkind single-beam\npre 3\nbands off\nreport off\nchecks off\n")
	glob := filepath.Join(root, "runs", "*.bsr")
	batch := filepath.Join(root, "batch")
	first := run("run", glob, "--out", batch, "--quiet")
	if first.code == 0 || !strings.Contains(first.stdout+first.stderr, "kinetics not done") {
		t.Fatalf("first run: exit %d, want a failure with kinetics not done\n%s%s", first.code, first.stdout, first.stderr)
	}
	c := run("collect", filepath.Join(batch, "r0"))
	if c.code != 0 {
		t.Fatalf("collect: exit %d: %s", c.code, c.stderr)
	}
	rows, err := csv.NewReader(strings.NewReader(c.stdout)).ReadAll()
	if err != nil || len(rows) != 2 {
		t.Fatalf("collect wrote %q (%v)", c.stdout, err)
	}
	cell := map[string]string{}
	for i, h := range rows[0] {
		cell[h] = rows[1][i]
	}
	if cell["status"] != "kinetics not done" || cell["kinetics_model"] != "A -> B" ||
		!strings.Contains(cell["notes"], "kinetics not done: the resolution has 3 components") {
		t.Errorf("collect: status %q, kinetics_model %q, notes %q", cell["status"], cell["kinetics_model"], cell["notes"])
	}
	again := run("run", glob, "--out", batch, "--skip-done")
	if again.code != first.code || strings.Contains(again.stdout, filepath.Join(batch, "r0")+" already holds") ||
		!regexp.MustCompile(`r0\.bsr +failed`).MatchString(again.stdout) {
		t.Errorf("--skip-done: exit %d, want %d as the plain run, and r0 failed, not skipped\n%s%s", again.code, first.code, again.stdout, again.stderr)
	}
}

// A batch is decided by how it was given, not by how many files it
// matched: docs/campaigns.md, "a file writes to the same folder
// (`batch/NAME`) whichever share runs it", and docs/command-files.md, "With
// `--out DIR`, each file writes to `DIR/NAME`" for a quoted pattern. A
// pattern or a share that takes one file writes to OUT/NAME as one that
// takes several; one plain file writes into --out itself (README.md:
// `bandsolve run exp1.bsr --out results/`).
func TestRunOneFileBatchWritesToName(t *testing.T) {
	root := campaignFiles(t, 2)
	t.Chdir(root)
	for _, c := range []struct {
		args []string
		want string // where summary.json must be
	}{
		{[]string{"runs/r1*.bsr", "--out", "pattern"}, "pattern/r1"},
		{[]string{"runs/r1*.bsr", "--out", "share", "--shard", "0/1"}, "share/r1"},
		{[]string{"runs/r1.bsr", "--out", "shard2", "--shard", "0/2"}, "shard2/r1"},
		{[]string{"runs/r1.bsr", "--out", "plain"}, "plain"},
	} {
		r := run(append([]string{"run", "--quiet"}, c.args...)...)
		if r.code != 0 {
			t.Fatalf("run %q: exit %d: %s", c.args, r.code, r.stderr)
		}
		if _, err := os.Stat(filepath.Join(c.want, "summary.json")); err != nil {
			t.Errorf("run %q: no %s/summary.json (%v)", c.args, c.want, err)
		}
	}
	// The same analysis either way (as-run.bsr differs: its paths-from
	// counts the folders up to the data from where it lies).
	for _, f := range []string{"spectra.csv", "profiles.csv"} {
		a, _ := os.ReadFile(filepath.Join("plain", f))
		b, _ := os.ReadFile(filepath.Join("pattern", "r1", f))
		if len(a) == 0 || !bytes.Equal(a, b) {
			t.Errorf("%s of the one-file pattern differs from the plain run's", f)
		}
	}
	// collect batch/*/ reads the runs' folders, not the batch's own.
	if r := run("collect", "pattern/r1/", "share/r1/"); r.code != 0 {
		t.Errorf("collect of the one-file batches: exit %d: %s", r.code, r.stderr)
	}
}

// A share that takes no file says so on standard error (a job-array task
// must be able to tell it ran nothing); it is no failure, exit 0.
func TestRunEmptyShareSaysSo(t *testing.T) {
	root := campaignFiles(t, 1)
	t.Chdir(root)
	r := run("run", "runs/r0.bsr", "--out", "b", "--shard", "1/2", "--quiet")
	if r.code != 0 || !strings.Contains(r.stderr, "--shard 1/2 takes none of the 1 command file(s)") {
		t.Errorf("exit %d, stderr %q; want exit 0 and a line saying the share takes none", r.code, r.stderr)
	}
	if _, err := os.Stat(filepath.Join("b", "r0")); err == nil {
		t.Error("the share ran r0, which belongs to share 0/2")
	}
}

// A batch whose every run failed leaves no --out folder it made
// (docs/errors.md: "a failed or interrupted run removes the staging folder
// and leaves the output folder as it was", here: not there); a folder that
// was there before is kept even when empty: bandsolve never deletes what it
// did not make.
func TestRunFailedBatchLeavesNoFolder(t *testing.T) {
	root := t.TempDir()
	t.Chdir(root)
	writeText(t, filepath.Join("runs", "a.bsr"), "data nowhere.csv\nkind absorbance\n")
	writeText(t, filepath.Join("runs", "b.bsr"), "data nowhere.csv\ncomponets 2\n")
	if r := run("run", "runs/*.bsr", "--out", "new/batch", "--quiet"); r.code == 0 {
		t.Fatalf("a batch of failing files: exit 0")
	}
	if _, err := os.Stat("new"); err == nil {
		t.Error("the failed batch left the --out folders it made")
	}
	if err := os.Mkdir("mine", 0o755); err != nil {
		t.Fatal(err)
	}
	run("run", "runs/*.bsr", "--out", "mine", "--quiet")
	if _, err := os.Stat("mine"); err != nil {
		t.Error("the failed batch removed a folder it did not make")
	}
}
