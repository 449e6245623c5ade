package main

import (
	"errors"
	"fmt"
	"os"
	"os/signal"
	"path/filepath"
	"strings"
	"syscall"
	"text/tabwriter"

	"github.com/bandsolve/bandsolve/io/cmdfile"
	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/pipeline"
	"github.com/spf13/pflag"
)

// exitInterrupted follows the shell convention 128 + SIGINT.
const exitInterrupted = 130

// Registered in a variable initializer: those run before main.go's init
// reads extraCommands.
var _ = func() bool {
	extraCommands = append(extraCommands,
		command{"run", "analyses from command files", runHelp, runRun},
		command{"verify", "rerun an output folder's record and prove byte identity", verifyHelp, runVerify})
	return true
}()

func init() {
	// An interrupted run removes its staging folder, so the output folder
	// keeps its earlier results and no half-written file remains.
	ch := make(chan os.Signal, 1)
	signal.Notify(ch, os.Interrupt, syscall.SIGTERM)
	go func() {
		sig := <-ch
		output.Interrupt()
		fmt.Fprintf(os.Stderr, "\nbandsolve: %v: stopped; earlier results are untouched and no partial results were left\n", sig)
		os.Exit(exitInterrupted)
	}()
}

const runHelp = `Usage: bandsolve run FILE… [flags]

Runs the analysis each command file describes. A command file is plain
text, one 'keyword value' per line, keywords named as resolve's flags
without the dashes, '#' for comments; relative paths are taken from the
file's folder (docs/command-files.md has the full syntax). Flags given here
override the file's settings. Every output folder receives as-run.bsr, a
complete command file of the run, which 'bandsolve run' accepts as it is.

Several files (or a quoted glob such as 'runs/*.bsr') run one after the
other, each on its own: a failure does not stop the others, a table at the
end lists each outcome, and the exit status is non-zero if any failed. With
--out DIR and several files, each writes to DIR/NAME (NAME = the file's name
without .bsr). Without --out, results go to the file's 'out' setting, else
to NAME-results beside the file. In a file, 'out' must name a folder inside
the file's folder.

Example (exp1.bsr):

  # ketene acetal hydrolysis, run 1
  data     scans/
  times    scans/times.csv
  kind     single-beam
  blank    blank.csv
  pre      3
  model    A -> B -> C
  out      results

  bandsolve run exp1.bsr
  bandsolve run 'runs/*.bsr' --out batch/ --replicates 50

Flags:
`

// outcome is one row of the batch table.
type outcome struct {
	file, out, status, detail string
	code                      int
}

func runRun(args []string, st pipeline.Streams) int {
	flags := pipeline.NewSettings()
	fs := newFlagSet("run", runHelp, st)
	settingsFlags(fs, flags)
	if ok, code := parse(fs, args, runHelp, st); !ok {
		return code
	}
	if fs.NArg() == 0 {
		fmt.Fprintf(st.Err, "bandsolve run: give one or more command files, e.g. bandsolve run exp1.bsr; see bandsolve run --help\n")
		return exitUsage
	}
	changed := map[string]bool{}
	fs.Visit(func(f *pflag.Flag) { changed[f.Name] = true })
	var files []string
	var results []outcome
	for _, a := range fs.Args() {
		if _, err := os.Stat(a); err != nil && strings.ContainsAny(a, "*?[") {
			m, gerr := filepath.Glob(a)
			if gerr != nil || len(m) == 0 {
				results = append(results, outcome{file: a, status: "failed", detail: "no file matches this pattern", code: exitUsage})
				continue
			}
			files = append(files, m...)
			continue
		}
		files = append(files, a)
	}
	batch := len(files)+len(results) > 1
	outs := map[string]int{}
	for i, f := range files {
		if batch && !flags.Quiet && !flags.JSON {
			if i > 0 {
				fmt.Fprintln(st.Out)
			}
			fmt.Fprintf(st.Out, "== %s\n", f)
		}
		o := runOne(f, flags, changed, batch, outs, st)
		if o.code != exitOK && !batch {
			fmt.Fprintf(st.Err, "bandsolve run: %s\n", oneLine(o.detail))
		}
		results = append(results, o)
	}
	code := exitOK
	failed := 0
	for _, o := range results {
		if o.code != exitOK {
			failed++
			if code == exitOK || !batch {
				code = o.code
			}
		}
	}
	if !batch {
		return code
	}
	w := st.Out
	if flags.JSON {
		w = st.Err
	}
	if flags.Quiet && failed == 0 {
		return exitOK
	}
	fmt.Fprintf(w, "\n%d command file(s): %d ok, %d failed\n", len(results), len(results)-failed, failed)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "file\tstatus\toutput\tdetail")
	for _, o := range results {
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\n", o.file, o.status, orDash(o.out), oneLine(o.detail))
	}
	tw.Flush()
	if failed > 0 {
		return exitRun
	}
	return exitOK
}

func orDash(s string) string {
	if s == "" {
		return "-"
	}
	return s
}

// runOne runs one command file; a panic is caught so that one broken run
// cannot take the rest of a batch with it.
func runOne(file string, flags *pipeline.Settings, changed map[string]bool, batch bool, outs map[string]int, st pipeline.Streams) (o outcome) {
	o = outcome{file: file}
	defer func() {
		if p := recover(); p != nil {
			o.status, o.code = "failed", exitRun
			o.detail = fmt.Sprintf("internal error: %v (please report it with this command file)", p)
		}
	}()
	s, err := settingsFor(file, flags, changed, batch, outs)
	if err != nil {
		return fail(o, err)
	}
	o.out = s.Path(s.Out)
	r, err := pipeline.Execute(s, st)
	if err != nil {
		return fail(o, err)
	}
	o.status = "ok"
	o.detail = fmt.Sprintf("%d component(s), %s mode", r.Components, r.Mode)
	if r.ALS != nil {
		o.detail += fmt.Sprintf(", lack of fit %.4g %%", r.LackOfFit)
	}
	return o
}

func fail(o outcome, err error) outcome {
	o.status, o.detail, o.code = "failed", err.Error(), exitRun
	var ue *pipeline.UsageError
	var ce *cmdfile.Error
	if errors.As(err, &ue) || errors.As(err, &ce) {
		o.code = exitUsage
	}
	return o
}

// settingsFor reads a command file and lays the command line over it.
func settingsFor(file string, flags *pipeline.Settings, changed map[string]bool, batch bool, outs map[string]int) (*pipeline.Settings, error) {
	s := pipeline.NewSettings()
	if _, err := pipeline.LoadCommandFile(file, s, changed); err != nil {
		return nil, err
	}
	dir, err := filepath.Abs(s.Dir)
	if err != nil {
		return nil, err
	}
	for _, o := range pipeline.Options() {
		if !changed[o.Name] || o.Name == "out" {
			continue
		}
		for _, v := range flags.Get(o.Name) {
			// A path on the command line is relative to the working
			// folder; the record keeps it relative to the file's.
			if pipeline.IsPath(o.Name, v) && !filepath.IsAbs(v) {
				if abs, err := filepath.Abs(v); err == nil {
					if rel, err := filepath.Rel(dir, abs); err == nil {
						v = rel
					} else {
						v = abs
					}
				}
			}
			if err := s.Set(o.Name, v); err != nil {
				return nil, &pipeline.UsageError{Msg: "--" + err.Error()}
			}
		}
	}
	fileDir := filepath.Dir(file)
	stem := strings.TrimSuffix(filepath.Base(file), filepath.Ext(file))
	switch {
	case changed["out"] && batch:
		name := stem
		if n := outs[stem]; n > 0 {
			name = fmt.Sprintf("%s-%d", stem, n+1)
		}
		outs[stem]++
		s.Out, err = filepath.Abs(filepath.Join(flags.Out, name))
	case changed["out"]:
		s.Out, err = filepath.Abs(flags.Out)
	case s.Out != "":
		if err := cmdfile.Inside(fileDir, s.Path(s.Out)); err != nil {
			return nil, &pipeline.UsageError{Msg: file + ": " + err.Error()}
		}
	default:
		s.Out, err = filepath.Abs(filepath.Join(fileDir, stem+"-results"))
	}
	if err != nil {
		return nil, err
	}
	if changed["out"] && batch {
		if err := os.MkdirAll(flags.Out, 0o755); err != nil {
			return nil, fmt.Errorf("--out %s: %w", flags.Out, err)
		}
	}
	return s, nil
}
