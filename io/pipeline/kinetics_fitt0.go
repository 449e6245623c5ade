package pipeline

// --fit-t0: the start time fitted with the rate constants (kinetics,
// t0fit.go). The range it is held within is fixed once from the data's
// times, so that every fit of a run (profiles, data, hard–soft cycles,
// refits from exchanged starts, each warm-started from another's t0)
// searches the same range.

import (
	"fmt"
	"io"
	"math"

	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/mcr/kinetics"
)

// setT0Range sets, with --fit-t0, the range t0 is fitted within: from the
// last spectrum at or before the start (--t0, or its default: the last
// spectrum before the reaction) to the first after it.
func (kn *Kinetics) setT0Range(r *Result) error {
	if !r.Settings.FitT0 {
		return nil
	}
	lo, hi, err := kinetics.T0Bracket(r.Times, kn.T0)
	if err != nil {
		return usage("--fit-t0: %v; give a --t0 before the last spectrum", err)
	}
	kn.FitT0, kn.T0Lo, kn.T0Hi = true, lo, hi
	return nil
}

// t0FitJSON is a fit's fitted start time for summary.json, nil when t0
// was not fitted.
func t0FitJSON(fr *kinetics.FitResult) *output.T0Fit {
	if !fr.T0Fitted {
		return nil
	}
	out := &output.T0Fit{T0: round(finite(snappedT0(fr))), StdErr: round(finite(fr.T0StdErr)),
		Lower: round(fr.T0Lo), Upper: round(fr.T0Hi), NotDetermined: fr.T0NotDetermined}
	switch {
	case fr.T0AtEnd < 0:
		out.AtEnd = "start"
	case fr.T0AtEnd > 0:
		out.AtEnd = "end"
	}
	return out
}

// snappedT0 is the fitted t0 with a value within a billionth of its range
// from an end put on that end: the bounded parameter reaches an end only to
// rounding (t0 = lo + w(1 + sin φ)/2), which printed "ended at 1.5622e-11 s"
// for a range starting at 0.
func snappedT0(fr *kinetics.FitResult) float64 {
	tol := 1e-9 * (fr.T0Hi - fr.T0Lo)
	switch {
	case math.Abs(fr.T0-fr.T0Lo) <= tol:
		return fr.T0Lo
	case math.Abs(fr.T0Hi-fr.T0) <= tol:
		return fr.T0Hi
	}
	return fr.T0
}

// printT0Fit adds a fit's fitted start time to its lines on the terminal.
func printT0Fit(fr *kinetics.FitResult, tu shownTime, w io.Writer) {
	if !fr.T0Fitted {
		return
	}
	rng := fmt.Sprintf("within %s–%s %s", tu.T(fr.T0Lo), tu.T(fr.T0Hi), tu.Unit)
	if fr.T0NotDetermined {
		fmt.Fprintf(w, "\n    %-13s %-10s not determined (the fit ended at %.6g %s, %s)", "", "t0", snappedT0(fr)/tu.Div, tu.Unit, rng)
		return
	}
	end := ""
	switch {
	case fr.T0AtEnd < 0:
		end = ", at the start of its range"
	case fr.T0AtEnd > 0:
		end = ", at the end of its range"
	}
	fmt.Fprintf(w, "\n    %-13s %-10s = %.6g ± %.2g %s (fitted %s%s)", "", "t0", snappedT0(fr)/tu.Div, fr.T0StdErr/tu.Div, tu.Unit, rng, end)
}

// printDemoT0 sets a fitted t0 of the demo beside the truth.
func printDemoT0(f *KineticFit, truth float64, w io.Writer) {
	fr := f.Fit
	if !fr.T0Fitted {
		return
	}
	dev := "n/a"
	if fr.T0StdErr > 0 {
		dev = fmt.Sprintf("%+.1f", (fr.T0-truth)/fr.T0StdErr)
	}
	fmt.Fprintf(w, "  %-13s %-8s = %.6g ± %.2g s    truth %g s    (%s standard errors)\n", f.Method, "t0", fr.T0, fr.T0StdErr, truth, dev)
}
