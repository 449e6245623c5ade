package report

import (
	"encoding/json"
	"fmt"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
)

// minuteFolder is a run with --time-unit min whose summary holds the keys
// "More results" shows: EFA windows, a minor factor with a refit, an
// outlier factor and the vapour check (values of the catalyst-1.00 series'
// run with model A -> B, rounded).
func minuteFolder(t *testing.T) *Folder {
	t.Helper()
	above, noise, lines := 14, 7, 51
	app1, dis1, app2, dis2 := 0.0, 3236.0, 21.0, 3916.0
	s := &output.Summary{Tool: "bandsolve test", Components: 2, RankEstimate: 2, Spectra: 58, Points: 6950,
		Mode: "species", Baseline: "poly:3", BaselineReason: "chosen by the F-test", ResidualToNoise: 1.38,
		NoiseWeights: "noise", FactorsAboveNoise: &above, NoiseLikeFactors: &noise,
		EFA: &output.EFAJSON{Factors: 3, Method: "exact", Experiments: 1, Components: []output.EFAEntry{
			{Component: "species_1", AppearS: &app1, DisappearS: &dis1},
			{Component: "species_2", AppearS: &app2, DisappearS: &dis2}}},
		NuisanceFactors: []output.NuisanceJSON{
			{Factor: 3, Kind: "minor", Looks: "smooth in time", SharePercent: 0.0065,
				Refit: &output.MinorRefitJSON{OutBandDrop: 23900, PeakTimeS: 10092, Verdict: "not with a band of its own",
					Looks: "as one more component its profile is rising then falling, largest at t = 10092 s (a transient)"}},
			{Factor: 6, Kind: "outlier", Looks: "concentrated in 2 spectrum(s)", SharePercent: 0.000825, TimesS: []float64{41, 103}}},
		WaterVapour: &output.VapourJSON{Checked: true, Range: []float64{3550.31, 3949.98}, Lines: &lines},
		Warnings:    []string{"spectrum 3 (t = 120 s) differs"}}
	raw := map[string]json.RawMessage{}
	b, err := json.Marshal(s)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &raw); err != nil {
		t.Fatal(err)
	}
	return &Folder{Summary: s, SummaryRaw: raw, AsRun: TimeUnitRecord("min")}
}

// With --time-unit min every time the report shows is in minutes (1 min =
// 60 s, SI): the EFA windows, a factor's spectra, a refit's peak time and
// the times inside the run's sentences; summary.json's keys are not shown.
func TestMoreResultsInReportUnit(t *testing.T) {
	f := minuteFolder(t)
	html, err := buildFrom(f, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	page := string(html)
	s := f.Summary
	for _, want := range []string{
		trimFloat(*s.EFA.Components[0].DisappearS/60, 4), // 53.93
		trimFloat(*s.EFA.Components[1].AppearS/60, 4),    // 0.35
		trimFloat(*s.EFA.Components[1].DisappearS/60, 4), // 65.27
		"falls below what EFA can see at / min",
		trimFloat(s.NuisanceFactors[1].TimesS[0]/60, 4) + ", " + trimFloat(s.NuisanceFactors[1].TimesS[1]/60, 4),
		fmt.Sprintf("largest at t = %s min", trimFloat(s.NuisanceFactors[0].Refit.PeakTimeS/60, 4)), // 168.2
		fmt.Sprintf("(t = %s min (120 s))", trimFloat(120.0/60, 4)),                                 // a warning keeps what --drop takes
	} {
		if !strings.Contains(page, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	for _, key := range []string{"disappear_s", "appear_s", "out_of_band_drop_noise_variances", "nuisance_factors[", "t = 10092 s", "10092"} {
		if strings.Contains(page, key) {
			t.Errorf("report shows %q", key)
		}
	}
	if strings.Contains(page, "disappears") {
		t.Errorf("report says a component disappears where EFA stops seeing it")
	}
}

// Times in the run's sentences, ranges included; numbers followed by other
// words stay (1 h = 3600 s, SI).
func TestTimesInText(t *testing.T) {
	for _, c := range []struct{ in, unit, want string }{
		{"largest at t = 10092 s (a transient)", "min", "largest at t = 168.2 min (a transient)"},
		{"the mean of the first 3 spectra (0–7200 s)", "h", "the mean of the first 3 spectra (0–2 h)"},
		{"2 spectrum(s) at 3 sites", "min", "2 spectrum(s) at 3 sites"},
		{"t = 90 s", "s", "t = 90 s"},
	} {
		if got := timesInText(c.in, c.unit); got != c.want {
			t.Errorf("timesInText(%q, %s) = %q, want %q", c.in, c.unit, got, c.want)
		}
	}
	if got, want := timesWithSeconds("spectra (0–7200 s) differ", "h"), "spectra (0–2 h (0–7200 s)) differ"; got != want {
		t.Errorf("timesWithSeconds = %q, want %q", got, want)
	}
}
