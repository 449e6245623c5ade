package main

import (
	"fmt"

	"github.com/bandsolve/bandsolve/io/pipeline"
	htmlreport "github.com/bandsolve/bandsolve/io/report"
)

const reportHelp = `Usage: bandsolve report OUT

Rebuilds OUT/report.html from the result files in the output folder OUT
(summary.json, spectra.csv, profiles.csv, maps.csv, …) — after editing a
file, after a run with --report off, or with a newer bandsolve. Nothing is
recomputed, and the same files always give the same report.

Example:

  bandsolve demo --out demo-results
  bandsolve report demo-results

Flags:
`

// Registered in a variable initializer, which runs before main.go's init
// reads extraCommands (an init of this file would run after it).
var _ = func() bool {
	extraCommands = append(extraCommands, command{"report", "rebuild OUT/report.html from the files in OUT", reportHelp, runReport})
	return true
}()

func runReport(args []string, st pipeline.Streams) int {
	fs := newFlagSet("report", reportHelp, st)
	quiet := fs.Bool("quiet", false, "print nothing but errors")
	if ok, code := parse(fs, args, reportHelp, st); !ok {
		return code
	}
	if fs.NArg() != 1 {
		fmt.Fprintf(st.Err, "bandsolve report: give one output folder, e.g. bandsolve report demo-results; see bandsolve report --help\n")
		return exitUsage
	}
	dir := fs.Arg(0)
	if err := htmlreport.Rebuild(dir); err != nil {
		return report(st, "report", err)
	}
	if !*quiet {
		fmt.Fprintf(st.Out, "report         %s\n", dir+"/report.html")
	}
	return exitOK
}
