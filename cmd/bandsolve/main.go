// Command bandsolve resolves a time series of overlapping (difference)
// spectra into the pure spectra and time profiles of the species or
// reactions behind them. Run `bandsolve help` for the commands.
package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"regexp"
	"slices"
	"strconv"
	"strings"

	"github.com/bandsolve/bandsolve/io/cmdfile"
	"github.com/bandsolve/bandsolve/io/pipeline"
	"github.com/spf13/pflag"
)

const (
	exitOK    = 0
	exitRun   = 1
	exitUsage = 2
)

type command struct {
	name    string
	summary string
	help    string // usage line and example
	run     func(args []string, st pipeline.Streams) int
}

var commands []command

func init() {
	commands = []command{
		{"resolve", "one analysis from files and flags", resolveHelp, runResolve},
		{"demo", "invented data, resolved", demoHelp, runDemo},
	}
	commands = append(commands, extraCommands...)
	// Listed in the order a user meets them (as README.md and CONTRACT.md do).
	order := []string{"resolve", "run", "verify", "demo", "report", "collect"}
	slices.SortStableFunc(commands, func(a, b command) int {
		return cmpIndex(order, a.name) - cmpIndex(order, b.name)
	})
}

// cmpIndex is name's place in order, after all of them when absent.
func cmpIndex(order []string, name string) int {
	if i := slices.Index(order, name); i >= 0 {
		return i
	}
	return len(order)
}

// extraCommands are registered by other files of this package.
var extraCommands []command

func main() {
	os.Exit(mainArgs(os.Args[1:], pipeline.Streams{Out: os.Stdout, Err: os.Stderr}))
}

func mainArgs(args []string, st pipeline.Streams) int {
	if len(args) == 0 {
		topHelp(st.Err)
		return exitUsage
	}
	switch args[0] {
	case "-h", "--help", "help":
		if len(args) > 1 {
			// "help X" is "X --help": the same text, flags included.
			for _, c := range commands {
				if c.name == args[1] {
					return c.run([]string{"--help"}, st)
				}
			}
		}
		topHelp(st.Out)
		return exitOK
	case "--version", "version":
		fmt.Fprintf(st.Out, "bandsolve %s (commit %s)\n", pipeline.Version, pipeline.Commit())
		return exitOK
	}
	for _, c := range commands {
		if c.name == args[0] {
			return c.run(args[1:], st)
		}
	}
	fmt.Fprintf(st.Err, "bandsolve: unknown command %q; the commands are %s (see bandsolve help)\n", args[0], commandNames())
	return exitUsage
}

func commandNames() string {
	var n []string
	for _, c := range commands {
		n = append(n, c.name)
	}
	return strings.Join(n, ", ")
}

func topHelp(w io.Writer) {
	fmt.Fprintf(w, `bandsolve %s resolves a time series of overlapping spectra into pure spectra
and time profiles (alternating least squares with non-negativity and closure).

Usage: bandsolve COMMAND [flags]

Commands:
`, pipeline.Version)
	for _, c := range commands {
		fmt.Fprintf(w, "  %-9s %s\n", c.name, c.summary)
	}
	fmt.Fprint(w, `
Run 'bandsolve COMMAND --help' for a command's flags and an example.
Start with: bandsolve demo
`)
}

const resolveHelp = `Usage: bandsolve resolve --data PATH [flags]

Reads a series of spectra recorded during a reaction, builds the time ×
wavenumber matrix (absorbance with --blank or --kind absorbance, else difference
spectra against the reference state, --reference: the first spectrum by default),
counts the components by SVD and resolves each one's spectrum and time profile.

Example: single beams in one matrix CSV plus a blank single beam; the first
four spectra were taken before the reagent went in:

  bandsolve resolve --data series.csv --kind single-beam --blank blank.csv \
      --pre 4 --out results/

Example: a folder of one-spectrum exports named by their time in minutes:

  bandsolve resolve --data scans/ --times-from-name --time-unit min --out results/

Example: the same exports, whose water-vapour lines changed during the run (the run warns),
with a vapour spectrum recorded at the same resolution subtracted from every spectrum:

  bandsolve resolve --data scans/ --times-from-name --time-unit min --vapour vapour.csv \
      --out results/

Flags:
`

const demoHelp = `Usage: bandsolve demo [--out DIR] [--force]

Makes an invented data set (A → B → C in a stirred ATR cell, single beams
with a blank, overlapping bands, noise), writes it to DIR/input and resolves
it as 'resolve' would, then compares the answer with the truth.

Example:

  bandsolve demo --out demo-results
  bandsolve resolve --data demo-results/input/series.csv --kind single-beam \
      --blank demo-results/input/blank.csv --pre 3 --out my-run

Flags:
`

// settingsFlags registers every analysis option as a flag on fs.
func settingsFlags(fs *pflag.FlagSet, s *pipeline.Settings) {
	given := map[string]string{}
	for _, o := range pipeline.Options() {
		fs.Var(&settingValue{s: s, o: o, given: given}, o.Name, usageOf(o))
		if o.IsSwitch() {
			fs.Lookup(o.Name).NoOptDefVal = "on"
		}
	}
	// Old names still work, hidden from --help; Set records them for a note.
	for old := range pipeline.Renamed {
		o, _ := pipeline.Lookup(old)
		o.Name = old
		fs.Var(&settingValue{s: s, o: o, given: given}, old, usageOf(o))
		fs.MarkHidden(old)
	}
}

func usageOf(o pipeline.Option) string {
	return o.Usage
}

// settingValue adapts one setting to pflag.Value. given holds, by
// option, the value it was first given on the command line: an option
// that takes one value is refused when given again, as a command file
// refuses a keyword set twice, where the last had silently won
// (--kind absorbance --kind single-beam ran as single beams).
type settingValue struct {
	s     *pipeline.Settings
	o     pipeline.Option
	set   bool
	given map[string]string
}

func (v *settingValue) String() string {
	if v.s == nil {
		return ""
	}
	vals := v.s.Get(v.o.Name)
	if v.o.IsSwitch() || len(vals) == 0 {
		return ""
	}
	return strings.Join(vals, ",")
}
func (v *settingValue) Set(x string) error {
	if v.given != nil && !v.o.Multi {
		name := v.o.Name
		if o, ok := pipeline.Lookup(name); ok {
			name = o.Name // an old name and its new one are one option
		}
		if first, twice := v.given[name]; twice {
			return fmt.Errorf("is given twice (%s, then %s); give it once: only %s may repeat", shownValue(first), shownValue(x), repeatableFlags())
		}
		v.given[name] = x
	}
	v.set = true
	return v.s.Set(v.o.Name, x)
}

// repeatableFlags names the options that take several values, as a
// command file's message about a repeat names its keywords.
func repeatableFlags() string {
	var names []string
	for _, o := range pipeline.Options() {
		if o.Multi {
			names = append(names, "--"+o.Name)
		}
	}
	return strings.Join(names, ", ")
}

// shownValue quotes a flag's value for a message, "" as such.
func shownValue(x string) string { return strconv.Quote(x) }
func (v *settingValue) Type() string {
	if v.o.IsSwitch() {
		return ""
	}
	return v.o.Value
}

func newFlagSet(name, help string, st pipeline.Streams) *pflag.FlagSet {
	fs := pflag.NewFlagSet(name, pflag.ContinueOnError)
	fs.SortFlags = false
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	_ = help
	return fs
}

var flagValueErr = regexp.MustCompile(`^invalid argument ".*" for "(?:-\w, )?(--[\w-]+)" flag: (?:[\w-]+: )?(.*)$`)

// parse handles --help and errors the same way for every command.
func parse(fs *pflag.FlagSet, args []string, help string, st pipeline.Streams) (ok bool, code int) {
	err := fs.Parse(args)
	if errors.Is(err, pflag.ErrHelp) {
		fmt.Fprint(st.Out, help)
		printFlags(st.Out, fs)
		return false, exitOK
	}
	if err != nil {
		msg := err.Error()
		// pflag says `invalid argument "x" for "--opt" flag: opt: "x": why`;
		// the option and value once are enough: `--opt "x": why`.
		if m := flagValueErr.FindStringSubmatch(msg); m != nil {
			msg = m[1] + " " + m[2]
		}
		if strings.HasPrefix(msg, "unknown flag: --") {
			name := strings.TrimPrefix(msg, "unknown flag: --")
			if s := pipeline.Suggest(name, flagNames(fs)...); s != "" {
				msg += fmt.Sprintf(" (did you mean --%s?)", s)
			}
		}
		fmt.Fprintf(st.Err, "bandsolve %s: %s; see bandsolve %s --help\n", fs.Name(), msg, fs.Name())
		return false, exitUsage
	}
	return true, 0
}

// flagNames are the command's own flags beside the analysis options
// (run's --shard, --jobs, --skip-done), for the suggestion of a misspelt
// one; hidden old names are left out.
func flagNames(fs *pflag.FlagSet) []string {
	var names []string
	fs.VisitAll(func(f *pflag.Flag) {
		if !f.Hidden {
			names = append(names, f.Name)
		}
	})
	return names
}

func runResolve(args []string, st pipeline.Streams) int {
	s := pipeline.NewSettings()
	fs := newFlagSet("resolve", resolveHelp, st)
	settingsFlags(fs, s)
	if ok, code := parse(fs, args, resolveHelp, st); !ok {
		return code
	}
	if fs.NArg() > 0 {
		fmt.Fprintf(st.Err, "bandsolve resolve: unexpected argument %q; inputs go after --data\n", fs.Arg(0))
		return exitUsage
	}
	_, err := pipeline.Execute(s, st)
	return report(st, "resolve", err)
}

func runDemo(args []string, st pipeline.Streams) int {
	fs := newFlagSet("demo", demoHelp, st)
	out := fs.String("out", "bandsolve-demo", "write the invented data (`DIR`/input) and the results here")
	force := fs.Bool("force", false, "replace earlier results in the output folder")
	quiet := fs.Bool("quiet", false, "print nothing but errors")
	asJSON := fs.Bool("json", false, "print the summary as JSON on stdout")
	if ok, code := parse(fs, args, demoHelp, st); !ok {
		return code
	}
	_, err := pipeline.Demo(*out, *force, *quiet, *asJSON, st)
	return report(st, "demo", err)
}

// report prints an error as one line and maps it to the exit code.
func report(st pipeline.Streams, cmd string, err error) int {
	if err == nil {
		return exitOK
	}
	fmt.Fprintf(st.Err, "bandsolve %s: %s\n", cmd, oneLine(err.Error()))
	var ue *pipeline.UsageError
	if errors.As(err, &ue) {
		return exitUsage
	}
	return exitRun
}

// oneLine is a message as one line for a terminal: control characters (a
// line end or ESC in a file name) escaped as in quoted cells
// (cmdfile.Escape), runs of spaces made one.
func oneLine(s string) string {
	return strings.Join(strings.Fields(cmdfile.Escape(strings.TrimRight(s, "\n"))), " ")
}
