package pipeline

import (
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/mcr/kinetics"
	"gonum.org/v1/gonum/mat"
)

// TestProfileWarningsPointOnlyAtADataFitThatExists: the warnings on a fit to
// the resolved profiles send the reader to the data fit's standard errors;
// when the data fit failed (its own warning says so) there are none to
// quote, and the advice must not point at them. The residual here is a ramp
// down the time axis, whose lag-1 autocorrelation is near 1 (definition of
// the lag-1 autocorrelation, common practice), so the time-correlation
// warning fires; the hard–soft fit's warning fires by its method.
func TestProfileWarningsPointOnlyAtADataFitThatExists(t *testing.T) {
	const n = 30
	res := mat.NewDense(n, 2, nil)
	for i := 0; i < n; i++ {
		res.Set(i, 0, float64(i)-n/2)
		res.Set(i, 1, float64(n/2-i)/2)
	}
	f := &KineticFit{Method: "hard-soft", Fit: &kinetics.FitResult{Residual: res}, Observed: res}
	for _, c := range []struct {
		dataFit, hard bool
	}{{true, false}, {false, false}, {true, true}, {false, true}} {
		ws := profileFitWarnings(f, c.hard, c.dataFit)
		if len(ws) != 2 {
			t.Fatalf("data fit %v: %d warnings, want 2 (correlated residuals, hard–soft errors): %q", c.dataFit, len(ws), ws)
		}
		all := strings.Join(ws, "\n")
		if says := strings.Contains(all, "data fit"); says != c.dataFit {
			t.Errorf("data fit %v, --hard-model %v: the warnings mention the data fit: %v (%q)", c.dataFit, c.hard, says, ws)
		}
		if says := strings.Contains(all, "--hard-model"); says == c.hard {
			t.Errorf("--hard-model %v: the warnings advise it: %v (%q)", c.hard, says, ws)
		}
	}
}
