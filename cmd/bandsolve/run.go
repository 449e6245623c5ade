package main

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"sync/atomic"
	"syscall"
	"text/tabwriter"

	"github.com/bandsolve/bandsolve/io/campaign"
	"github.com/bandsolve/bandsolve/io/cmdfile"
	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/pipeline"
	"github.com/spf13/pflag"
)

// exitInterrupted follows the shell convention 128 + SIGINT.
const exitInterrupted = 130

// onInterrupt removes, on an interrupt, the --out folder a batch made
// when no run has written into it yet (campaign.Tidy).
var onInterrupt atomic.Pointer[func()]

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
	signal.Notify(ch, os.Interrupt, syscall.SIGTERM, syscall.SIGHUP)
	// A closed stdout (bandsolve … | head -1) makes writes fail with EPIPE
	// instead of killing the process: results are committed before the
	// summary is printed, and the run exits 0 whether or not it was read.
	signal.Ignore(syscall.SIGPIPE)
	go func() {
		sig := <-ch
		output.Interrupt()
		if tidy := onInterrupt.Load(); tidy != nil {
			(*tidy)() // after the stages are gone: only empty folders go
		}
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
--out DIR and several files, a pattern or --shard, each file writes to
DIR/NAME (NAME = the file's name without .bsr), however many the pattern
matches; one file named alone writes into DIR. Without --out, results go to
the file's 'out' setting, else to NAME-results beside the file. In a file,
'out' must name a folder inside the file's folder. A record rerun
(OUT/as-run.bsr) needs --out.

Example:

  # exp1.bsr: ketene acetal hydrolysis, run 1
  data     scans/
  times    times.csv
  kind     single-beam
  blank    blank.csv
  pre      3
  model    A -> B -> C
  out      results

  bandsolve run exp1.bsr
  bandsolve run 'runs/*.bsr' --out batch/ --replicates 50

Campaigns: -j N runs N command files at once (default: the number of cores;
memory adds up, so lower it for large series); each run writes the same bytes
as it would alone, and the log is printed in file order. --shard I/N runs only
a fixed share of the batch: file k (counted from 0, in the order given, a
glob sorted by name) when k mod N = I. The N shares together are the whole
batch, so a job array of a batch scheduler can split it; with Slurm
(docs/campaigns.md has the whole script):

  #SBATCH --array=0-3
  bandsolve run 'runs/*.bsr' --out batch/ -j 1 --shard "$SLURM_ARRAY_TASK_ID/4"

Adding experiments to a campaign: --skip-done skips a command file whose
output folder already holds a complete result of the same settings (its
as-run record, setting by setting) and inputs (their SHA-256 in its
manifest); the table lists it as skipped and the exit status stays 0. A
folder whose kinetics were not done (its run failed) runs again. A
folder holding anything else is an error and is kept as it is:

  bandsolve run 'runs/*.bsr' --out batch/ --skip-done

On one machine, two at a time, then one table of all:

  bandsolve run 'runs/*.bsr' --out batch/ -j 2
  bandsolve collect batch/*/ --out batch.csv

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
	jobsText := fs.StringP("jobs", "j", "", "run `N` command files at once (default: the number of cores)")
	shardText := fs.String("shard", "", "run share `I/N` only: file k (from 0) when k mod N = I")
	skipDone := fs.Bool("skip-done", false, "skip a command file whose output folder already holds a complete result of the same settings and inputs")
	if ok, code := parse(fs, args, runHelp, st); !ok {
		return code
	}
	if fs.NArg() == 0 {
		fmt.Fprintf(st.Err, "bandsolve run: give one or more command files, e.g. bandsolve run exp1.bsr; see bandsolve run --help\n")
		return exitUsage
	}
	workers, shard, err := batchShape(fs, writtenAs(args, "jobs", "j"), *jobsText, *shardText)
	if err != nil {
		fmt.Fprintf(st.Err, "bandsolve run: %s\n", oneLine(err.Error()))
		return exitUsage
	}
	changed := map[string]bool{}
	fs.Visit(func(f *pflag.Flag) { changed[f.Name] = true })
	given := campaign.Expand(fs.Args(), pipeline.CommandExt)
	files, results := given.Files, badArgs(given.Bad)
	// Batch, output folders and their names are decided over the whole
	// batch as it was given, so a file writes to the same folder whichever
	// shard or pattern runs it.
	batch := given.Batch(fs.Changed("shard"))
	if batch && changed["out"] {
		// Made for the batch below (laySettings); removed again if no
		// run wrote into it, at the end or on an interrupt.
		made := campaign.Missing(flags.Out)
		tidy := func() { campaign.Tidy(made) }
		onInterrupt.Store(&tidy)
		defer tidy()
	}
	mine := prepareShare(files, flags, changed, batch, shard)
	for _, p := range mine {
		p.skipDone = *skipDone
	}
	if len(mine) == 0 && len(files) > 0 {
		// Exit 0 (the share is done), but a job-array task must be able
		// to tell from its log that it ran nothing.
		fmt.Fprintf(st.Err, "bandsolve run: --shard %s takes none of the %d command file(s) (file k, from 0, when k mod %d = %d); nothing to run\n", shard, len(files), shard.N, shard.I)
	}
	results = append(results, runBatch(mine, workers, batch, flags, st)...)
	code, failed := batchExit(results, batch)
	if !batch {
		if len(files) == 0 && len(results) == 1 {
			// A pattern that matched nothing: no run to tell it.
			fmt.Fprintf(st.Err, "bandsolve run: %s: %s\n", oneLine(results[0].file), oneLine(results[0].detail))
		}
		return code
	}
	if flags.Quiet && failed == 0 {
		return exitOK
	}
	w := st.Out
	if flags.JSON {
		w = st.Err // standard output holds the runs' summaries as JSON
	}
	printBatchTable(w, results, failed, shard, len(files))
	if failed > 0 {
		return exitRun
	}
	return exitOK
}

// batchShape reads -j (default: the number of cores) and --shard; jobsFlag
// is -j or --jobs, as the user wrote it, for the message.
func batchShape(fs *pflag.FlagSet, jobsFlag, jobsText, shardText string) (workers int, shard campaign.Shard, err error) {
	workers, shard = runtime.NumCPU(), campaign.All
	if fs.Changed("jobs") {
		n, err := strconv.Atoi(strings.TrimSpace(jobsText))
		if err != nil || n < 1 {
			return 0, shard, fmt.Errorf("%s %q: give a whole number of command files to run at once, 1 or more", jobsFlag, jobsText)
		}
		workers = n
	}
	if fs.Changed("shard") {
		if shard, err = campaign.ParseShard(shardText); err != nil {
			return 0, shard, err
		}
	}
	return workers, shard, nil
}

// writtenAs is the flag as the last of args that gives it wrote it: --long
// or -short.
func writtenAs(args []string, long, short string) string {
	name := "-" + short
	for _, a := range args {
		switch {
		case a == "--":
			return name
		case a == "--"+long || strings.HasPrefix(a, "--"+long+"="):
			name = "--" + long
		case strings.HasPrefix(a, "-"+short):
			name = "-" + short
		}
	}
	return name
}

// badArgs are the arguments that name no command file, as failed rows of
// the batch: a folder is a usage slip (exit 2); a pattern that matches
// nothing names no file that can be read, exit 1 like a missing command
// file or --data (docs/errors.md).
func badArgs(bad []campaign.BadArg) []outcome {
	var out []outcome
	for _, b := range bad {
		o := outcome{file: b.Arg, status: "failed", detail: b.Why, code: exitRun}
		if b.Usage {
			o.code = exitUsage
		}
		out = append(out, o)
	}
	return out
}

// prepareShare reads every command file's settings, so that output folder
// names are given over the whole batch, and returns this shard's files.
func prepareShare(files []string, flags *pipeline.Settings, changed map[string]bool, batch bool, shard campaign.Shard) []*prepared {
	outs := map[string]int{}
	var mine []*prepared
	for k, f := range files {
		p := &prepared{file: f, changed: changed}
		p.s, p.cf, p.err = settingsFor(f, flags, changed, batch, outs)
		if shard.Has(k) {
			mine = append(mine, p)
		}
	}
	return mine
}

// batchExit counts the failed runs and gives the exit code: a single run's
// own, or a batch's first failure's.
func batchExit(results []outcome, batch bool) (code, failed int) {
	code = exitOK
	for _, o := range results {
		if o.code != exitOK {
			failed++
			if code == exitOK || !batch {
				code = o.code
			}
		}
	}
	return code, failed
}

// printBatchTable writes the batch's count line and one row per command file.
func printBatchTable(w io.Writer, results []outcome, failed int, shard campaign.Shard, nFiles int) {
	what := fmt.Sprintf("%d command file(s)", len(results))
	if shard.N > 1 {
		what += fmt.Sprintf(" (shard %s of %d file(s))", shard, nFiles)
	}
	skipped := 0
	for _, o := range results {
		if o.status == "skipped" {
			skipped++
		}
	}
	if skipped > 0 {
		fmt.Fprintf(w, "\n%s: %d ok, %d skipped, %d failed\n", what, len(results)-failed-skipped, skipped, failed)
	} else {
		fmt.Fprintf(w, "\n%s: %d ok, %d failed\n", what, len(results)-failed, failed)
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "file\tstatus\toutput\tdetail")
	for _, o := range results {
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\n", oneLine(o.file), o.status, oneLine(orDash(o.out)), oneLine(o.detail))
	}
	tw.Flush()
}

// prepared is one command file with its settings (or why it has none),
// and whether to skip it when its results are there (--skip-done).
type prepared struct {
	file string
	s    *pipeline.Settings
	err  error
	// cf is the file as read and changed the options the command line
	// set over it: a fault of the run is put at the file's line
	// (placeFault) only when the file set the option.
	cf       *cmdfile.File
	changed  map[string]bool
	skipDone bool
}

// runBatch runs the files on workers at once (campaign.Run). One worker
// prints as each run goes (progress included); several hold each run's
// output and print it in batch order when the runs before it are done.
func runBatch(files []*prepared, workers int, batch bool, flags *pipeline.Settings, st pipeline.Streams) []outcome {
	res := make([]outcome, len(files))
	direct := workers == 1 || len(files) == 1
	bufs := make([]struct{ out, err bytes.Buffer }, len(files))
	header := func(i int, w io.Writer) {
		if batch && !flags.Quiet && !flags.JSON {
			if i > 0 {
				fmt.Fprintln(w)
			}
			fmt.Fprintf(w, "== %s\n", files[i].file)
		}
	}
	jobs := make([]campaign.Job, len(files))
	for i, p := range files {
		if p.s != nil {
			jobs[i].Key = p.s.Path(p.s.Out)
		}
		jobs[i].Do = func() {
			rs := st
			if direct {
				header(i, st.Out)
			} else {
				rs = pipeline.Streams{Out: &bufs[i].out, Err: &bufs[i].err}
			}
			res[i] = runOne(p, rs)
		}
	}
	campaign.Run(jobs, workers, func(i int) {
		if !direct {
			header(i, st.Out)
			st.Out.Write(bufs[i].out.Bytes())
			st.Err.Write(bufs[i].err.Bytes())
		}
		if o := res[i]; o.code != exitOK && !batch {
			fmt.Fprintf(st.Err, "bandsolve run: %s\n", oneLine(o.detail))
		}
	})
	return res
}

func orDash(s string) string {
	if s == "" {
		return "-"
	}
	return s
}

// runOne runs one command file; a panic is caught so that one broken run
// cannot take the rest of a batch with it.
func runOne(p *prepared, st pipeline.Streams) (o outcome) {
	o = outcome{file: p.file}
	defer func() {
		if p := recover(); p != nil {
			o.status, o.code = "failed", exitRun
			o.detail = fmt.Sprintf("internal error: %v (please report it with this command file)", p)
		}
	}()
	if p.err != nil {
		return fail(o, p.err)
	}
	s := p.s
	o.out = s.Path(s.Out)
	if p.skipDone {
		if skip, done := skipIfDone(o, s, st); done {
			return skip
		}
	}
	r, err := pipeline.Execute(s, st)
	if err != nil {
		return fail(o, placeFault(p, err))
	}
	o.status = "ok"
	o.detail = fmt.Sprintf("%d component(s), %s mode", r.Components, r.Mode)
	if r.ALS != nil {
		o.detail += fmt.Sprintf(", lack of fit %.4g %%", r.LackOfFit)
	}
	return o
}

// skipIfDone gives the outcome of a file whose output folder holds a
// complete result of the same settings and inputs (skipped), or of one
// whose folder holds something else (failed, unless --force replaces it);
// done is false when the file is to run. The folder is only read.
func skipIfDone(o outcome, s *pipeline.Settings, st pipeline.Streams) (outcome, bool) {
	done, err := pipeline.Done(o.out, s)
	switch {
	case done:
		o.status, o.detail = "skipped", "the output folder holds a complete result of these settings and inputs"
		if !s.Quiet && !s.JSON {
			fmt.Fprintf(st.Out, "skipped: %s already holds a complete result of these settings and inputs (--skip-done)\n", o.out)
		}
		return o, true
	case err == nil, s.Force && errors.Is(err, pipeline.ErrOtherAnalysis):
		return o, false
	case errors.Is(err, pipeline.ErrKineticsNotDone):
		// The run that wrote it failed; skipped, the batch would exit 0
		// where a plain run fails. It runs again into its own folder (a
		// complete result of this analysis, which --force would replace)
		// and fails or succeeds as a plain run does.
		if !s.Quiet && !s.JSON {
			fmt.Fprintf(st.Out, "not skipped: %v; running it again (--skip-done)\n", err)
		}
		s.Force = true
		return o, false
	case errors.Is(err, pipeline.ErrOtherAnalysis) && output.Made(o.out):
		return fail(o, fmt.Errorf("--skip-done: %w; it is kept: give --force to replace it, or another --out", err)), true
	case errors.Is(err, pipeline.ErrOtherAnalysis):
		return fail(o, fmt.Errorf("--skip-done: %w; it is kept (bandsolve did not make it, so --force will not replace it either): choose another --out", err)), true
	}
	return fail(o, err), true
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
func settingsFor(file string, flags *pipeline.Settings, changed map[string]bool, batch bool, outs map[string]int) (*pipeline.Settings, *cmdfile.File, error) {
	s := pipeline.NewSettings()
	cf, err := pipeline.LoadCommandFile(file, s, changed)
	if err != nil {
		return nil, nil, err
	}
	laid, err := laySettings(file, s, flags, changed, batch, outs)
	var out *outsideError
	if errors.As(err, &out) {
		// The file's out line is at fault: name its line and column, as
		// every fault of a command file does (docs/command-files.md).
		if e, ok := entryFor(cf, "out", "", s); ok {
			return nil, cf, &placedError{msg: fmt.Sprintf("%s:%d:%d: %v", cf.Name, e.Line, max(e.ValueCol, e.Col), out.err), err: out.usage}
		}
		return nil, cf, out.usage
	}
	return laid, cf, err
}

// outsideError is a command file's out line leading out of its folder
// (cmdfile.Inside, err), a usage error that settingsFor places at that
// line.
type outsideError struct {
	usage *pipeline.UsageError
	err   error
}

func (e *outsideError) Error() string { return e.usage.Error() }
func (e *outsideError) Unwrap() error { return e.usage }

// laySettings lays the command line over a command file's settings s and
// decides the output folder.
func laySettings(file string, s *pipeline.Settings, flags *pipeline.Settings, changed map[string]bool, batch bool, outs map[string]int) (*pipeline.Settings, error) {
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
	if !changed["out"] {
		if err := pipeline.RerunNeedsOut(file); err != nil {
			return nil, err
		}
	}
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
			return nil, &outsideError{usage: &pipeline.UsageError{Msg: file + ": " + err.Error()}, err: err}
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
