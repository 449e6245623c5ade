package pipeline

import (
	"math/rand/v2"
	"runtime"
	"testing"
	"time"

	"github.com/bandsolve/bandsolve/io/spectra"
)

// BenchmarkHardModelSubsystems is the done-when case of the kinetics work:
// 2000 × 3001 single beams of two independent subsystems, A -> B -> C;
// D -> E (five species, data rank 4; newSubsystems), noise constant in
// counts, run with --components 5 --model 'A -> B -> C; D -> E'
// --hard-model and the other defaults (report off: this measures the
// analysis). It reports the whole run, the parse of the same CSV alone and
// their ratio (the target of hard–soft with 5–6 species: within 30× the
// parse), and checks the reported rate constants against the truth (3 %
// and 4 standard errors, as TestTwoSubsystemsHardModel does at a small
// size). Timings belong here and in docs/performance.md, never in a test.
func BenchmarkHardModelSubsystems(b *testing.B) {
	c := newSubsystems(2000, 3001, 5000)
	dir := b.TempDir()
	series, blank := c.write(b, dir, 30, rand.New(rand.NewPCG(3, 5)))
	runtime.GC()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		t0, c0 := time.Now(), cpuNow()
		if _, err := spectra.ReadMatrixCSV(series); err != nil {
			b.Fatal(err)
		}
		parse, parseCPU := time.Since(t0).Seconds(), cpuNow()-c0
		runtime.GC()
		t0, c0 = time.Now(), cpuNow()
		log := newPhaseLog()
		r, err := Run(subsystemsSettings(series, blank), log)
		if err != nil {
			b.Fatal(err)
		}
		log.Write([]byte("done\n"))
		whole, wholeCPU := time.Since(t0).Seconds(), cpuNow()-c0
		b.Logf("parse alone %.3f s (%.3f s CPU); phases of the run:\n%s", parse, parseCPU, log)
		b.ReportMetric(parse, "parse-s")
		b.ReportMetric(whole, "whole-s")
		b.ReportMetric(whole/parse, "whole/parse")
		if parseCPU > 0 {
			b.ReportMetric(wholeCPU/parseCPU, "whole/parse-cpu")
		}
		b.ReportMetric(float64(r.ALS.Iterations), "hard-soft-iterations")
		b.ReportMetric(worstCosine(r.ALS.S, c.Spectra), "worst-spectrum-cosine")
		checkSubsystems(b, r, c)
	}
}
