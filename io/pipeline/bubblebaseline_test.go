package pipeline

import (
	"io"
	"slices"
	"strings"
	"testing"
)

// A bubble stays aside when a baseline is fitted. The invented series of
// bubbleSeries (A → B → C, Bateman 1910; noise constant in counts; bubbles
// at rows 40 and 80 made with every band a share lower and ν⁴ scatter
// added, Rayleigh) resolved with a fitted polynomial baseline: both bubbles
// are set aside, as without a baseline (TestBubbleSpectraSetAsideWhateverTheBaseline),
// and the rest is fitted to the noise. The re-test of a spectrum set aside
// fitted its concentrations free of the closure the resolution holds
// (Σ c = 1, common practice for species of one reaction), and a bubble is
// that: every concentration a share lower, with the scatter taken by the
// baseline polynomial; it came back and stayed in the fit far above the
// noise. The residual of the spectra kept over their noise is then √(χ²/ν)
// ≈ 1 (the definition of a fit to the noise; limit 1.1, this test's).
func TestBubbleSetAsideWithABaselineFitted(t *testing.T) {
	for _, baseline := range []string{"poly:2", "offset"} {
		r, rows := runBubbleSeries(t, baseline)
		var got []int
		for _, sa := range r.SetAside {
			got = append(got, sa.Row)
		}
		if !slices.Equal(got, rows) {
			t.Errorf("--baseline %s: set aside %v; want the bubbles %v (the rows the data were made with)", baseline, got, rows)
		}
		if q, ok := residualToNoise(r); !ok || q > 1.1 {
			t.Errorf("--baseline %s: residual %.3g times the noise; want about 1 with the bubbles aside", baseline, q)
		}
	}
}

// A series that drifts as a whole and has no outlier keeps every spectrum:
// driftingBateman (A → B, Bateman 1910, an offset and a slope growing in
// time, noise constant in counts) made no spectrum unlike the others (the
// analytic truth of the invented data), so the outlier screen and its
// re-test under the fit's own constraints set none aside, with the baseline
// fitted at a fixed order and chosen by the F-test.
func TestDriftingSeriesKeepsEverySpectrum(t *testing.T) {
	for _, baseline := range []string{"poly:2", "auto"} {
		s := driftingBateman(t, 2)
		series, blank := s.write(t)
		st := NewSettings()
		st.Data, st.Kind, st.Blanks, st.Pre = []string{series}, "single-beam", []string{blank}, 3
		st.Report, st.Checks, st.Bands = "off", "off", "off"
		st.Baseline = baseline
		r, err := Run(st, io.Discard)
		if err != nil {
			t.Fatalf("--baseline %s: %v", baseline, err)
		}
		for _, sa := range r.SetAside {
			t.Errorf("--baseline %s: spectrum %d (t = %g s) set aside: %s; the data have no outlier", baseline, sa.Row, r.Times[sa.Row], sa.Reason)
		}
	}
}

// baseline_reason counts the spectra set aside as the list does: an order
// chosen again once 4 spectra were set aside, 1 of them brought back since,
// says that 3 are set aside now (the list's length; a count of a list is
// its length, by definition), and a reason without that beginning is left
// as it is.
func TestBaselineReasonCountsTheSpectraBroughtBack(t *testing.T) {
	r := &Result{BaselineReason: rechosenWords(4) + " (first poly:3, with them)"}
	broughtBackAfterChoice(r, 4, 1)
	if want := "4 spectrum(s) were set aside, 1 of them since brought back as near the fit without them (3 set aside now)"; !strings.Contains(r.BaselineReason, want) {
		t.Errorf("reason %q; want it to contain %q", r.BaselineReason, want)
	}
	other := &Result{BaselineReason: "as asked (--baseline poly:2)"}
	broughtBackAfterChoice(other, 4, 1)
	if other.BaselineReason != "as asked (--baseline poly:2)" {
		t.Errorf("reason changed to %q", other.BaselineReason)
	}
}
