package pipeline

import (
	"os"
	"path/filepath"
	"testing"
	"time"
)

// BenchmarkRealSeries is what a user waits for on a real series: the whole
// resolve, report on, of the urethane ATR-FTIR exports (58 spectra × 6950
// points, one file each, times from the names; jevandezande/spectra, MIT,
// see ../shared/real-data/urethane-atr/README.md) with the default settings
// (noise weights, the baseline order chosen by F-test, outlier spectra set
// aside, minor factors refitted, uniqueness ranges). It logs each phase's
// wall and CPU time. The real-data folder is the one beside the checkout,
// or REAL_DATA's (as for testdata/perf/reference-runs.sh); skipped where
// there is none.
func BenchmarkRealSeries(b *testing.B) {
	real := filepath.Join("..", "..", "..", "shared", "real-data")
	if env := os.Getenv("REAL_DATA"); env != "" {
		real = env
	}
	dir := filepath.Join(real, "urethane-atr", "catalyst-1.00")
	if _, err := os.Stat(dir); err != nil {
		b.Skipf("no real series at %s", dir)
	}
	out := filepath.Join(b.TempDir(), "out")
	for b.Loop() {
		s := NewSettings()
		s.Data, s.Kind, s.TimesFromName = []string{dir}, "absorbance", true
		s.Out, s.Force, s.Quiet = out, true, true
		t0 := time.Now()
		r, log := resolveIntoFolder(b, s)
		b.Logf("%.3f s; phases:\n%s", time.Since(t0).Seconds(), log)
		b.ReportMetric(float64(r.Components), "components")
	}
}
