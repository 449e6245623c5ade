package pipeline

import (
	"math"
	"math/rand/v2"
	"runtime"
	"sort"
	"strings"
	"testing"
	"time"

	"github.com/bandsolve/bandsolve/internal/cputime"
	"github.com/bandsolve/bandsolve/io/spectra"
	"gonum.org/v1/gonum/mat"
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
// size; see checkSubsystemsAtScale for when the data cannot tell their
// order). Timings belong here and in docs/performance-history.md, never in a test.
func BenchmarkHardModelSubsystems(b *testing.B) {
	c := newSubsystems(2000, 3001, 5000)
	dir := b.TempDir()
	series, blank := c.write(b, dir, 30, rand.New(rand.NewPCG(3, 5)))
	runtime.GC()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		t0, c0 := time.Now(), cputime.Process()
		if _, err := spectra.ReadMatrixCSV(series); err != nil {
			b.Fatal(err)
		}
		parse, parseCPU := time.Since(t0).Seconds(), cputime.Process()-c0
		runtime.GC()
		t0, c0 = time.Now(), cputime.Process()
		log := newPhaseLog()
		r, err := Run(subsystemsSettings(series, blank), log)
		if err != nil {
			b.Fatal(err)
		}
		log.Write([]byte("done\n"))
		whole, wholeCPU := time.Since(t0).Seconds(), cputime.Process()-c0
		b.Logf("parse alone %.3f s (%.3f s CPU); phases of the run:\n%s", parse, parseCPU, log)
		b.ReportMetric(parse, "parse-s")
		b.ReportMetric(whole, "whole-s")
		b.ReportMetric(whole/parse, "whole/parse")
		if parseCPU > 0 {
			b.ReportMetric(wholeCPU/parseCPU, "whole/parse-cpu")
		}
		b.ReportMetric(float64(r.ALS.Iterations), "hard-soft-iterations")
		b.ReportMetric(worstCosine(r.ALS.S, c.Spectra), "worst-spectrum-cosine")
		checkSubsystemsAtScale(b, r, c)
	}
}

// orderUndetermined is the start of the warning the exchange check gives
// when another order of the rate constants fits as well with free and
// with non-negative spectra (swapCheck).
const orderUndetermined = "the data alone cannot tell the order of the rate constants"

// checkSubsystemsAtScale is checkSubsystems unless the run warns that the
// data cannot tell the order of the rate constants. For A -> B -> C; D -> E
// that can be the truth: the model columns span {1, e^{−k1 t}, e^{−k2 t},
// e^{−k3 t}} in any order of the three constants (the concentrations are
// sums of these exponentials, Bateman 1910), and with two closed subsystems
// non-negative spectra need not choose either (a spectrum direction is
// free, see docs/kinetics.md). Then the data determine the set of rate
// constants and not which step has which, so the set is checked: the
// reported constants in increasing order against the true ones in
// increasing order, each within 3 % and 4 of its standard errors. Without
// the warning the order must be right (checkSubsystems), so a wrong order
// the run does not own up to still fails.
func checkSubsystemsAtScale(tb testing.TB, r *Result, c *seriesCase) {
	warned := false
	for _, w := range r.Warnings {
		warned = warned || strings.Contains(w, orderUndetermined)
	}
	if !warned {
		checkSubsystems(tb, r, c)
		return
	}
	kn := r.Kinetics
	if kn == nil || kn.Reported() == nil || kn.Reported().Method != "data" {
		tb.Fatalf("no data fit reported; warnings %q", r.Warnings)
	}
	rep := kn.Reported().Fit
	got := make([]int, len(rep.K))
	for j := range got {
		got[j] = j
	}
	sort.Slice(got, func(a, b int) bool { return rep.K[got[a]] < rep.K[got[b]] })
	truth := append([]float64(nil), c.K...)
	sort.Float64s(truth)
	tb.Logf("the run warns that the order is not determined by the data; checking the set of rate constants")
	for a, j := range got {
		k, se := rep.K[j], rep.KStdErr[j]
		tb.Logf("%s: k = %.6g ± %.2g against the %d. smallest true value %g (%+.2f %%, %+.1f standard errors)", kn.Scheme.Steps[j].Text, k, se, a+1, truth[a], 100*(k/truth[a]-1), (k-truth[a])/se)
		if !(se > 0) || math.Abs(k-truth[a]) > 4*se || math.Abs(k/truth[a]-1) > 0.03 {
			tb.Errorf("%s: k = %.6g ± %.2g, want within 3 %% and 4 standard errors of %g, the true value of the same rank", kn.Scheme.Steps[j].Text, k, se, truth[a])
		}
	}
}

// newChain builds an invented scenario of six species in one chain,
// A -> B -> C -> D -> E -> F (k1…k5 distinct), from [A]0 = 1 at t0 = 0.
// Unlike newSubsystems it is not rank deficient: the concentrations span
// {1, e^{−k1 t}, …, e^{−k5 t}}, six functions for six species. They are
// Bateman's solution of a first-order chain with distinct constants
// (Bateman 1910; Atkins' Physical Chemistry, consecutive reactions, from
// memory):
//
//	[X_n] = A0 (k1 ⋯ k_{n−1}) Σ_{i≤n} e^{−k_i t} / Π_{j≤n, j≠i} (k_j − k_i),  n ≤ 5,
//	[F] = A0 − Σ_{n≤5} [X_n].
//
// Each species has a band of its own and one near a neighbour's, so every
// spectrum differs from every other.
func newChain(n, m int, span float64) *seriesCase {
	c := &seriesCase{K: []float64{4e-3, 2.2e-3, 1.3e-3, 8e-4, 4.5e-4}, T0: 0}
	c.Times = make([]float64, n)
	for i := range c.Times {
		c.Times[i] = span * float64(i) / float64(n-1)
	}
	c.Axis = make([]float64, m)
	for j := range c.Axis {
		c.Axis[j] = 4000 - 3000*float64(j)/float64(m-1)
	}
	const a0 = 1.0
	c.Conc = mat.NewDense(n, 6, nil)
	for i, tm := range c.Times {
		t := math.Max(0, tm-c.T0)
		rest := a0
		for s := 0; s < 5; s++ {
			pre := a0
			for j := 0; j < s; j++ {
				pre *= c.K[j]
			}
			sum := 0.0
			for a := 0; a <= s; a++ {
				den := 1.0
				for j := 0; j <= s; j++ {
					if j != a {
						den *= c.K[j] - c.K[a]
					}
				}
				sum += math.Exp(-c.K[a]*t) / den
			}
			c.Conc.Set(i, s, pre*sum)
			rest -= pre * sum
		}
		c.Conc.Set(i, 5, rest)
	}
	own := []float64{3500, 3150, 2800, 2450, 2100, 1750}
	shared := []float64{1620, 1600, 1640, 1180, 1150, 1210}
	c.Spectra = mat.NewDense(m, 6, nil)
	for j, x := range c.Axis {
		for s := 0; s < 6; s++ {
			u := (x - own[s]) / 25
			v := (x - shared[s]) / 30
			c.Spectra.Set(j, s, 0.6*math.Exp(-0.5*u*u)+0.3*math.Exp(-0.5*v*v))
		}
	}
	return c
}

func chainSettings(series, blank string) *Settings {
	s := NewSettings()
	s.Data, s.Kind, s.Blanks = []string{series}, "single-beam", []string{blank}
	s.Components = "6"
	s.Model = "A -> B -> C -> D -> E -> F"
	s.HardModel = true
	s.T0 = "0"
	s.Report = "off"
	return s
}

// BenchmarkHardModelChain is hard–soft with six species on data that are
// not rank deficient: 2000 × 3001 single beams of A -> B -> C -> D -> E -> F
// (newChain), detector noise constant in counts (30 counts on a 3·10⁴
// peak), --components 6 --model 'A -> B -> C -> D -> E -> F' --hard-model
// and the other defaults, report off. It reports the run's CPU time over
// the parse's (issue 15's target: 30×) and checks every reported rate
// constant against the value the data were made from, in the order
// written (3 % and 4 standard errors).
func BenchmarkHardModelChain(b *testing.B) {
	c := newChain(2000, 3001, 6000)
	dir := b.TempDir()
	series, blank := c.write(b, dir, 30, rand.New(rand.NewPCG(7, 11)))
	runtime.GC()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		t0, c0 := time.Now(), cputime.Process()
		if _, err := spectra.ReadMatrixCSV(series); err != nil {
			b.Fatal(err)
		}
		parse, parseCPU := time.Since(t0).Seconds(), cputime.Process()-c0
		runtime.GC()
		t0, c0 = time.Now(), cputime.Process()
		log := newPhaseLog()
		r, err := Run(chainSettings(series, blank), log)
		if err != nil {
			b.Fatal(err)
		}
		log.Write([]byte("done\n"))
		whole, wholeCPU := time.Since(t0).Seconds(), cputime.Process()-c0
		b.Logf("parse alone %.3f s (%.3f s CPU); phases of the run:\n%s", parse, parseCPU, log)
		b.ReportMetric(parse, "parse-s")
		b.ReportMetric(whole, "whole-s")
		b.ReportMetric(whole/parse, "whole/parse")
		if parseCPU > 0 {
			b.ReportMetric(wholeCPU/parseCPU, "whole/parse-cpu")
		}
		b.ReportMetric(float64(r.ALS.Iterations), "hard-soft-iterations")
		b.ReportMetric(worstCosine(r.ALS.S, c.Spectra), "worst-spectrum-cosine")
		checkRates(b, r, c.K)
	}
}

// BenchmarkHardModelChain20000x3000 is BenchmarkHardModelChain on 20 000
// spectra × 3000 points (newChain over the same span, a 650 MB file): the
// peak resident memory of a --hard-model run at the size whose default run
// issue 15 bounds (2.5 GB), each phase's peak in the log. No parse ratio,
// the rate constants checked as there. Only when asked for: -bench
// Chain20000.
func BenchmarkHardModelChain20000x3000(b *testing.B) {
	explicitly(b, "Chain20000")
	c := newChain(20000, 3000, 6000)
	dir := b.TempDir()
	series, blank := c.write(b, dir, 30, rand.New(rand.NewPCG(7, 11)))
	runtime.GC()
	resetPeakRSS()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		log := newPhaseLog()
		r, err := Run(chainSettings(series, blank), log)
		if err != nil {
			b.Fatal(err)
		}
		log.Write([]byte("done\n"))
		b.Logf("phases of the run:\n%s", log)
		checkRates(b, r, c.K)
	}
	b.StopTimer()
	reportPeakMemory(b)
}

// checkRates holds each reported rate constant, in the order written, to
// 3 % and 4 standard errors of the value the data were made from.
func checkRates(tb testing.TB, r *Result, truth []float64) {
	kn := r.Kinetics
	if kn == nil || kn.Reported() == nil || kn.Reported().Method != "data" {
		tb.Fatalf("no data fit reported; warnings %q", r.Warnings)
	}
	rep := kn.Reported().Fit
	for j, want := range truth {
		k, se := rep.K[j], rep.KStdErr[j]
		tb.Logf("%s: k = %.6g ± %.2g, truth %g (%+.2f %%, %+.1f standard errors)", kn.Scheme.Steps[j].Text, k, se, want, 100*(k/want-1), (k-want)/se)
		if !(se > 0) || math.Abs(k-want) > 4*se || math.Abs(k/want-1) > 0.03 {
			tb.Errorf("%s: k = %.6g ± %.2g, want within 3 %% and 4 standard errors of %g", kn.Scheme.Steps[j].Text, k, se, want)
		}
	}
	if tb.Failed() {
		tb.Logf("warnings %q\nnotes %q", r.Warnings, r.Notes)
	}
}
