package pipeline

import (
	"bytes"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"testing"

	"github.com/bandsolve/bandsolve/io/demo"
	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/report"
	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
)

// sameAsFromFiles checks that the folder out holds the report and figure
// files its own files give (report.BuildDir and report.FigureFiles, which
// draw everything from the folder alone: the reference), and maps.csv as
// formatMaps makes it from the result in one pass.
func sameAsFromFiles(t *testing.T, r *Result, out string) {
	t.Helper()
	written, err := os.ReadFile(filepath.Join(out, "report.html"))
	if err != nil {
		t.Fatal(err)
	}
	if rebuilt, err := report.BuildDir(out); err != nil || !bytes.Equal(written, rebuilt) {
		t.Fatalf("report.html differs from the one its folder gives (%v)", err)
	}
	f, err := report.Load(out)
	if err != nil {
		t.Fatal(err)
	}
	files, _ := report.FigureFiles(f)
	for name, b := range files {
		if got, err := os.ReadFile(filepath.Join(out, name)); err != nil || !bytes.Equal(got, b) {
			t.Errorf("%s differs from the one its folder gives (%v)", name, err)
		}
	}
	// and no other figure file (one written ahead and not taken).
	ents, _ := os.ReadDir(filepath.Join(out, "figures"))
	for _, e := range ents {
		if files["figures/"+e.Name()] == nil {
			t.Errorf("figures/%s is not a figure its folder gives", e.Name())
		}
	}
	maps, err := os.ReadFile(filepath.Join(out, report.MapsFile))
	if err != nil || !bytes.Equal(maps, formatMaps(r).csv) {
		t.Errorf("maps.csv differs from formatMaps' (%v)", err)
	}
	if r.EFA != nil {
		efa, err := os.ReadFile(filepath.Join(out, "efa.csv"))
		if err != nil || !bytes.Equal(efa, efaTable(r.EFA, r.Times, r.ExpOfRow, len(r.Experiments) > 1).CSV()) {
			t.Errorf("efa.csv differs from efaTable's (%v)", err)
		}
	}
}

// The figures a run draws ahead are the ones its folder gives: on the
// demo (no baseline, nothing set aside) every figure is taken from those
// drawn ahead (the spectra and profiles, which wait for the uniqueness
// ranges, drawn beside the writers), maps.csv is joined from the parts
// formatted ahead, efa.csv is the one formatted ahead and uniqueness.csv is
// joined from its row blocks formatted as the ranges were found.
func TestFiguresDrawnAheadOnTheDemo(t *testing.T) {
	out := filepath.Join(t.TempDir(), "demo")
	r, err := Demo(out, false, true, false, Streams{Out: io.Discard, Err: io.Discard})
	if err != nil {
		t.Fatal(err)
	}
	sameAsFromFiles(t, r, out)
	want := []string{"fig-absorbance", "fig-input", "fig-map", "fig-singular", "fig-efa", "fig-spectra", "fig-profiles",
		"fig-iterations", "fig-residual-map", "fig-residual-spectrum"}
	if got := r.ahead.pre.Taken(); !slices.Equal(got, want) {
		t.Errorf("taken ahead %v, want %v", got, want)
	}
	if _, ok := r.ahead.mapsFile(r); !ok {
		t.Error("maps.csv was not joined from the parts formatted ahead")
	}
	if _, ok := r.ahead.efaFile(r); !ok {
		t.Error("efa.csv was not the one formatted ahead")
	}
	// uniqueness.csv joined from the blocks formatted as the ranges were
	// found, the file bandsCSV makes in one piece.
	if f, ok := r.ahead.bandBlocks().join(r, true); !ok || f.table == nil || !bytes.Equal(f.csv, bandsCSV(r)) {
		t.Errorf("uniqueness.csv was not joined from the blocks formatted as the ranges were found (joined: %v)", ok)
	}
	if b, err := os.ReadFile(filepath.Join(out, "uniqueness.csv")); err != nil || !bytes.Equal(b, bandsCSV(r)) {
		t.Errorf("uniqueness.csv differs from bandsCSV's (%v)", err)
	}
}

// On the real urethane series (source in realdata_test.go) a polynomial
// baseline is subtracted from the data after their map was copied: the
// absorbance figure and maps.csv are made again from the final data, the
// difference spectra's figures are taken, and the folder is the one its
// files give all the same.
func TestFiguresDrawnAheadRedrawnWhenTheDataChange(t *testing.T) {
	s := NewSettings()
	s.Data, s.Kind, s.TimesFromName = []string{filepath.Join(urethaneDir, "catalyst-1.00")}, "absorbance", true
	s.Bands, s.Checks = "off", "off" // not what is tested here; they only add time
	s.Out, s.Quiet = filepath.Join(t.TempDir(), "out"), true
	r, err := runForFolder(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.BaselineOrder < 0 {
		t.Fatalf("no baseline chosen: the test needs data changed after the factor analysis")
	}
	stage, err := output.NewStage(s.Out, false)
	if err != nil {
		t.Fatal(err)
	}
	if err := finish(r, stage, nil, Streams{Out: io.Discard}); err != nil {
		t.Fatal(err)
	}
	if err := stage.Commit(); err != nil {
		t.Fatal(err)
	}
	sameAsFromFiles(t, r, s.Out)
	taken := r.ahead.pre.Taken()
	if slices.Contains(taken, "fig-absorbance") {
		t.Error("the absorbance figure drawn before the baseline was subtracted was taken")
	}
	for _, id := range []string{"fig-input", "fig-map", "fig-singular", "fig-spectra", "fig-profiles", "fig-residual-map"} {
		if !slices.Contains(taken, id) {
			t.Errorf("%s was not taken (taken %v)", id, taken)
		}
	}
	if _, ok := r.ahead.mapsFile(r); ok {
		t.Error("maps.csv joined from data copied before the baseline was subtracted")
	}
}

// A task of the goroutine that draws ahead which panics does not end the
// program (the Go specification, "Handling panics": a panic not recovered
// on its own goroutine does): the goroutine drops it and the rest of its
// tasks, ends when waited for, and maps.csv and efa.csv, although formatted
// before the panic from values the run still holds, are left to their
// writers, as when nothing was drawn ahead.
func TestAheadTaskPanicLeavesTheFilesToTheWriters(t *testing.T) {
	r := &Result{Mode: mcr.Reactions, D: mat.NewDense(3, 2, []float64{1, 2, 3, 4, 5, 6}),
		Axis: []float64{1000, 1002}, Times: []float64{0, 60, 120}, ExpOfRow: []int{0, 0, 0}, EFA: &EFAReport{}}
	a := startAhead()
	a.data = snapMaps(r, dataMatrices(r))
	a.efa, a.efaTimes, a.efaExp = r.EFA, r.Times, r.ExpOfRow
	a.add(func() { a.data.format(); a.efaCSV = []byte("time\n0\n60\n120\n") })
	a.add(func() { panic("drawing failed") })
	after := false
	a.add(func() { after = true })
	a.wait()
	if !a.failed || after {
		t.Fatalf("failed %v, task after the panic run %v: want true, false", a.failed, after)
	}
	if _, ok := a.mapsFile(r); ok {
		t.Error("maps.csv joined from parts after a task panicked")
	}
	if _, ok := a.efaFile(r); ok {
		t.Error("efa.csv taken as formatted ahead after a task panicked")
	}
}

// The EFA begun beside the factor analysis (startEFA) is the one efaReport
// computes itself once the components are known (the reference:
// evolvingFactors on the run's factors), on the demo, whose noise weights
// make it EFA of the scaled factors.
func TestEFABegunEarlyIsEFAReports(t *testing.T) {
	r, err := Demo(filepath.Join(t.TempDir(), "demo"), false, true, false, Streams{Out: io.Discard, Err: io.Discard})
	if err != nil {
		t.Fatal(err)
	}
	early, ok := r.earlyEFA.get()
	if !ok || early.k != r.Components || early.err != nil {
		t.Fatalf("EFA begun early: %v, for %d components (%v); the run has %d", ok, early.k, early.err, r.Components)
	}
	r.earlyEFA = nil
	rep, err := efaReport(r)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(early.rep, rep) {
		t.Error("EFA begun early differs from efaReport's own")
	}
}

// The spectra and profiles figures are drawn from the result files' bytes
// as WriteResults wrote them (aheadResults). A file written again after
// they were drawn is the folder's, and a figure drawn from the earlier
// bytes is not taken: here spectra.csv changes in one value after the
// drawing, on the demo's data and settings. The folder is the one its own
// files give (report.BuildDir, report.FigureFiles); the spectra figure is
// drawn again and the profiles figure, whose files did not change, taken.
func TestResultFiguresRedrawnWhenTheirFilesChange(t *testing.T) {
	dir := t.TempDir()
	truth := demo.Make(1)
	for name, b := range truth.Files() {
		if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	s := NewSettings()
	s.Dir, s.Data, s.Kind, s.Blanks, s.Pre = dir, []string{"series.csv"}, "single-beam", []string{"blank.csv"}, truth.Pre
	s.Model, s.T0 = "A -> B -> C", fmt.Sprint(truth.T0)
	s.Out, s.Quiet = filepath.Join(t.TempDir(), "out"), true
	r, err := runForFolder(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	stage, err := output.NewStage(s.Out, false)
	if err != nil {
		t.Fatal(err)
	}
	// finish, with spectra.csv written again once the figures are drawn.
	r.Supplied = stage.Files()
	r.early = startEarlyFiles(r)
	defer r.early.wait()
	if err := WriteResults(r, stage); err != nil {
		t.Fatal(err)
	}
	r.ahead.aheadResults(r, stage)
	r.ahead.wait()
	if got := r.ahead.second.Drawn(); !slices.Equal(got, []string{"fig-profiles"}) {
		t.Fatalf("drawn beside the writers %v, want [fig-profiles] (and fig-spectra in pre)", got)
	}
	old, _ := stage.Written("spectra.csv")
	lines := bytes.SplitN(old, []byte("\n"), 3)
	cells := bytes.Split(lines[1], []byte(","))
	cells[1] = []byte("1000") // far above every spectrum: the figure's scale changes
	changed := bytes.Join([][]byte{lines[0], bytes.Join(cells, []byte(",")), lines[2]}, []byte("\n"))
	if err := stage.Write("spectra.csv", changed); err != nil {
		t.Fatal(err)
	}
	for _, w := range writersAfterResults() {
		if err := w(r, stage); err != nil {
			t.Fatal(err)
		}
	}
	r.ahead.wait()
	stage.DropUnlisted()
	if err := stage.Commit(); err != nil {
		t.Fatal(err)
	}
	sameAsFromFiles(t, r, s.Out)
	if b, err := os.ReadFile(filepath.Join(s.Out, "figures", "fig-spectra.svg")); err != nil || len(r.ahead.pre.SVGFile("fig-spectra")) == 0 || bytes.Equal(b, r.ahead.pre.SVGFile("fig-spectra")) {
		t.Errorf("fig-spectra.svg is the one drawn before spectra.csv changed (%v)", err)
	}
	taken := r.ahead.pre.Taken()
	if slices.Contains(taken, "fig-spectra") || !slices.Contains(taken, "fig-profiles") {
		t.Errorf("taken %v: want fig-profiles and not fig-spectra", taken)
	}
}
