package main

// Bad input, tried as a new user would: each case runs the real command
// in-process and checks the promise of docs/errors.md — one line on stderr
// naming the file and the line, column or axis value and saying what to do,
// exit code 2 for usage errors and 1 for bad files, no panic, no results
// written, and the input files left byte for byte as they were.

import (
	"bytes"
	"crypto/sha256"
	"encoding/json"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/pipeline"
)

// badDir holds the small fixtures written once by testdata/bad/make_bad.py.
var badDir = func() string {
	d, err := filepath.Abs(filepath.Join("..", "..", "testdata", "bad"))
	if err != nil {
		panic(err)
	}
	return d
}()

type runResult struct {
	code     int
	stdout   string
	stderr   string
	panicked any
}

// run calls the command as main would, turning a panic into a result so
// that a crash shows as a failed case rather than a dead test binary.
func run(args ...string) (r runResult) {
	var out, errb bytes.Buffer
	defer func() {
		if p := recover(); p != nil {
			r.panicked = p
		}
		r.stdout, r.stderr = out.String(), errb.String()
	}()
	r.code = mainArgs(args, pipeline.Streams{Out: &out, Err: &errb})
	return r
}

// hashTree maps every regular file under dir (except skip) to its SHA-256.
func hashTree(t *testing.T, dir string, skip string) map[string][32]byte {
	t.Helper()
	h := map[string][32]byte{}
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return nil
		}
		if skip != "" && (p == skip || strings.HasPrefix(p, skip+string(filepath.Separator))) {
			return filepath.SkipDir
		}
		if d.Type().IsRegular() {
			if b, err := os.ReadFile(p); err == nil {
				h[p] = sha256.Sum256(b)
			}
		}
		return nil
	})
	return h
}

func sameHashes(t *testing.T, what string, before, after map[string][32]byte) {
	t.Helper()
	for p, h := range before {
		if a, ok := after[p]; !ok {
			t.Errorf("%s: input %s disappeared", what, p)
		} else if a != h {
			t.Errorf("%s: input %s was modified", what, p)
		}
	}
}

// leftovers lists staging folders a run left beside out.
func leftovers(out string) []string {
	m, _ := filepath.Glob(filepath.Join(filepath.Dir(out), "."+filepath.Base(out)+".partial-*"))
	p, _ := filepath.Glob(filepath.Join(filepath.Dir(out), ".bandsolve-probe-*"))
	return append(m, p...)
}

// badCase is one row of the table in docs/errors.md.
type badCase struct {
	name string
	cmd  string // "resolve" unless given
	// args with "B/" standing for testdata/bad/ and "W/" for the case's
	// own scratch folder; --quiet and --out W/out are added.
	args  []string
	setup func(t *testing.T, w string) // builds folder fixtures in W
	code  int
	// want are substrings of the one stderr line: the file and its line,
	// column or axis value, then words of the advice.
	want []string
	skip func() string // reason to skip, "" to run
}

func expand(args []string, w string) []string {
	out := make([]string, len(args))
	for i, a := range args {
		a = strings.ReplaceAll(a, "B/", badDir+string(filepath.Separator))
		a = strings.ReplaceAll(a, "W/", w+string(filepath.Separator))
		out[i] = a
	}
	return out
}

// good is testdata/bad/good.csv as a table: axis, times, single beams.
type goodData struct {
	axis  []string
	times []string
	rows  [][]string // rows[channel][spectrum]
}

func readGood(t *testing.T) goodData {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(badDir, "good.csv"))
	if err != nil {
		t.Fatal(err)
	}
	var g goodData
	for i, l := range strings.Split(strings.TrimSpace(string(b)), "\n") {
		c := strings.Split(l, ",")
		if i == 0 {
			g.times = c[1:]
			continue
		}
		g.axis = append(g.axis, c[0])
		g.rows = append(g.rows, c[1:])
	}
	return g
}

// writeFolder writes good.csv as one file per spectrum, named by time
// (s_0000.csv …), with sep between the columns and head before the data.
func writeFolder(t *testing.T, dir string, sep, head, eol string) {
	t.Helper()
	g := readGood(t)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	for j, tm := range g.times {
		var b strings.Builder
		b.WriteString(head)
		for i, x := range g.axis {
			b.WriteString(x + sep + g.rows[i][j] + eol)
		}
		sec, _ := strconv.Atoi(tm)
		if err := os.WriteFile(filepath.Join(dir, fmt.Sprintf("s_%04d.csv", sec)), []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

func writeFile(t *testing.T, p, text string) {
	t.Helper()
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
}

func timesTable(rows ...string) string {
	return "file,time_s\n" + strings.Join(rows, "\n") + "\n"
}

func allTimes() []string {
	var r []string
	for _, s := range []int{0, 60, 120, 180, 240, 300, 360, 420} {
		r = append(r, fmt.Sprintf("s_%04d.csv,%d", s, s))
	}
	return r
}

func folder(t *testing.T, w string) {
	writeFolder(t, filepath.Join(w, "scans"), ",", "wavenumber,intensity\n", "\n")
}

func isRoot() bool { return os.Geteuid() == 0 }

func badCases() []badCase {
	F := "W/scans"
	return []badCase{
		// Matrix CSV: the file itself.
		{name: "empty file", args: []string{"--data", "B/bad_empty.csv"}, code: 1, want: []string{"bad_empty.csv: is empty", "header row"}},
		{name: "only blank and comment lines", args: []string{"--data", "B/bad_blank_lines_only.csv"}, code: 1, want: []string{"bad_blank_lines_only.csv: is empty", "export"}},
		{name: "header only", args: []string{"--data", "B/bad_header_only.csv"}, code: 1, want: []string{"bad_header_only.csv:1:", "no data rows", "add one row per axis point"}},
		{name: "numbers without header", args: []string{"--data", "B/bad_numbers_no_header.csv"}, code: 1, want: []string{"bad_numbers_no_header.csv:1:", "not a header", "add a header row"}},
		{name: "ragged row", args: []string{"--data", "B/bad_ragged.csv"}, code: 1, want: []string{"bad_ragged.csv:4:", "row has 8 cells, header has 9", "every row needs 9 cells"}},
		{name: "text cell", args: []string{"--data", "B/bad_text_cell.csv"}, code: 1, want: []string{"bad_text_cell.csv:5:", "column 4 (time 120 s)", `"abc" is not a number`, "replace it with a number"}},
		{name: "empty cell", args: []string{"--data", "B/bad_empty_cell.csv"}, code: 1, want: []string{"bad_empty_cell.csv:4:", "column 2 (time 0 s)", "empty cell", "replace it"}},
		{name: "NaN", args: []string{"--data", "B/bad_nan.csv"}, code: 1, want: []string{"bad_nan.csv:6:", "column 3", `"NaN" is not a finite number`, "replace it"}},
		{name: "Inf", args: []string{"--data", "B/bad_inf.csv"}, code: 1, want: []string{"bad_inf.csv:6:", "column 7", `"-Inf" is not a finite number`}},
		{name: "number out of range", args: []string{"--data", "B/bad_huge.csv"}, code: 1, want: []string{"bad_huge.csv:7:", "column 5", `"1e400"`, "too large"}},
		{name: "decimal comma, comma separated", args: []string{"--data", "B/bad_decimal_comma_commas.csv"}, code: 1, want: []string{"bad_decimal_comma_commas.csv:2:", "row has 17 cells", "decimal commas"}},
		{name: "duplicated axis value", args: []string{"--data", "B/bad_dup_axis.csv"}, code: 1, want: []string{"bad_dup_axis.csv:7:", "axis value 1008 repeats", "remove the repeated point"}},
		{name: "non-monotonic axis", args: []string{"--data", "B/bad_nonmono_axis.csv"}, code: 1, want: []string{"bad_nonmono_axis.csv:9:", "axis value 1012 breaks the order", "sort the rows"}},
		{name: "duplicated time", args: []string{"--data", "B/bad_dup_time.csv"}, code: 1, want: []string{"bad_dup_time.csv:1:", "columns 4 and 5 have the same time 120 s", "its own time"}},
		{name: "non-numeric time", args: []string{"--data", "B/bad_text_time.csv"}, code: 1, want: []string{"bad_text_time.csv:1:", `column 5: "3 min" is not a number`, "acquisition times in seconds"}},
		{name: "one spectrum per line", args: []string{"--data", "B/bad_transposed.csv"}, code: 1, want: []string{"bad_transposed.csv:1:", `the first header cell "time_s" names time`, "write it the other way round"}},
		{name: "binary garbage", args: []string{"--data", "B/bad_binary.csv"}, code: 1, want: []string{"bad_binary.csv: is a binary file", "give a text export"}},
		{name: "one-point spectrum", args: []string{"--data", "B/bad_one_point.csv"}, code: 1, want: []string{"bad_one_point.csv: has only 1 axis point", "at least two axis points"}},
		{name: "one spectrum where differences need two", args: []string{"--data", "B/bad_one_spectrum.csv"}, code: 1, want: []string{"bad_one_spectrum.csv: holds one spectrum only", "at least two"}},
		{name: "missing data path", args: []string{"--data", "W/nothing.csv"}, code: 1, want: []string{"nothing.csv: cannot read: no such file or directory", "check the --data path"}},
		{name: "axis differs between experiments", args: []string{"--data", "B/good.csv", "--data", "B/bad_other_axis.csv"}, code: 1, want: []string{"bad_other_axis.csv: its axis differs from", "good.csv", "--resample"}},
		{name: "malformed JCAMP-DX record", args: []string{"--data", "B/bad_record.jdx"}, code: 1, want: []string{"bad_record.jdx:7:", "no ##END="}},
		{name: "JCAMP-DX data longer than NPOINTS", args: []string{"--data", "W/long.jdx"}, setup: func(t *testing.T, w string) {
			writeFile(t, filepath.Join(w, "long.jdx"), "##TITLE=x\n##JCAMP-DX=4.24\n##XUNITS=1/CM\n##YUNITS=TRANSMITTANCE\n##NPOINTS=3\n##FIRSTX=1000\n##LASTX=1004\n##XFACTOR=1\n##YFACTOR=1\n##XYDATA=(X++(Y..Y))\n1000 0.5 0.6 0.7 0.8\n##END=\n")
		}, code: 1, want: []string{"long.jdx:11:", "NPOINTS=3", "correct ##NPOINTS="}},

		// An option that takes one value, given twice on the command line,
		// is refused as a command file refuses a keyword set twice; the
		// last had silently won.
		{name: "one-value flag given twice", args: []string{"--data", "B/good.csv", "--kind", "absorbance", "--kind", "single-beam"}, code: 2, want: []string{`--kind is given twice ("absorbance", then "single-beam"); give it once`, "only --data"}},

		// Command files: settings, so their faults are usage errors.
		{name: "command file with a bad value", cmd: "run", args: []string{"B/bad_command.txt"}, code: 2, want: []string{"bad_command.txt:3:12:", `"three"`, "want auto or a whole number"}},
		{name: "command file with a misspelt keyword", cmd: "run", args: []string{"W/misspelt.bsr"}, setup: func(t *testing.T, w string) {
			writeFile(t, filepath.Join(w, "misspelt.bsr"), "# run 7\ndata "+filepath.Join(badDir, "good.csv")+"\nkindd single-beam\n")
		}, code: 2, want: []string{"misspelt.bsr:3:1:", `unknown keyword "kindd"`, `did you mean "kind"?`}},

		// A missing file is a file that cannot be read: exit 1 (docs/errors.md,
		// "Exit codes"), whether named as it is or by a pattern.
		{name: "command file pattern that matches nothing", cmd: "run", args: []string{"W/runs/*.bsr"}, code: 1, want: []string{"runs/*.bsr: no file matches this pattern", "check the folder and the pattern"}},
		{name: "command file that is not there", cmd: "run", args: []string{"W/nothing.bsr"}, code: 1, want: []string{"nothing.bsr: cannot read: no such file or directory", "check the command file's path"}},
		{name: "command file naming a data file that is not there", cmd: "run", args: []string{"W/missing-data.bsr"}, setup: func(t *testing.T, w string) {
			writeFile(t, filepath.Join(w, "missing-data.bsr"), "data nothing.csv\nkind absorbance\n")
		}, code: 1, want: []string{"nothing.csv: cannot read: no such file or directory"}},

		// Blanks.
		{name: "blank of another length", args: []string{"--data", "B/good.csv", "--blank", "B/bad_blank_short.csv"}, code: 1, want: []string{"bad_blank_short.csv: has 7 axis points", "good.csv has 12", "--resample"}},
		{name: "blank on a shifted axis", args: []string{"--data", "B/good.csv", "--blank", "B/bad_blank_shifted.csv"}, code: 1, want: []string{"bad_blank_shifted.csv: axis point 1 is 1001", "it is 1000", "--resample"}},
		{name: "blank that is not a single beam", args: []string{"--data", "B/good.csv", "--blank", "B/bad_blank_absorbance.csv"}, code: 1, want: []string{"bad_blank_absorbance.csv: blank intensity -0.01 at wavenumber 1000", "a blank must be a single beam"}},
		{name: "blank with absorbance data", args: []string{"--data", "B/good.csv", "--kind", "absorbance", "--blank", "B/blank_good.csv"}, code: 2, want: []string{"--blank is a single beam", "--kind single-beam"}},

		// Folders of spectrum files.
		{name: "folder without times", args: []string{"--data", F}, setup: folder, code: 2, want: []string{"scans is a folder of spectra", "--times FILE", "--times-from-name"}},
		// A times table names the flag that gave it when it is not there, and
		// is refused beside a matrix CSV, whose header gives the times: it
		// was ignored without a word (docs/errors.md: one line, what, where,
		// what to do).
		{name: "times table that is not there", args: []string{"--data", F, "--times", "W/none.csv"}, setup: folder, code: 1, want: []string{"resolve: --times ", "none.csv: cannot read: no such file or directory", "check the path of the times table"}},
		{name: "times table beside a matrix CSV", args: []string{"--data", "B/good.csv", "--times", "W/t.csv"}, setup: func(t *testing.T, w string) {
			writeFile(t, filepath.Join(w, "t.csv"), "file,time_s\na.csv,0\n")
		}, code: 2, want: []string{"resolve: --times ", "t.csv: --data ", "good.csv is a matrix CSV", "header row gives each spectrum's time", "leave it out"}},
		{name: "times from names beside a matrix CSV", args: []string{"--data", "B/good.csv", "--times-from-name"}, code: 2, want: []string{"resolve: --times-from-name: --data ", "good.csv is a matrix CSV", "leave it out"}},
		{name: "empty folder", args: []string{"--data", "W/none", "--times-from-name"}, setup: func(t *testing.T, w string) { os.Mkdir(filepath.Join(w, "none"), 0o755) }, code: 1, want: []string{"none: holds no spectrum files", "one file per spectrum"}},
		{name: "folder file on another axis", args: []string{"--data", F, "--times-from-name"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			writeFile(t, filepath.Join(w, "scans", "s_0480.csv"), "wavenumber,intensity\n"+strings.Repeat("", 0)+func() string {
				var b strings.Builder
				for i := 0; i < 12; i++ {
					fmt.Fprintf(&b, "%d,900\n", 1001+2*i)
				}
				return b.String()
			}())
		}, code: 1, want: []string{"s_0480.csv: axis point 1 is 1001", "s_0000.csv it is 1000", "--resample"}},
		{name: "folder file that is a peak list", args: []string{"--data", F, "--times-from-name"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			writeFile(t, filepath.Join(w, "scans", "s_0480.csv"), "peak,height\n1004,0.31\n1010,0.12\n1016,0.45\n")
		}, code: 1, want: []string{"s_0480.csv: has 3 points where", "looks like a peak list", "--drop s_0480.csv", "--resample"}},
		// Notes saved beside the exports (common practice): said to be no spectrum, with --drop as a fix.
		{name: "folder with a notes file", args: []string{"--data", F, "--times-from-name"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			writeFile(t, filepath.Join(w, "scans", "notes.txt"), "Operator: AB\nCrystal cleaned with IPA\n")
		}, code: 1, want: []string{"notes.txt: is not a spectrum", "move it out of the folder or give --drop notes.txt"}},
		{name: "JCAMP-DX folder with a README", args: []string{"--data", "W/jdx"}, setup: func(t *testing.T, w string) {
			os.Mkdir(filepath.Join(w, "jdx"), 0o755)
			for i, d := range []string{"2019/07/29 13:20:49", "2019/07/29 13:21:49", "2019/07/29 13:22:49"} {
				writeFile(t, filepath.Join(w, "jdx", fmt.Sprintf("s%d.jdx", i)), "##TITLE=s\n##JCAMP-DX=4.24\n##LONGDATE="+d+"\n##XUNITS=1/CM\n##YUNITS=ABSORBANCE\n##NPOINTS=3\n##XYPOINTS=(XY..XY)\n1000,0.1\n1001,0.2\n1002,0.3\n##END=\n")
			}
			writeFile(t, filepath.Join(w, "jdx", "README.txt"), "exported spectra\n")
		}, code: 2, want: []string{"README.txt is not JCAMP-DX", "headers of the other 3 files", "--drop README.txt"}},
		{name: "folder file with a single peak", args: []string{"--data", F, "--times-from-name"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			writeFile(t, filepath.Join(w, "scans", "s_0480.csv"), "peak,height\n1004,0.31\n")
		}, code: 1, want: []string{"s_0480.csv: has only 1 axis point", "peak list"}},
		{name: "folder file with other columns", args: []string{"--data", F, "--times-from-name"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			writeFile(t, filepath.Join(w, "scans", "s_0480.csv"), "wavenumber,intensity,sd\n1000,900,3\n1002,901,3\n")
		}, code: 1, want: []string{"s_0480.csv:2: row has 3 columns", "exactly two columns"}},
		{name: "binary file in a folder", args: []string{"--data", F, "--times-from-name"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			b, _ := os.ReadFile(filepath.Join(badDir, "bad_binary.csv"))
			os.WriteFile(filepath.Join(w, "scans", "s_0480.dat"), b, 0o644)
		}, code: 1, want: []string{"s_0480.dat: is a binary file", "text export"}},
		{name: "unreadable file (dangling link)", args: []string{"--data", F, "--times-from-name"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			if err := os.Symlink(filepath.Join(w, "gone.csv"), filepath.Join(w, "scans", "s_0480.csv")); err != nil {
				t.Skip("no symbolic links here:", err)
			}
		}, code: 1, want: []string{"s_0480.csv: cannot read: no such file or directory", "check the path"}},
		{name: "unreadable file (permissions)", skip: func() string {
			if isRoot() {
				return "running as root: permissions do not stop reading"
			}
			return ""
		}, args: []string{"--data", F, "--times-from-name"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			p := filepath.Join(w, "scans", "s_0060.csv")
			os.Chmod(p, 0)
			t.Cleanup(func() { os.Chmod(p, 0o644) })
		}, code: 1, want: []string{"s_0060.csv: cannot read: permission denied", "permissions"}},
		{name: "times table missing a file", args: []string{"--data", F, "--times", "W/times.csv"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			writeFile(t, filepath.Join(w, "times.csv"), timesTable(allTimes()[:7]...))
		}, code: 1, want: []string{"times.csv: has no time for", "s_0420.csv", "add a row for it"}},
		{name: "times table naming an absent file", args: []string{"--data", F, "--times", "W/times.csv"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			writeFile(t, filepath.Join(w, "times.csv"), timesTable(append(allTimes(), "s_0480.csv,480")...))
		}, code: 1, want: []string{"times.csv: names s_0480.csv, which is not a spectrum file", "remove the row"}},
		{name: "times table with a duplicated time", args: []string{"--data", F, "--times", "W/times.csv"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			r := allTimes()
			r[3] = "s_0180.csv,120"
			writeFile(t, filepath.Join(w, "times.csv"), timesTable(r...))
		}, code: 1, want: []string{"times.csv:5:", `"s_0180.csv" has the same time 120 s as "s_0120.csv"`, "its own time"}},
		{name: "times table listing a file twice", args: []string{"--data", F, "--times", "W/times.csv"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			writeFile(t, filepath.Join(w, "times.csv"), timesTable(append(allTimes(), "s_0060.csv,61")...))
		}, code: 1, want: []string{"times.csv:10:", `file "s_0060.csv" is listed twice`, "list each file once"}},
		{name: "times table with a non-numeric time", args: []string{"--data", F, "--times", "W/times.csv"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			r := allTimes()
			r[1] = "s_0060.csv,1 min"
			writeFile(t, filepath.Join(w, "times.csv"), "# times of run 7\n\n"+timesTable(r...))
		}, code: 1, want: []string{"times.csv:5:", `"1 min" is not a number`, "number of seconds"}},
		{name: "times table without a time_s column", args: []string{"--data", F, "--times", "W/times.csv"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			writeFile(t, filepath.Join(w, "times.csv"), "file,seconds\ns_0000.csv,0\n")
		}, code: 1, want: []string{"times.csv:1:", `no column "time_s"`, "header row 'file,time_s'"}},
		{name: "file name without a number", args: []string{"--data", F, "--times-from-name"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			os.Rename(filepath.Join(w, "scans", "s_0060.csv"), filepath.Join(w, "scans", "start.csv"))
		}, code: 1, want: []string{"start.csv: no number in the file name", "--times FILE"}},
		{name: "two file names with one time", args: []string{"--data", F, "--times-from-name"}, setup: func(t *testing.T, w string) {
			folder(t, w)
			os.Rename(filepath.Join(w, "scans", "s_0060.csv"), filepath.Join(w, "scans", "t_60.csv"))
			os.Rename(filepath.Join(w, "scans", "s_0120.csv"), filepath.Join(w, "scans", "u_060.csv"))
		}, code: 1, want: []string{"same time 60 s as", "own time"}},

		// Options that do not fit the data, and conflicting flags (usage).
		{name: "conflicting flags --times and --times-from-name", args: []string{"--data", F, "--times", "W/t.csv", "--times-from-name"}, setup: folder, code: 2, want: []string{"--times and --times-from-name both give the times", "use one"}},
		{name: "more components than spectra", args: []string{"--data", "B/good.csv", "--components", "9"}, code: 2, want: []string{"--components 9", "8 spectra × 12 points", "at most 8"}},
		{name: "more components than the data holds", args: []string{"--data", "B/good.csv", "--components", "6"}, code: 2, want: []string{"--components 6", "ask for fewer"}},
		{name: "region that selects nothing", args: []string{"--data", "B/good.csv", "--region", "2000:2100"}, code: 2, want: []string{"--region 2000:2100: the regions select no axis point", "1000–1022"}},
		{name: "exclude that leaves nothing", args: []string{"--data", "B/good.csv", "--region", "1000:1010", "--exclude", "990:1015"}, code: 2, want: []string{"--exclude 990:1015: the regions select no axis point"}},
		{name: "exclusion of everything", args: []string{"--data", "B/good.csv", "--exclude", "900:1100"}, code: 2, want: []string{"select no axis point"}},
		{name: "closure on rows that are all zero", args: []string{"--data", "B/bad_closure_zero_rows.csv", "--kind", "absorbance", "--components", "1"}, code: 2, want: []string{"--closure 1", "spectrum at 0 s", "bad_closure_zero_rows.csv", "--closure off"}},
		{name: "reference mean over more spectra than there are", args: []string{"--data", "B/good.csv", "--reference", "mean:20"}, code: 2, want: []string{"--reference mean:20", "only 8 spectra", "average at most 8"}},
		{name: "pre-reaction count too large", args: []string{"--data", "B/good.csv", "--pre", "8"}, code: 2, want: []string{"--pre 8", "only 8 spectra"}},
		{name: "bad --kind value", args: []string{"--data", "B/good.csv", "--kind", "reflectance"}, code: 2, want: []string{`"reflectance"`, "use single-beam, absorbance, transmittance or difference"}},
		// The option and the value named once, not in pflag's "invalid argument … for … flag" wrapper.
		{name: "bad --time-unit value", args: []string{"--data", "B/good.csv", "--time-unit", "days"}, code: 2, want: []string{`resolve: --time-unit "days": use auto, s, min or h; see`}},
		{name: "misspelt flag", args: []string{"--data", "B/good.csv", "--blnk", "B/blank_good.csv"}, code: 2, want: []string{"unknown flag: --blnk", "did you mean --blank?"}},
		{name: "bad region syntax", args: []string{"--data", "B/good.csv", "--region", "1000-1010"}, code: 2, want: []string{`"1000-1010"`, "LO:HI"}},
		{name: "initial profiles with a zero column", args: []string{"--data", "B/good.csv", "--components", "2", "--init", "B/bad_init_zero_column.csv"}, code: 1, want: []string{"bad_init_zero_column.csv: profile column 3", "zero at every time", "one component fewer"}},
		{name: "initial profiles with too many columns", args: []string{"--data", "B/good.csv", "--components", "2", "--init", "B/bad_init_three_columns.csv"}, code: 2, want: []string{"bad_init_three_columns.csv", "3 profile columns", "--components 3"}},

		// Where the results go.
		{name: "output folder not writable", args: []string{"--data", "B/good.csv", "--out", "W/ro/out"}, setup: func(t *testing.T, w string) {
			ro := filepath.Join(w, "ro")
			if isRoot() {
				// Root writes anywhere a permission allows; /proc refuses
				// new files to everyone.
				t.Skip("running as root: covered by the /proc case")
			}
			os.Mkdir(ro, 0o555)
			t.Cleanup(func() { os.Chmod(ro, 0o755) })
		}, code: 1, want: []string{"ro/out: cannot write in", "choose a writable --out"}},
		{name: "output folder where nobody may write", args: []string{"--data", "B/good.csv", "--out", "/proc/bandsolve-test-out"}, skip: func() string {
			if st, err := os.Stat("/proc/self"); err != nil || !st.IsDir() {
				return "no /proc"
			}
			return ""
		}, code: 1, want: []string{"/proc/bandsolve-test-out: cannot write in /proc", "choose a writable --out"}},
		{name: "output path is a file", args: []string{"--data", "B/good.csv", "--out", "W/out.txt"}, setup: func(t *testing.T, w string) { writeFile(t, filepath.Join(w, "out.txt"), "keep me\n") }, code: 1, want: []string{"out.txt: is a file, not a folder", "choose another --out"}},
		{name: "output path under a file", args: []string{"--data", "B/good.csv", "--out", "W/out.txt/results"}, setup: func(t *testing.T, w string) { writeFile(t, filepath.Join(w, "out.txt"), "keep me\n") }, code: 1, want: []string{"out.txt/results: part of the path is a file", "choose another --out"}},
		{name: "output folder holds earlier results", args: []string{"--data", "B/good.csv", "--out", "W/old"}, setup: func(t *testing.T, w string) {
			os.Mkdir(filepath.Join(w, "old"), 0o755)
			writeFile(t, filepath.Join(w, "old", "summary.json"), "{}\n")
			writeFile(t, filepath.Join(w, "old", "manifest.json"), `{"tool": "bandsolve", "files": ["summary.json", "manifest.json"]}`)
		}, code: 1, want: []string{"old: output folder holds earlier results", "add --force"}},
		{name: "output folder holds the user's files", args: []string{"--data", "B/good.csv", "--out", "W/notmine"}, setup: func(t *testing.T, w string) {
			os.Mkdir(filepath.Join(w, "notmine"), 0o755)
			writeFile(t, filepath.Join(w, "notmine", "keep.txt"), "")
		}, code: 1, want: []string{"notmine: holds files bandsolve did not write", "with or without --force: choose another --out"}},
		// --force replaces only what bandsolve made, never through a link,
		// never a folder holding an input, never . or .. — refused before
		// any input is read (the missing data below is never reached).
		{name: "force on a folder bandsolve did not make", args: []string{"--data", "W/missing.csv", "--out", "W/thesis", "--force"}, setup: func(t *testing.T, w string) {
			os.Mkdir(filepath.Join(w, "thesis"), 0o755)
			writeFile(t, filepath.Join(w, "thesis", "chapter1.tex"), "keep me\n")
		}, code: 1, want: []string{"thesis: holds files bandsolve did not write", "never replaces, with or without --force"}},
		{name: "force through a symbolic link", args: []string{"--data", "W/missing.csv", "--out", "W/link", "--force"}, setup: func(t *testing.T, w string) {
			os.Mkdir(filepath.Join(w, "real"), 0o755)
			writeFile(t, filepath.Join(w, "real", "manifest.json"), `{"tool": "bandsolve"}`)
			if err := os.Symlink(filepath.Join(w, "real"), filepath.Join(w, "link")); err != nil {
				t.Skip("no symbolic links")
			}
		}, code: 1, want: []string{"link: is a symbolic link", "never writes through a link"}},
		{name: "force on a folder holding the run's input", args: []string{"--data", "W/d/series.csv", "--out", "W/d", "--force"}, setup: func(t *testing.T, w string) {
			os.Mkdir(filepath.Join(w, "d"), 0o755)
			writeFile(t, filepath.Join(w, "d", "manifest.json"), `{"tool": "bandsolve", "files": ["series.csv", "manifest.json"]}`)
			b, _ := os.ReadFile(filepath.Join(badDir, "good.csv"))
			writeFile(t, filepath.Join(w, "d", "series.csv"), string(b))
		}, code: 1, want: []string{"d: holds", "series.csv, an input of this run", "choose another --out"}},
		{name: "output folder . (the working folder)", args: []string{"--data", "W/missing.csv", "--out", ".", "--force"}, code: 1, want: []string{".: is the working folder or a folder above it", "give a new folder"}},
		{name: "output folder ..", args: []string{"--data", "W/missing.csv", "--out", ".."}, code: 1, want: []string{"..: is the working folder or a folder above it"}},
	}
}

func hasCommand(name string) bool {
	for _, c := range commands {
		if c.name == name {
			return true
		}
	}
	return false
}

// goIdentifier matches a CamelCase word (PreRows, MaxRank, ReferenceRow).
var goIdentifier = regexp.MustCompile(`\b[A-Z][a-z]+[A-Z][a-z]+[A-Za-z]*\b`)

var oneLineRe = regexp.MustCompile(`^bandsolve resolve: [^\n]+\n$`)

func TestBadInputTable(t *testing.T) {
	cases := badCases()
	if len(cases) < 30 {
		t.Fatalf("the table has %d bad inputs; docs/errors.md promises at least 30", len(cases))
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if c.skip != nil {
				if why := c.skip(); why != "" {
					t.Skip(why)
				}
			}
			w := t.TempDir()
			if c.setup != nil {
				c.setup(t, w)
			}
			cmd := c.cmd
			if cmd == "" {
				cmd = "resolve"
			}
			if !hasCommand(cmd) {
				t.Skipf("no %q command in this build", cmd)
			}
			args := append([]string{cmd}, expand(c.args, w)...)
			out := filepath.Join(w, "out")
			hasOut := false
			for i, a := range args {
				if a == "--out" && i+1 < len(args) {
					out, hasOut = args[i+1], true
				}
			}
			if !hasOut {
				args = append(args, "--out", out)
			}
			args = append(args, "--quiet")
			before := hashTree(t, badDir, "")
			beforeW := hashTree(t, w, out)
			outBefore := hashTree(t, out, "")
			_, outErr := os.Lstat(out)
			r := run(args...)
			if r.panicked != nil {
				t.Fatalf("panic: %v", r.panicked)
			}
			if r.code != c.code {
				t.Errorf("exit code %d, want %d (stderr %q)", r.code, c.code, r.stderr)
			}
			if !regexp.MustCompile(`^bandsolve ` + cmd + `: [^\n]+\n$`).MatchString(r.stderr) {
				t.Errorf("stderr is not exactly one 'bandsolve %s: …' line: %q", cmd, r.stderr)
			}
			// Messages name flags and files, never a Go identifier of the
			// code (MaxRank, PreRows: issue 16).
			if id := goIdentifier.FindString(strings.ReplaceAll(r.stderr, w, "W")); id != "" {
				t.Errorf("message names %q, a name inside the program: %q", id, r.stderr)
			}
			for _, s := range c.want {
				if !strings.Contains(r.stderr, s) {
					t.Errorf("stderr %q lacks %q", r.stderr, s)
				}
			}
			if r.stdout != "" {
				t.Errorf("stdout should be empty on error, got %q", r.stdout)
			}
			// No results written: the output folder is as it was.
			if os.IsNotExist(outErr) {
				if _, err := os.Lstat(out); err == nil {
					t.Errorf("results written to %s", out)
				}
			} else {
				sameHashes(t, "earlier output", outBefore, hashTree(t, out, ""))
				if after := hashTree(t, out, ""); len(after) != len(outBefore) {
					t.Errorf("output folder %s gained or lost files", out)
				}
			}
			if l := leftovers(out); len(l) > 0 {
				t.Errorf("staging left behind: %v", l)
			}
			sameHashes(t, "testdata/bad", before, hashTree(t, badDir, ""))
			sameHashes(t, "case folder", beforeW, hashTree(t, w, out))
		})
	}
}

// runOK runs a command that must succeed, then checks every file it wrote
// for non-numbers (see checkNoNonFinite).
func runOK(t *testing.T, args ...string) runResult {
	t.Helper()
	r := run(args...)
	if r.panicked != nil {
		t.Fatalf("panic: %v", r.panicked)
	}
	if r.code != 0 {
		t.Fatalf("%v: exit code %d, stderr %q", args, r.code, r.stderr)
	}
	for i, a := range args {
		if a == "--out" && i+1 < len(args) {
			checkNoNonFinite(t, args[i+1])
		}
	}
	return r
}

var nonFiniteRe = regexp.MustCompile(`(?i)(^|[^a-z])(nan|[+-]?inf(inity)?)([^a-z]|$)`)

var textNonFiniteRe = regexp.MustCompile(`(^|[^A-Za-z.])(NaN|[+-]?Inf|[+-]?Infinity)([^A-Za-z.]|$)`)

// coreCSV are result files whose every cell is a number or a name: an empty
// cell there is how output.Float writes a non-number, so it counts as one.
var coreCSV = map[string]bool{"spectra.csv": true, "profiles.csv": true, "singular_values.csv": true, "iterations.csv": true}

// checkNoNonFinite fails if any file under dir holds NaN or ±Inf: as a CSV
// cell, a JSON value or a word of text (the HTML report, records).
func checkNoNonFinite(t *testing.T, dir string) {
	t.Helper()
	n := 0
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || !d.Type().IsRegular() {
			return nil
		}
		n++
		b, err := os.ReadFile(p)
		if err != nil {
			t.Errorf("%s: %v", p, err)
			return nil
		}
		base := filepath.Base(p)
		switch {
		case strings.HasSuffix(base, ".csv"):
			for ln, l := range strings.Split(strings.TrimRight(string(b), "\n"), "\n") {
				for ci, c := range strings.Split(l, ",") {
					c = strings.Trim(c, `" `)
					if nonFiniteRe.MatchString(c) && !strings.ContainsAny(c, " _") {
						t.Errorf("%s:%d: cell %d is %q", p, ln+1, ci+1, c)
					}
					if c == "" && coreCSV[base] {
						t.Errorf("%s:%d: cell %d is empty (a non-number written as blank)", p, ln+1, ci+1)
					}
				}
			}
		case strings.HasSuffix(base, ".png"):
			// Compressed pixels: any three bytes can spell NaN. The same
			// figures' SVG text is checked below.
		case strings.HasSuffix(base, ".json"):
			var v any
			if err := json.Unmarshal(b, &v); err != nil {
				t.Errorf("%s: not valid JSON (a NaN would make it so): %v", p, err)
			}
			checkJSONStrings(t, p, v)
		default:
			// "Inf." is left out: citations abbreviate "Information".
			for _, m := range textNonFiniteRe.FindAllString(string(b), 3) {
				t.Errorf("%s: holds %q", p, m)
			}
		}
		return nil
	})
	if n == 0 {
		t.Errorf("%s: no output files to check", dir)
	}
}

// checkJSONStrings catches numbers smuggled into JSON as "NaN" strings.
func checkJSONStrings(t *testing.T, p string, v any) {
	switch x := v.(type) {
	case string:
		if s := strings.TrimSpace(strings.ToLower(x)); s == "nan" || s == "inf" || s == "+inf" || s == "-inf" {
			t.Errorf("%s: value %q", p, x)
		}
	case []any:
		for _, e := range x {
			checkJSONStrings(t, p, e)
		}
	case map[string]any:
		for _, e := range x {
			checkJSONStrings(t, p, e)
		}
	}
}
