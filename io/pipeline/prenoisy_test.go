package pipeline

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/spectra"
)

// realUrethane is the folder of one series of the real urethane ATR-FTIR exports
// (jevandezande/spectra, MIT; ../shared/real-data/urethane-atr/README.md), beside the
// checkout or under REAL_DATA (as for testdata/perf/reference-runs.sh); the test is
// skipped where there is none.
func realUrethane(t *testing.T, series string) string {
	t.Helper()
	real := filepath.Join("..", "..", "..", "shared", "real-data")
	if env := os.Getenv("REAL_DATA"); env != "" {
		real = env
	}
	dir := filepath.Join(real, "urethane-atr", series)
	if _, err := os.Stat(dir); err != nil {
		t.Skipf("no real series at %s", dir)
	}
	return dir
}

// isocyanateAreas is the real-data README's independent measure of the
// reaction in every spectrum of s: the area of the N=C=O band over
// 2100–2400 cm⁻¹ above the mean of 2500–2600 cm⁻¹ (ncoArea).
func isocyanateAreas(s *spectra.Series) []float64 {
	n, _ := s.Values.Dims()
	area := make([]float64, n)
	for i := range area {
		area[i] = ncoArea(s.Axis, s.Values.RawRowView(i))
	}
	return area
}

// realUrethaneSeries is realUrethane's folder, the series read from it
// (times from the file names) and its isocyanateAreas.
func realUrethaneSeries(t *testing.T, series string) (dir string, ser *spectra.Series, area []float64) {
	t.Helper()
	dir = realUrethane(t, series)
	ser, err := spectra.Load(dir, spectra.FolderOptions{TimesFromName: true})
	if err != nil {
		t.Fatal(err)
	}
	return dir, ser, isocyanateAreas(ser)
}

// resolveFolder resolves a folder of absorbance exports whose names carry
// their times (the real urethane series as their README says, or a copy),
// with model (none when empty) and the report, checks and uniqueness
// ranges off.
func resolveFolder(t *testing.T, dir, model string) *Result {
	t.Helper()
	st := NewSettings()
	st.Data, st.Kind, st.TimesFromName, st.Model = []string{dir}, "absorbance", true, model
	st.Report, st.Bands, st.Checks = "off", "off", "off"
	r, err := Run(st, nil)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// repeatRatio is R = [Σ_j (d₂ − d₁)²/2] / [Σ_j (d₃ − 2d₂ + d₁)²/6] over the first three
// spectra: for repeats of one state with equal noise both are Σ σ_j² (the variance of a
// sum of independent values, definition), so R ≈ 1; a change δ between spectra 1 and 2
// adds δ²/2 above and, if the change goes on at the same pace, nothing below, so R > 1.
// The second difference cancels any change linear over the three, so R does not rest
// on what the noise of the whole series is.
func repeatRatio(s *spectra.Series) float64 {
	var first, second float64
	for j := range s.Axis {
		d1, d2, d3 := s.Values.At(0, j), s.Values.At(1, j), s.Values.At(2, j)
		first += (d2 - d1) * (d2 - d1) / 2
		second += (d3 - 2*d2 + d1) * (d3 - 2*d2 + d1) / 6
	}
	return first / second
}

// TestPreRepeatsOfNoisierSpectra: --pre 3 on the real urethane series. At catalyst 0.01
// the first three spectra, 21 s apart, are repeats within their noise: R = 0.965
// (repeatRatio; 1 for repeats) and the isocyanate area (the README's measure) moves by
// 1.3 % between spectra 1 and 3. But they are noisier than the rest of the series (an
// instrument averaging over the interval: 21 s here, 500–900 s later), and measured
// against the series' median noise their steps looked like a change: "spectrum 2 …
// differs from the one before it by 2.26 times the noise … it probably changed already".
// At catalyst 1.00 the reaction runs from the first spectrum (R = 3.93, the area falls by
// 15.6 % between spectra 1 and 3), and the warning must stay.
func TestPreRepeatsOfNoisierSpectra(t *testing.T) {
	for _, tc := range []struct {
		series  string
		changed bool
	}{{"catalyst-0.01", false}, {"catalyst-1.00", true}} {
		dir := realUrethane(t, tc.series)
		ser, err := spectra.Load(dir, spectra.FolderOptions{TimesFromName: true})
		if err != nil {
			t.Fatal(err)
		}
		// The premise, from the data alone: R within 1 ± 0.1 for repeats, above 2 for a
		// change; the isocyanate area within 3 % over spectra 1–3, or down by over 10 %.
		rr := repeatRatio(ser)
		area := isocyanateAreas(ser)
		a0, a2 := area[0], area[2]
		rel := (a2 - a0) / a0
		if premise := (rr > 2 && rel < -0.1) == tc.changed && (rr < 1.1 && rr > 0.9 && rel > -0.03) != tc.changed; !premise {
			t.Fatalf("%s: R = %.3g, isocyanate area %.4g → %.4g: not the data this test was written for", tc.series, rr, a0, a2)
		}
		s := NewSettings()
		s.Data, s.Kind, s.TimesFromName, s.Pre = []string{dir}, "absorbance", true, 3
		// Two components (the README's one reaction) and no refits: the check reads the
		// data, not the resolution.
		s.Bands, s.Checks, s.Components, s.Init = "off", "off", "2", "purest"
		r, err := Run(s, nil)
		if err != nil {
			t.Fatal(err)
		}
		var named []string
		for _, w := range r.Warnings {
			if strings.Contains(w, "probably changed already") {
				named = append(named, w)
			}
		}
		if (len(named) > 0) != tc.changed {
			t.Errorf("%s --pre 3 (R = %.3g, isocyanate area %+.1f %% over spectra 1–3): warned %v, want %v\n%q", tc.series, rr, 100*rel, len(named) > 0, tc.changed, named)
		}
		t.Logf("%s: R = %.3g, isocyanate area %+.1f %% over spectra 1–3; %q", tc.series, rr, 100*rel, named)
	}
}
