package pipeline

import (
	"fmt"
	"io"
	"testing"
)

// Data with no baseline at all must get none from --baseline auto (the default): the
// F-test of each order (svd.ChooseBaselineOrder; Draper & Smith 1998 §6) is then under its
// null hypothesis, and an order is chosen only by a false alarm. Cases: two closed
// subsystems A -> B -> C beside D -> E (rank 4 for 5 species: rank-deficient, the case
// where a constant or a slope can lie near the span of the species' spectra differences)
// and full-rank A -> B and A -> B -> C (Bateman 1910), each with detector noise constant
// in counts (absorbance noise ∝ 1/I). TestBaselineDriftIsNotASpecies checks the other
// side: a drifting baseline is found.
func TestBaselineAutoChoosesNoneWithoutBaseline(t *testing.T) {
	type tc struct {
		name string
		data *synth
	}
	var cases []tc
	for seed := uint64(1); seed <= 2; seed++ {
		sub := makeSubsystems(61, 4)
		countsNoise(sub, 20, seed, nil)
		two := makeBateman(t, 2e-3, 0, 1e-3, seed, 2)
		countsNoise(two, 20, seed, nil)
		three := makeBateman(t, 2e-3, 6e-4, 1e-3, seed, 3)
		countsNoise(three, 20, seed, nil)
		cases = append(cases, tc{fmt.Sprintf("two subsystems, draw %d", seed), sub},
			tc{fmt.Sprintf("A -> B, draw %d", seed), two}, tc{fmt.Sprintf("A -> B -> C, draw %d", seed), three})
	}
	for _, c := range cases {
		series, blank := c.data.write(t)
		st := NewSettings()
		st.Data, st.Kind, st.Blanks = []string{series}, "single-beam", []string{blank}
		st.Report, st.Checks, st.Bands = "off", "off", "off"
		r, err := Run(st, io.Discard)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		t.Logf("%s: baseline %s (%s)", c.name, baselineName(r.BaselineOrder), r.BaselineReason)
		if r.BaselineOrder != -1 {
			t.Errorf("%s: --baseline auto chose %s on data without a baseline", c.name, baselineName(r.BaselineOrder))
		}
	}
}
