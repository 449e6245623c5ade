package report

import (
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
)

// TestKineticsFindingGivesFittedT0: a fitted start time (summary.json's
// kinetics.t0_fit, here the demo's from --t0 50 --fit-t0) is said with its
// standard error and range after the constants; one the data do not
// determine is said so, with no number.
func TestKineticsFindingGivesFittedT0(t *testing.T) {
	rc := []output.RateConstant{{Step: "A -> B", K: 0.004, StdErr: 4e-7, Unit: "s^-1"}}
	fitted := &output.T0Fit{T0: 59.98750591, StdErr: 0.00803853883, Lower: 30, Upper: 60}
	k := &Kinetics{Model: "A -> B", RateConstants: rc, T0Fit: fitted}
	got := kineticsFinding(&Folder{Summary: &Summary{Kinetics: k}}, k)
	if want := "start time t0 = 59.9875 ± 0.008 s (fitted within 30–60 s)"; !strings.Contains(got, want) {
		t.Errorf("finding %q: want %q", got, want)
	}
	k.T0Fit = &output.T0Fit{T0: 1.9e-10, Lower: 0, Upper: 21, NotDetermined: true, AtEnd: "start"}
	got = kineticsFinding(&Folder{Summary: &Summary{Kinetics: k}}, k)
	if !strings.Contains(got, "start time t0 not determined by the data") || strings.Contains(got, "1.9e-10") {
		t.Errorf("finding %q: want t0 said not determined, without its value", got)
	}
}
