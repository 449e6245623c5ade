package pipeline

import (
	"io"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// bubbleSeries is A → B → C (Bateman 1910) as single beams with detector
// noise constant in counts, where two spectra saw a bubble: every band of the
// spectrum loses a share g (the film lifted off the crystal; common practice
// for ATR) and scatter f (ν/4000)⁴ (Rayleigh, ν⁴) is added. It returns the
// data and the rows of the bubbles.
func bubbleSeries(t *testing.T, seed uint64) (*synth, []int) {
	s := makeBateman(t, 2e-3, 6e-4, 0, seed, 3)
	rows := []int{40, 80}
	share := map[int][2]float64{40: {0.12, 0.30}, 80: {0.08, 0.18}}
	var a mat.Dense
	a.Mul(s.profiles, s.spectra.T())
	countsNoise(s, 4, seed, func(i, j int) float64 {
		gf, ok := share[i]
		if !ok {
			return 0
		}
		return -gf[0]*a.At(i, j) + gf[1]*math.Pow(s.axis[j]/4000, 4)
	})
	return s, rows
}

// Bubble spectra are set aside whatever the baseline setting, with a reason
// that names a broad loss, not sharp lines; and with --baseline auto the
// order is chosen without them: the data have no baseline (the analytic
// truth), so none is chosen (the F-test of each order under its null
// hypothesis, Draper & Smith 1998 §6, as in
// TestBaselineAutoChoosesNoneWithoutBaseline).
func TestBubbleSpectraSetAsideWhateverTheBaseline(t *testing.T) {
	for _, baseline := range []string{"auto", "off"} {
		s, rows := bubbleSeries(t, 3)
		series, blank := s.write(t)
		st := NewSettings()
		st.Data, st.Kind, st.Blank = []string{series}, "single-beam", blank
		st.Report, st.Checks, st.Bands = "off", "off", "off"
		st.Baseline = baseline
		r, err := Run(st, io.Discard)
		if err != nil {
			t.Fatalf("--baseline %s: %v", baseline, err)
		}
		var got []int
		for _, sa := range r.SetAside {
			got = append(got, sa.Row)
			if strings.Contains(sa.Reason, "sharp lines") || !strings.Contains(sa.Reason, "broad") {
				t.Errorf("--baseline %s: spectrum %d: %q; want a broad feature, not sharp lines", baseline, sa.Row, sa.Reason)
			}
		}
		if len(got) != len(rows) || got[0] != rows[0] || got[1] != rows[1] {
			t.Errorf("--baseline %s: set aside %v; want the bubbles %v (the rows the data were made with)", baseline, got, rows)
		}
		if baseline == "auto" && r.BaselineOrder != -1 {
			t.Errorf("--baseline auto chose %s on data without a baseline: %s", baselineName(r.BaselineOrder), r.BaselineReason)
		}
	}
}
