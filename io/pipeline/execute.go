package pipeline

import (
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"sort"
	"strings"

	"github.com/bandsolve/bandsolve/io/cmdfile"
	"github.com/bandsolve/bandsolve/io/demo"
	"github.com/bandsolve/bandsolve/io/output"
	"gonum.org/v1/gonum/mat"
)

// Streams are where a run prints: the summary table (or JSON) and progress.
type Streams struct {
	Out, Err io.Writer
}

func (st Streams) progress(s *Settings) io.Writer {
	if s.Quiet || st.Err == nil {
		return io.Discard
	}
	return newProgress(st.Err)
}

// Execute runs one analysis and writes its output folder. The folder is
// checked before any computation so that a refused --out costs nothing.
func Execute(s *Settings, st Streams) (*Result, error) {
	r, err := execute(s, st)
	return r, shortenValues(s, err)
}

func execute(s *Settings, st Streams) (*Result, error) {
	if s.Out == "" {
		s.Out = "bandsolve-results"
	}
	if !s.Quiet && st.Err != nil {
		for _, old := range s.RenamedUsed() {
			fmt.Fprintln(st.Err, RenameNote(old))
		}
	}
	out := s.Path(s.Out)
	if err := output.Check(out, s.Force); err != nil {
		return nil, err
	}
	if err := output.Protect(out, inputPaths(s)); err != nil {
		return nil, err
	}
	log := st.progress(s)
	r, err := runForFolder(s, log)
	endProgress(log)
	if err != nil {
		return nil, err
	}
	stage, err := output.NewStage(out, s.Force)
	if err != nil {
		return nil, err
	}
	if err := finish(r, stage, nil, st); err != nil {
		stage.Abort()
		return nil, err
	}
	// Printing comes after the commit: a closed stdout (| head -1) or a
	// signal while printing can no longer lose the results.
	if err := stage.Commit(); err != nil {
		return nil, err
	}
	printSummary(r, st)
	if r.KineticsErr != nil {
		// The resolution stands on its own: it is written, and the run
		// still fails so that scripts see the kinetics were not done.
		return r, kineticsNotDone(r.KineticsErr, s.Out)
	}
	return r, nil
}

// causeText is a kinetics error's text without the "kinetics: " each layer that wrapped it
// put in front (it read "kinetics: kinetics: auto map: … kinetics: fit profiles: …"): the
// message it goes into already says it is about the kinetics.
func causeText(err error) string {
	return strings.ReplaceAll(err.Error(), "kinetics: ", "")
}

// kineticsNotDone keeps the kind of the cause (a usage error exits 2).
func kineticsNotDone(err error, out string) error {
	msg := fmt.Sprintf("kinetics not done (the resolution is written to %s): %s", out, causeText(err))
	var ue *UsageError
	if errors.As(err, &ue) {
		return &UsageError{Msg: msg}
	}
	return errors.New(msg)
}

// inputPaths lists every file or folder the settings name for reading.
func inputPaths(s *Settings) []string {
	var in []string
	for _, o := range Options() {
		if keyword(o).Path != cmdfile.ReadPath {
			continue
		}
		for _, v := range s.Get(o.Name) {
			if IsPath(o.Name, v) {
				in = append(in, s.Path(v))
			}
		}
	}
	for _, f := range knownSpectrumFiles(s) {
		in = append(in, s.Path(f))
	}
	return in
}

// Extra writes files of its own into the stage before the results.
type Extra func(stage *output.Stage) error

func finish(r *Result, stage *output.Stage, extra Extra, st Streams) error {
	r.Supplied = stage.Files()
	if extra != nil {
		if err := extra(stage); err != nil {
			return err
		}
	}
	// The manifest's hashes of the data files read every byte of them
	// again: begun by runForFolder when the data were read, else now, to
	// run while the result files are written.
	if r.inputSums == nil {
		r.inputSums = startInputSums(dataFiles(r))
	}
	defer r.inputSums.wait()
	r.early = startEarlyFiles(r)
	defer r.early.wait()
	if err := WriteResults(r, stage); err != nil {
		return err
	}
	// The spectra and profiles figures are drawn from now on, beside the
	// writers that follow (ahead.go).
	r.ahead.aheadResults(r, stage)
	defer r.ahead.wait()
	for _, write := range writersAfterResults() {
		if err := write(r, stage); err != nil {
			return err
		}
	}
	// A figure file written ahead that the report did not take is not
	// left in the folder.
	r.ahead.wait()
	stage.DropUnlisted()
	if err := writeFileList(r, stage); err != nil {
		return err
	}
	if r.Settings.JSON {
		// Made now so that a summary encoding cannot fail after the commit.
		b, err := output.JSON(MakeSummary(r))
		if err != nil {
			return err
		}
		r.summaryJSON = b
	}
	return nil
}

// printSummary prints the summary table or JSON of a committed run.
// Write errors are ignored: the results are in place whatever happens to
// stdout.
func printSummary(r *Result, st Streams) {
	s := r.Settings
	switch {
	case s.JSON:
		st.Out.Write(r.summaryJSON)
	case !s.Quiet:
		// Names in the table (files set aside, warnings) are shown with
		// their control characters escaped, as in messages.
		var b strings.Builder
		PrintTable(r, &b)
		fmt.Fprintf(&b, "results        %s\n", s.Out)
		io.WriteString(st.Out, cmdfile.EscapeText(b.String()))
	}
}

// writersAfterResults are the writers that follow WriteResults, in the
// order Execute runs them, one path for every command. The report comes in
// two steps: writeMaps stages maps.csv, the downsampled matrices its
// figures need, which only the run's memory holds; writeReport, last,
// builds report.html from the staged files alone, so that it shows what
// every other writer added (the as-run record and the manifest among them)
// and `bandsolve report OUT` rebuilds the same bytes from the folder.
func writersAfterResults() []func(*Result, *output.Stage) error {
	return []func(*Result, *output.Stage) error{
		writeBandsAndIntervals, writeEFA, writeSpectraJCAMP, writeNoise, writeBaseline, writeVapour, writeLineAmounts,
		writeRecord, writeMaps,
		writeReport,
	}
}

// Demo makes the invented data set, writes it into out/input, resolves it
// exactly as `resolve` would and compares the answer with the truth.
func Demo(out string, force bool, quiet, asJSON bool, st Streams) (*Result, error) {
	if out == "" {
		out = "bandsolve-demo"
	}
	if err := output.Check(out, force); err != nil {
		return nil, err
	}
	truth := demo.Make(1)
	stage, err := output.NewStage(out, force)
	if err != nil {
		return nil, err
	}
	fail := func(err error) (*Result, error) { stage.Abort(); return nil, err }
	if err := stage.Mkdir("input"); err != nil {
		return fail(err)
	}
	files := truth.Files()
	names := make([]string, 0, len(files))
	for name := range files {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		if err := stage.Write(filepath.Join("input", name), files[name]); err != nil {
			return fail(err)
		}
	}
	s := NewSettings()
	s.Dir = stage.Dir
	s.Data = []string{"input/series.csv"}
	s.Kind = "single-beam"
	s.Blanks = []string{"input/blank.csv"}
	s.Pre = truth.Pre
	s.Out = out
	s.Quiet, s.JSON = quiet, asJSON
	// The demo also fits its true scheme, so that its rate constants can be
	// read next to the truth.
	s.Model, s.T0 = "A -> B -> C", fmt.Sprint(truth.T0)
	log := st.progress(s)
	r, err := runForFolder(s, log)
	endProgress(log)
	if err != nil {
		return fail(err)
	}
	check := compareWithTruth(r, truth)
	if err := stage.Write("demo_check.csv", check.CSV()); err != nil {
		return fail(err)
	}
	if err := finish(r, stage, nil, st); err != nil {
		return fail(err)
	}
	if err := stage.Commit(); err != nil {
		return nil, err
	}
	s.Dir = ""
	printSummary(r, st)
	if !quiet && !asJSON {
		fmt.Fprintf(st.Out, "\ndemo: invented A → B → C hydrolysis in an ATR cell (k1 = %g /s, k2 = %g /s); resolved vs truth:\n", truth.K1, truth.K2)
		for _, row := range check.Rows {
			fmt.Fprintf(st.Out, "  %-20s -> %-10s spectrum cosine %s, profile cosine %s\n", row[0], row[1], row[2], row[3])
		}
		printDemoKinetics(r, []float64{truth.K1, truth.K2}, truth.T0, st.Out)
		fmt.Fprintf(st.Out, "try: bandsolve resolve --data %s/input/series.csv --kind single-beam --blank %s/input/blank.csv --pre %d --model 'A -> B -> C' --t0 %g --out my-run\n", out, out, truth.Pre, truth.T0)
	}
	return r, nil
}

// compareWithTruth matches each true species to its best resolved component.
func compareWithTruth(r *Result, t *demo.Truth) output.Table {
	tab := output.Table{Header: []string{"species", "component", "spectrum_cosine", "profile_cosine"}}
	if r.ALS == nil {
		return tab
	}
	_, k := r.ALS.S.Dims()
	for j, name := range t.Species {
		ts := mat.Col(nil, j, t.Spectra)
		tp := mat.Col(nil, j, t.Profiles)
		best, bc := -1, -2.0
		for c := 0; c < k; c++ {
			if v := Cosine(ts, mat.Col(nil, c, r.ALS.S)); v > bc {
				best, bc = c, v
			}
		}
		pc := Cosine(tp, mat.Col(nil, best, r.ALS.C))
		tab.Rows = append(tab.Rows, []string{name, r.Names[best], fmt.Sprintf("%.5f", bc), fmt.Sprintf("%.5f", pc)})
	}
	return tab
}

// Cosine is the cosine of the angle between two vectors (1 = same shape).
func Cosine(a, b []float64) float64 {
	var ab, aa, bb float64
	for i := range a {
		ab += a[i] * b[i]
		aa += a[i] * a[i]
		bb += b[i] * b[i]
	}
	if aa == 0 || bb == 0 {
		return 0
	}
	return ab / math.Sqrt(aa*bb)
}
