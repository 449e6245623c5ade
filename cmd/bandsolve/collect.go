package main

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"syscall"

	"github.com/bandsolve/bandsolve/io/campaign"
	"github.com/bandsolve/bandsolve/io/pipeline"
)

const collectHelp = `Usage: bandsolve collect OUT… [--out FILE]

Writes one CSV table of the key results of many output folders, a row per
folder in the order given, to compare a series of experiments (say, a rate
constant against the catalyst loading). Columns: folder, status (ok;
kinetics not done, with the reason in notes; or why the folder has no
readable summary.json), components, rank_estimate, mode,
spectra, points, noise_sigma, lack_of_fit_percent,
noise_lack_of_fit_percent, residual_to_noise (the run's residual over the
noise, as it weighted its fit: 1 = fits to the noise), kinetics_model (the
model asked for, fitted or not), then
k_per_s[STEP] and stderr_per_s[STEP] of the reported fit for every kinetic
step met (empty for a constant the data do not determine), then, when some
folder fitted its start time (--fit-t0), t0_fitted_s and stderr_t0_s (empty
when the data do not determine it), then warnings
(how many), water_vapour (changed, no change or not checked),
vapour_line_change (the largest line change, in absorbance), then what tells
whether two rows are the same analysis: kinetic_fit (the fit the
k_per_s[STEP] columns hold: data, profiles or hard-soft), t0_s (the start
time given, or the one a fitted t0 started from),
kinetics_map, baseline, closure, noise_weights, outlier_spectra (how many
set aside), region, exclude, drop, hard_model, c0, fit_c0, k_fixed and
settings_id (a fingerprint of every setting but the inputs, s and 12 hex
digits: equal ids, same analysis of other data); then k_per_s[FIT | STEPS | STEP] and
stderr_per_s[FIT | STEPS | STEP] for every fit, model and step met (STEPS is
the model as its steps, so 'A -> B' and the A -> B of 'A -> B -> C' never
share a column; a determined sum such as k1 + k2 is a STEP too), and notes
(what a cell cannot say: constants not determined, the sum the data do
determine). A value a folder lacks is an empty cell; numbers have 10
significant digits, as in every result file. The exit status is 1 if any
folder had no readable summary.

Example:

  bandsolve run 'runs/*.bsr' --out batch/
  bandsolve collect batch/*/ --out batch.csv
  bandsolve collect batch/r0 batch/r2 > two.csv   # to standard output

Flags:
`

var _ = func() bool {
	extraCommands = append(extraCommands, command{"collect", "one CSV table of the key results of many output folders", collectHelp, runCollect})
	return true
}()

func runCollect(args []string, st pipeline.Streams) int {
	fs := newFlagSet("collect", collectHelp, st)
	out := fs.String("out", "", "write the table to `FILE` instead of standard output")
	force := fs.Bool("force", false, "replace FILE if it exists")
	if ok, code := parse(fs, args, collectHelp, st); !ok {
		return code
	}
	if fs.NArg() == 0 {
		fmt.Fprintf(st.Err, "bandsolve collect: give one or more output folders, e.g. bandsolve collect batch/*/; see bandsolve collect --help\n")
		return exitUsage
	}
	t, problems := campaign.Collect(fs.Args())
	b := t.CSV()
	if *out == "" {
		st.Out.Write(b)
	} else if err := writeNew(*out, b, *force); err != nil {
		fmt.Fprintf(st.Err, "bandsolve collect: %s\n", oneLine(err.Error()))
		return exitRun
	}
	for _, p := range problems {
		fmt.Fprintf(st.Err, "bandsolve collect: %s\n", oneLine(p))
	}
	if len(problems) > 0 {
		return exitRun
	}
	return exitOK
}

// writeNew writes a file through a temporary one beside it and a rename,
// so a reader never sees half a table; an existing file is replaced only
// with force, and never when it is not a regular file.
func writeNew(path string, b []byte, force bool) error {
	if st, err := os.Lstat(path); err == nil {
		switch {
		case !st.Mode().IsRegular():
			return fmt.Errorf("--out %s: exists and is not a regular file; name a new file", path)
		case !force:
			return fmt.Errorf("--out %s: exists; add --force to replace it, or name a new file", path)
		}
	}
	if err := folderOf(path); err != nil {
		return err
	}
	tmp, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".partial-*")
	if err != nil {
		return fmt.Errorf("--out %s: %w", path, err)
	}
	_, werr := tmp.Write(b)
	cerr := tmp.Close()
	if werr == nil {
		werr = cerr
	}
	if werr == nil {
		werr = os.Rename(tmp.Name(), path)
	}
	if werr != nil {
		os.Remove(tmp.Name())
		return fmt.Errorf("--out %s: %w", path, werr)
	}
	return nil
}

// folderOf checks that the folder --out names a file in is there, so that
// a wrong path is told in the user's terms rather than through the name of
// the temporary file the table is first written to.
func folderOf(path string) error {
	dir := filepath.Dir(path)
	st, err := os.Stat(dir)
	switch {
	case errors.Is(err, syscall.ENOTDIR) || err == nil && !st.IsDir():
		return fmt.Errorf("--out %s: part of the path is a file, not a folder; name a file in an existing folder", path)
	case errors.Is(err, fs.ErrNotExist):
		return fmt.Errorf("--out %s: folder %s does not exist; make it, or name a file in an existing folder", path, dir)
	}
	return nil // other faults are told by the write itself
}
