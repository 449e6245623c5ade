package report

import (
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
)

// TestKineticsFindingNamesEachStepOnce: a model of one step is said once,
// "Kinetic model A -> B: k = …", not followed by its only step's name; a
// model of several names each step before its constant. Half-lives are
// ln 2 / k for first-order steps (the definition: 69.3 s at k = 0.01 s⁻¹,
// 139 s at 0.005 s⁻¹).
func TestKineticsFindingNamesEachStepOnce(t *testing.T) {
	ab := output.RateConstant{Step: "A -> B", K: 0.01, StdErr: 0.0002, HalfLife: 69.31471806}
	bc := output.RateConstant{Step: "B -> C", K: 0.005, StdErr: 0.0001, HalfLife: 138.6294361}
	for _, c := range []struct {
		model string
		rates []output.RateConstant
		want  string
	}{
		{"A -> B", []output.RateConstant{ab}, "Kinetic model A -> B: k = 0.01 ± 0.0002 s⁻¹ (half-life 69.3 s)."},
		{"A -> B -> C", []output.RateConstant{ab, bc},
			"Kinetic model A -> B -> C: A -> B: k = 0.01 ± 0.0002 s⁻¹ (half-life 69.3 s); B -> C: k = 0.005 ± 0.0001 s⁻¹ (half-life 139 s)."},
	} {
		k := &Kinetics{Model: c.model, RateConstants: c.rates}
		if got := kineticsFinding(&Folder{Summary: &Summary{Kinetics: k}}, k); got != c.want {
			t.Errorf("%s:\n got %q\nwant %q", c.model, got, c.want)
		}
	}
	// The rendered report of the fixture's A -> B says it so too.
	b, err := BuildDir(fixture(t, true))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(b), "Kinetic model A -&gt; B: k = 0.01") {
		t.Errorf("report.html does not say %q", "Kinetic model A -&gt; B: k = 0.01")
	}
}
