package pipeline

import (
	"bytes"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/mcr/kinetics"
)

// TestFitT0OnTheDemo: the demo's data were made with the reaction starting
// at t0 = 60 s (demo.Make, Bateman's solution from then on). Given
// --t0 50, a fixed t0 biases the constants; with --fit-t0 the reported data
// fit places t0 within 3 standard errors of 60 s inside its range 30–60 s
// (the spectra either side of 50 s) and the constants within 3 standard
// errors of the truth; summary.json, the terminal and the as-run record
// say so.
func TestFitT0OnTheDemo(t *testing.T) {
	truth, dir := writeDemo(t)
	s := demoSettings(dir, true)
	s.T0, s.FitT0 = "50", true
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	rep := r.Kinetics.Reported()
	if rep == nil || rep.Method != "data" {
		t.Fatalf("reported fit %v, want the data fit", rep)
	}
	f := rep.Fit
	if !f.T0Fitted || f.T0Lo != 30 || f.T0Hi != 60 || f.T0NotDetermined {
		t.Fatalf("t0 fitted %v within %g–%g, not determined %v: want fitted within 30–60 s", f.T0Fitted, f.T0Lo, f.T0Hi, f.T0NotDetermined)
	}
	within(t, "t0", f.T0, f.T0StdErr, truth.T0, 3)
	within(t, "k1", f.K[0], f.KStdErr[0], truth.K1, 3)
	within(t, "k2", f.K[1], f.KStdErr[1], truth.K2, 3)
	sum := kineticsSummary(r)
	if sum.T0 != 50 || sum.T0Fit == nil || sum.T0Fit.T0 != round(f.T0) || sum.T0Fit.StdErr != round(f.T0StdErr) || sum.T0Fit.Lower != 30 || sum.T0Fit.Upper != 60 {
		t.Errorf("summary t0_s %g, t0_fit %+v: want the start 50 and the fit's t0 %g ± %g within 30–60", sum.T0, sum.T0Fit, f.T0, f.T0StdErr)
	}
	var out bytes.Buffer
	printKinetics(r, &out)
	if !strings.Contains(out.String(), "t0         = 59.9") {
		t.Errorf("terminal lines do not give the fitted t0:\n%s", out.String())
	}
	rec, err := Record(r, "")
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(rec), "\nfit-t0 ") || !strings.Contains(string(rec), "on\n") {
		t.Errorf("the as-run record has no fit-t0 on line:\n%s", rec)
	}
}

// TestNoFitT0LeavesTheRecord: without --fit-t0 the as-run record has no
// fit-t0 line, so records of runs that never used it keep their bytes, and
// no fit reports a fitted t0 (summary.json has no t0_fit).
func TestNoFitT0LeavesTheRecord(t *testing.T) {
	_, r := demoSpecies(t)
	rec, err := Record(r, "")
	if err != nil {
		t.Fatal(err)
	}
	if strings.Contains(string(rec), "fit-t0") {
		t.Errorf("the as-run record names fit-t0 though it was not given:\n%s", rec)
	}
	sum := kineticsSummary(r)
	if sum.T0Fit != nil {
		t.Errorf("t0_fit %+v without --fit-t0", sum.T0Fit)
	}
	for _, f := range sum.Fits {
		if f.T0Fit != nil {
			t.Errorf("%s fit: t0_fit %+v without --fit-t0", f.Method, f.T0Fit)
		}
	}
}

// A fitted t0 that reached an end of its range only to rounding is shown
// on that end (the bound of the range, its definition), not as 1.56e-11 s;
// one inside the range is shown as fitted.
func TestFittedT0SnapsToItsRangesEnds(t *testing.T) {
	for _, c := range []struct{ t0, want float64 }{{1.5622e-11, 0}, {21 - 4e-15, 21}, {7.25, 7.25}, {1e-6, 1e-6}} {
		fr := &kinetics.FitResult{T0: c.t0, T0Lo: 0, T0Hi: 21, T0Fitted: true}
		if got := snappedT0(fr); got != c.want {
			t.Errorf("t0 %v in 0–21 s shown as %v, want %v", c.t0, got, c.want)
		}
	}
}
