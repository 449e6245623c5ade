package main

// Awkward but valid inputs are accepted and give the same numbers as the
// plain file; "no change" is an answer, not an error; numerical faults end
// in a warning or a clear message, never a NaN; earlier results survive.

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// resultFiles are compared byte for byte between a plain input and its
// awkward variants: they hold only numbers and the axis name.
var resultFiles = []string{"spectra.csv", "profiles.csv", "singular_values.csv", "rank.csv"}

func goodRun(t *testing.T) string {
	t.Helper()
	out := filepath.Join(t.TempDir(), "good")
	runOK(t, "resolve", "--quiet", "--data", filepath.Join(badDir, "good.csv"), "--out", out)
	return out
}

func sameResults(t *testing.T, want, got string) {
	t.Helper()
	for _, f := range resultFiles {
		a, err1 := os.ReadFile(filepath.Join(want, f))
		b, err2 := os.ReadFile(filepath.Join(got, f))
		if err1 != nil || err2 != nil {
			t.Errorf("%s: %v %v", f, err1, err2)
			continue
		}
		if string(a) != string(b) {
			t.Errorf("%s differs from the plain file's result", f)
		}
	}
}

func TestAwkwardButValidMatrix(t *testing.T) {
	ref := goodRun(t)
	for _, f := range []string{"ok_bom_crlf.csv", "ok_comments_blank.csv", "ok_trailing_sep.csv", "ok_semicolon.csv", "ok_tab.tsv", "ok_quoted_title.csv", "ok_decimal_comma_semicolon.csv"} {
		t.Run(f, func(t *testing.T) {
			before := hashTree(t, badDir, "")
			out := filepath.Join(t.TempDir(), "out")
			runOK(t, "resolve", "--quiet", "--data", filepath.Join(badDir, f), "--out", out)
			sameResults(t, ref, out)
			sameHashes(t, f, before, hashTree(t, badDir, ""))
		})
	}
}

func TestAwkwardButValidFolders(t *testing.T) {
	ref := goodRun(t)
	variants := []struct{ name, sep, head, eol string }{
		{"comma", ",", "wavenumber,intensity\n", "\n"},
		{"semicolon", ";", "wavenumber;intensity\n", "\n"},
		{"tab", "\t", "wavenumber\tintensity\n", "\n"},
		{"spaces", "   ", "wavenumber intensity\n", "\n"},
		{"CRLF with BOM", ",", "\ufeffwavenumber,intensity\r\n", "\r\n"},
		{"quoted title lines", ";", "\"Run 7; cell B\"\n\"Recorded 2 May\"\n\"Wavenumber (cm-1)\";\"Intensity (counts)\"\n", "\n"},
		{"comments and blank lines", ",", "# exported by hand\n\nwavenumber,intensity\n\n", "\n\n"},
		{"trailing separators", ",", "wavenumber,intensity,\n", ",\n"},
	}
	for _, v := range variants {
		t.Run(v.name, func(t *testing.T) {
			w := t.TempDir()
			writeFolder(t, filepath.Join(w, "scans"), v.sep, v.head, v.eol)
			before := hashTree(t, w, "")
			out := filepath.Join(w, "out")
			runOK(t, "resolve", "--quiet", "--data", filepath.Join(w, "scans"), "--times-from-name", "--out", out)
			sameResults(t, ref, out)
			sameHashes(t, v.name, before, hashTree(t, w, out))
		})
	}
	t.Run("times table with BOM, CRLF, comments, semicolons", func(t *testing.T) {
		w := t.TempDir()
		folder(t, w)
		var b strings.Builder
		b.WriteString("\ufeff# acquisition times\r\nfile;time_s\r\n\r\n")
		for _, r := range allTimes() {
			b.WriteString(strings.Replace(r, ",", ";", 1) + "\r\n")
		}
		writeFile(t, filepath.Join(w, "times.csv"), b.String())
		out := filepath.Join(w, "out")
		runOK(t, "resolve", "--quiet", "--data", filepath.Join(w, "scans"), "--times", filepath.Join(w, "times.csv"), "--out", out)
		sameResults(t, ref, out)
	})
}

func readSummary(t *testing.T, out string) map[string]any {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(out, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	return m
}

func joined(m map[string]any, key string) string {
	var s []string
	if l, ok := m[key].([]any); ok {
		for _, x := range l {
			s = append(s, fmt.Sprint(x))
		}
	}
	return strings.Join(s, "\n")
}

// Identical single beams: by the definition ΔA = −log10(I/I_ref), equal
// beams give ΔA = log10(1) = 0 exactly — rank 0, said in words, exit 0.
func TestNoChangeIsNotAnError(t *testing.T) {
	out := filepath.Join(t.TempDir(), "out")
	r := runOK(t, "resolve", "--data", filepath.Join(badDir, "ok_no_change.csv"), "--out", out)
	m := readSummary(t, out)
	if m["rank_estimate"] != 0.0 || m["components"] != 0.0 {
		t.Errorf("rank %v, components %v; want 0 and 0", m["rank_estimate"], m["components"])
	}
	if !strings.Contains(joined(m, "notes"), "flat line at zero absorbance") {
		t.Errorf("notes do not say 'flat line at zero absorbance': %v", m["notes"])
	}
	if !strings.Contains(r.stdout, "no change") {
		t.Errorf("the printed summary does not say 'no change':\n%s", r.stdout)
	}
}

// scaledGood writes good.csv with the single beams of channels lo..hi
// (axis values) multiplied by f: f = 1e-4 is a band that lets 0.01 % of
// the light through, as a saturated band does.
func scaledGood(t *testing.T, p string, lo, hi float64, f float64) {
	t.Helper()
	g := readGood(t)
	var b strings.Builder
	b.WriteString("wavenumber," + strings.Join(g.times, ",") + "\n")
	for i, x := range g.axis {
		var v float64
		fmt.Sscan(x, &v)
		b.WriteString(x)
		for _, c := range g.rows[i] {
			var y float64
			fmt.Sscan(c, &y)
			if v >= lo && v <= hi {
				y *= f
			}
			fmt.Fprintf(&b, ",%.9g", y)
		}
		b.WriteString("\n")
	}
	writeFile(t, p, b.String())
}

func TestSaturatedRegionWarns(t *testing.T) {
	w := t.TempDir()
	p := filepath.Join(w, "saturated.csv")
	scaledGood(t, p, 1016, 1018, 1e-4)
	out := filepath.Join(w, "out")
	runOK(t, "resolve", "--quiet", "--data", p, "--out", out)
	warn := joined(readSummary(t, out), "warnings")
	if !strings.Contains(warn, "saturated band") || !strings.Contains(warn, "--exclude 1016:1018") {
		t.Errorf("no saturation warning suggesting --exclude 1016:1018 in %q", warn)
	}
	if b, err := os.ReadFile(filepath.Join(out, "report.html")); err == nil && !strings.Contains(string(b), "1016:1018") {
		t.Errorf("report.html does not carry the saturation warning")
	}
	// Following the advice removes the warning.
	out2 := filepath.Join(w, "out2")
	runOK(t, "resolve", "--quiet", "--data", p, "--exclude", "1016:1018", "--out", out2)
	if warn := joined(readSummary(t, out2), "warnings"); strings.Contains(warn, "saturated") {
		t.Errorf("still warned after --exclude: %q", warn)
	}
}

// Two species with one spectrum are one component to the data: asking for
// two ends in a warning or a one-line message pointing at --components,
// never in NaN results.
func TestDuplicatedComponent(t *testing.T) {
	w := t.TempDir()
	p := filepath.Join(w, "dup.csv")
	// Absorbance with both species on the same band: A = (a + b)·s = s.
	g := readGood(t)
	var b strings.Builder
	b.WriteString("wavenumber," + strings.Join(g.times, ",") + "\n")
	for i, x := range g.axis {
		b.WriteString(x)
		for range g.times {
			fmt.Fprintf(&b, ",%.6f", 0.1+0.05*float64(i%5))
		}
		b.WriteString("\n")
	}
	writeFile(t, p, b.String())
	out := filepath.Join(w, "out")
	r := run("resolve", "--quiet", "--data", p, "--kind", "absorbance", "--components", "2", "--out", out)
	if r.panicked != nil {
		t.Fatalf("panic: %v", r.panicked)
	}
	switch r.code {
	case 0:
		checkNoNonFinite(t, out)
		warn := joined(readSummary(t, out), "warnings")
		if !strings.Contains(warn, "--components 1") {
			t.Errorf("no warning pointing at --components 1: %q", warn)
		}
	default:
		if !oneLineRe.MatchString(r.stderr) || !strings.Contains(r.stderr, "--components") {
			t.Errorf("exit %d without a one-line message about --components: %q", r.code, r.stderr)
		}
		if _, err := os.Stat(out); err == nil {
			t.Errorf("results written despite the error")
		}
	}
}

// Nearly identical initial profiles start ALS on a singular Gram matrix.
func TestCollinearInitialProfiles(t *testing.T) {
	w := t.TempDir()
	p := filepath.Join(w, "init.csv")
	var b strings.Builder
	b.WriteString("time,first,second\n")
	for i, s := range []int{0, 60, 120, 180, 240, 300, 360, 420} {
		fmt.Fprintf(&b, "%d,%g,%g\n", s, float64(i), float64(i)*(1+1e-12*float64(i%2)))
	}
	writeFile(t, p, b.String())
	out := filepath.Join(w, "out")
	r := run("resolve", "--quiet", "--data", filepath.Join(badDir, "good.csv"), "--components", "2", "--init", p, "--out", out)
	if r.panicked != nil {
		t.Fatalf("panic: %v", r.panicked)
	}
	if r.code == 0 {
		t.Fatalf("collinear initial profiles accepted; summary warnings %q", joined(readSummary(t, out), "warnings"))
	}
	if !oneLineRe.MatchString(r.stderr) || !strings.Contains(r.stderr, "init.csv") || !strings.Contains(r.stderr, "same shape") {
		t.Errorf("exit %d, message %q; want one line naming init.csv and 'same shape'", r.code, r.stderr)
	}
}

func TestNothingLost(t *testing.T) {
	w := t.TempDir()
	out := filepath.Join(w, "out")
	good := filepath.Join(badDir, "good.csv")
	before := hashTree(t, badDir, "")
	runOK(t, "resolve", "--quiet", "--data", good, "--out", out)
	first := hashTree(t, out, "")

	// Without --force earlier results are refused and left alone.
	r := run("resolve", "--quiet", "--data", good, "--out", out)
	if r.code != 1 || !strings.Contains(r.stderr, "--force") {
		t.Errorf("second run without --force: exit %d, %q", r.code, r.stderr)
	}
	sameHashes(t, "refused rerun", first, hashTree(t, out, ""))

	// With --force, a run that fails leaves the earlier results intact.
	r = run("resolve", "--quiet", "--force", "--data", filepath.Join(badDir, "bad_nan.csv"), "--out", out)
	if r.code != 1 {
		t.Errorf("failing forced run: exit %d, %q", r.code, r.stderr)
	}
	sameHashes(t, "failed forced run", first, hashTree(t, out, ""))
	if after := hashTree(t, out, ""); len(after) != len(first) {
		t.Errorf("failed run changed the number of result files: %d → %d", len(first), len(after))
	}

	// With --force a good run replaces them in one step: no staging or
	// set-aside folder remains.
	runOK(t, "resolve", "--quiet", "--force", "--data", filepath.Join(badDir, "ok_semicolon.csv"), "--out", out)
	ents, _ := os.ReadDir(w)
	if len(ents) != 1 {
		var names []string
		for _, e := range ents {
			names = append(names, e.Name())
		}
		t.Errorf("beside the results: %v; want only out", names)
	}
	sameHashes(t, "testdata/bad", before, hashTree(t, badDir, ""))
}

// TestDemoOutputsFinite checks every file of the demo's output folder,
// the largest run of the suite, for NaN and Inf.
func TestDemoOutputsFinite(t *testing.T) {
	if testing.Short() {
		t.Skip("the demo resolves 101 × 451 points")
	}
	out := filepath.Join(t.TempDir(), "demo")
	runOK(t, "demo", "--quiet", "--out", out)
}

// A single beam at or below zero is a point without light (an opaque band,
// a detector fault): by A = −log10(I/I₀) its absorbance is undefined, so it
// is missing, not a reason to stop (PRIMER §8; common practice). The run
// goes on and the notes name the spectrum's time and the axis point.
func TestBlindPointsDoNotStop(t *testing.T) {
	for _, c := range []struct {
		file  string
		where string // axis point in the note (from the fixture, testdata/bad/make_bad.py)
	}{
		{"bad_zero_beam.csv", "wavenumber 1008 in 1 spectra"},
		{"bad_negative_beam.csv", "wavenumber 1014 in 1 spectra"},
	} {
		out := filepath.Join(t.TempDir(), "out")
		runOK(t, "resolve", "--quiet", "--data", filepath.Join(badDir, c.file), "--kind", "single-beam", "--out", out)
		notes := joined(readSummary(t, out), "notes")
		if !strings.Contains(notes, "1 blind point(s)") || !strings.Contains(notes, c.where) {
			t.Errorf("%s: notes %q do not name the blind point at %s", c.file, notes, c.where)
		}
	}
}
