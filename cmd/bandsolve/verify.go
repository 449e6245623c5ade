package main

import (
	"fmt"

	"github.com/bandsolve/bandsolve/io/pipeline"
)

const verifyHelp = `Usage: bandsolve verify OUT

Proves that the output folder OUT can be reproduced: checks the SHA-256 of
every input named in OUT/manifest.json, reruns OUT/as-run.bsr into a
temporary folder and compares every result file with OUT's byte for byte
(manifest.json, which holds the start time, is the one file not compared).
Exit status 0 when every file is identical; otherwise 1, naming the first
differing file and line (or the input that changed). OUT is not modified.

Inputs are found where the record says, relative to OUT: keep OUT beside
its inputs as they were (the demo's folder holds its inputs in OUT/input).

Example:

  bandsolve demo --out demo-results
  bandsolve verify demo-results

Flags:
`

func runVerify(args []string, st pipeline.Streams) int {
	fs := newFlagSet("verify", verifyHelp, st)
	quiet := fs.Bool("quiet", false, "print nothing but the first difference or error")
	if ok, code := parse(fs, args, verifyHelp, st); !ok {
		return code
	}
	if fs.NArg() != 1 {
		fmt.Fprintf(st.Err, "bandsolve verify: give one output folder, e.g. bandsolve verify demo-results; see bandsolve verify --help\n")
		return exitUsage
	}
	dir := fs.Arg(0)
	log := st.Err
	if *quiet {
		log = nil
	}
	v, err := pipeline.Verify(dir, log)
	if err != nil {
		return report(st, "verify", err)
	}
	if !*quiet {
		for _, n := range v.Notes {
			fmt.Fprintf(st.Out, "note: %s\n", n)
		}
	}
	if !v.OK() {
		for _, n := range v.Builds {
			if *quiet {
				break // nothing but the difference
			}
			fmt.Fprintf(st.Err, "note: %s\n", n)
		}
		d := v.Differences[0]
		fmt.Fprintf(st.Err, "bandsolve verify: %s: NOT reproduced\n%s\n", dir, d)
		if len(v.Differences) > 1 {
			var more []string
			for _, o := range v.Differences[1:] {
				more = append(more, o.File)
			}
			fmt.Fprintf(st.Err, "also differing: %s\n", joinMax(more, 10))
		}
		return exitRun
	}
	if !*quiet {
		fmt.Fprintf(st.Out, "inputs     %d file(s), SHA-256 as recorded\n", v.Inputs)
		fmt.Fprintf(st.Out, "compared   %d file(s), byte for byte: %s\n", len(v.Compared), joinMax(v.Compared, 40))
		fmt.Fprintf(st.Out, "verified   %s is reproduced exactly\n", dir)
	}
	return exitOK
}

func joinMax(xs []string, n int) string {
	if len(xs) <= n {
		return fmt.Sprint(joinComma(xs))
	}
	return fmt.Sprintf("%s and %d more", joinComma(xs[:n]), len(xs)-n)
}

func joinComma(xs []string) string {
	out := ""
	for i, x := range xs {
		if i > 0 {
			out += ", "
		}
		out += x
	}
	return out
}
