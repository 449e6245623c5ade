package pipeline

import (
	"bufio"
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"runtime/pprof"
	"runtime/trace"
	"slices"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/bandsolve/bandsolve/internal/cputime"
	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/spectra"
	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// largeTruth is the benchmark's invented scenario: a temperature-programmed
// in-situ run in which nsp surface species form and vanish in turn, each
// over a window of the run that overlaps its neighbours' (so every species
// is alone for a short while and the resolution is unique), with closure
// (the fractions add to 1). Each species has three Gaussian bands of its
// own (no band shared), 3000 cm⁻¹ wide axis from 4000 cm⁻¹ down.
//
// A consecutive first-order chain is not used: its intermediates are never
// alone, so with selective spectra and no zero in the profiles the
// constraints leave a wide band of rotations with equal fit (Tauler 2001);
// ALS then creeps along that flat valley for thousands of iterations and
// stops wherever the noise tilts it, which is no measure of speed.
func largeTruth(n, m, nsp int) (axis []float64, spec, conc *mat.Dense) {
	axis = make([]float64, m)
	for j := range axis {
		axis[j] = 4000 - float64(j)*3000/float64(m-1)
	}
	spec = mat.NewDense(m, nsp, nil)
	for k := 0; k < nsp; k++ {
		for j, x := range axis {
			v := 0.0
			for b := 0; b < 3; b++ {
				c := 1000 + float64((k*3+b)*197%2900)
				d := (x - c) / (12 + float64(b*5))
				v += (0.2 + 0.1*float64(b)) * math.Exp(-0.5*d*d)
			}
			spec.Set(j, k, v)
		}
	}
	// Windows of half-width h = 0.8 of the spacing: neighbours overlap over
	// 60 % of the spacing, and each species is alone over the rest.
	conc = mat.NewDense(n, nsp, nil)
	h := 0.8 / float64(nsp)
	w := make([]float64, nsp)
	for i := 0; i < n; i++ {
		t := float64(i) / float64(n-1)
		sum := 0.0
		for k := range w {
			u := (t - (float64(k)+0.5)/float64(nsp)) / h
			w[k] = 0
			if u*u < 1 {
				w[k] = (1 - u*u) * (1 - u*u)
			}
			sum += w[k]
		}
		for k := range w {
			conc.Set(i, k, w[k]/sum)
		}
	}
	return axis, spec, conc
}

// writeLarge writes an n × m single-beam series of largeTruth's scenario,
// with 0.1 % noise per single beam, plus a blank, as matrix CSV files.
func writeLarge(tb testing.TB, dir string, n, m, nsp int) (series, blank string) {
	tb.Helper()
	axis, spec, conc := largeTruth(n, m, nsp)
	return writeTruth(tb, dir, axis, spec, conc)
}

// writeTruth writes the single beams of absorbance conc specᵀ on axis, with
// writeLarge's noise, and their blank.
func writeTruth(tb testing.TB, dir string, axis []float64, spec, conc *mat.Dense) (series, blank string) {
	tb.Helper()
	n, nsp := conc.Dims()
	// One file row (axis point) at a time, so that writing a 20 000 × 3000
	// series does not hold its matrix in memory and the peak measured for
	// the run is the run's own.
	a := make([]float64, n)
	rng := rand.New(rand.NewPCG(1, 2))
	series, blank = filepath.Join(dir, "series.csv"), filepath.Join(dir, "blank.csv")
	f, err := os.Create(series)
	if err != nil {
		tb.Fatal(err)
	}
	w := bufio.NewWriterSize(f, 1<<20)
	w.WriteString("wavenumber")
	for i := 0; i < n; i++ {
		fmt.Fprintf(w, ",%d", i)
	}
	w.WriteByte('\n')
	env := func(x float64) float64 { u := (x - 2200) / 1800; return 3e4 * math.Exp(-u*u) }
	buf := make([]byte, 0, 32)
	for j, x := range axis {
		a = a[:0]
		for i := 0; i < n; i++ {
			v := 0.0
			for k := 0; k < nsp; k++ {
				v += conc.At(i, k) * spec.At(j, k)
			}
			a = append(a, v)
		}
		w.WriteString(strconv.FormatFloat(x, 'g', 8, 64))
		for i := 0; i < n; i++ {
			v := env(x) * math.Pow(10, -a[i]) * (1 + 1e-3*rng.NormFloat64())
			w.WriteByte(',')
			buf = strconv.AppendFloat(buf[:0], v, 'g', 8, 64)
			w.Write(buf)
		}
		w.WriteByte('\n')
	}
	w.Flush()
	f.Close()
	bf, err := os.Create(blank)
	if err != nil {
		tb.Fatal(err)
	}
	bw := bufio.NewWriter(bf)
	bw.WriteString("wavenumber,intensity\n")
	for _, x := range axis {
		// The blank is co-added from 64 scans (common practice), so its
		// noise is 1/8 of one spectrum's: a blank's noise is the same
		// pattern in every absorbance row, which closure lets the model
		// take into the spectra.
		fmt.Fprintf(bw, "%g,%g\n", x, env(x)*(1+1e-3/8*rng.NormFloat64()))
	}
	bw.Flush()
	bf.Close()
	return series, blank
}

func benchResolve(b *testing.B, n, m int) { benchResolveWeights(b, n, m, "noise") }

func benchResolveWeights(b *testing.B, n, m int, weights string) {
	dir := b.TempDir()
	series, blank := writeLarge(b, dir, n, m, 5)
	_, spec, _ := largeTruth(n, m, 5)
	s := NewSettings() // the defaults, as a user would run it
	s.Data, s.Kind, s.Blanks = []string{series}, "single-beam", []string{blank}
	s.Weights = weights
	runtime.GC()
	resetPeakRSS()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		r, err := Run(s, nil)
		if err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(float64(r.ALS.Iterations), "iterations")
		b.ReportMetric(float64(r.Components), "components")
		b.ReportMetric(worstCosine(r.ALS.S, spec), "worst-cosine")
	}
	b.StopTimer()
	reportPeakMemory(b)
}

// worstCosine matches each true spectrum with its closest resolved one and
// returns the smallest of those cosines (1 = every spectrum recovered).
func worstCosine(got, truth *mat.Dense) float64 {
	_, k := truth.Dims()
	_, kg := got.Dims()
	worst := 1.0
	for j := 0; j < k; j++ {
		y := mat.Col(nil, j, truth)
		best := -1.0
		for q := 0; q < kg; q++ {
			x := mat.Col(nil, q, got)
			var xy, xx, yy float64
			for i := range x {
				xy += x[i] * y[i]
				xx += x[i] * x[i]
				yy += y[i] * y[i]
			}
			best = math.Max(best, xy/math.Sqrt(xx*yy))
		}
		worst = math.Min(worst, best)
	}
	return worst
}

// resetPeakRSS restarts the kernel's peak resident set count of this process
// (Linux: writing 5 to /proc/self/clear_refs), so the peak read after a run
// is that run's; elsewhere it does nothing and the peak is the process's.
func resetPeakRSS() { _ = os.WriteFile("/proc/self/clear_refs", []byte("5"), 0) }

// reportPeakMemory reports the peak resident set (VmHWM, everything the
// process touched, mapped file pages included) and the Go runtime's Sys.
func reportPeakMemory(b *testing.B) {
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	b.ReportMetric(float64(ms.Sys)/(1<<20), "MB-sys")
	if mb := peakRSS(); mb > 0 {
		b.ReportMetric(mb, "MB-peak-rss")
	}
}

// explicitly skips a benchmark unless -bench names it (it contains want):
// the large ones take minutes to set up and must not run under -bench=. .
func explicitly(b *testing.B, want string) {
	if f := flag.Lookup("test.bench"); f == nil || !strings.Contains(f.Value.String(), want) {
		b.Skipf("large: run with -bench %s", want)
	}
}

// BenchmarkResolve100x1000 and BenchmarkResolve2000x3001 run the whole
// analysis (read, assemble, SVD, rank, EFA, ALS from two starts, constraint
// checks) with the default settings on single beams plus a blank.
func BenchmarkResolve100x1000(b *testing.B)  { benchResolve(b, 100, 1000) }
func BenchmarkResolve2000x3001(b *testing.B) { benchResolve(b, 2000, 3001) }

// BenchmarkResolve2000x3001Unweighted is the same with --weights off (every
// point alike, as before the noise model), and ...Weighted with --weights
// noise: the two are compared in docs/performance-history.md.
func BenchmarkResolve2000x3001Unweighted(b *testing.B) { benchResolveWeights(b, 2000, 3001, "off") }
func BenchmarkResolve2000x3001Weighted(b *testing.B)   { benchResolveWeights(b, 2000, 3001, "noise") }

// BenchmarkResolve20000x3000 is a long in-situ run: 60 million values,
// a 650 MB file. Only when asked for: -bench Resolve20000x3000.
func BenchmarkResolve20000x3000(b *testing.B) {
	explicitly(b, "20000")
	benchResolve(b, 20000, 3000)
}

// BenchmarkScaling doubles the number of spectra and, separately, the
// number of points. Only when asked for: -bench Scaling.
func BenchmarkScaling(b *testing.B) {
	explicitly(b, "Scaling")
	for _, sz := range [][2]int{{1000, 3000}, {2000, 3000}, {4000, 3000}, {8000, 3000},
		{2000, 750}, {2000, 1500}, {2000, 6000}} {
		b.Run(fmt.Sprintf("%dx%d", sz[0], sz[1]), func(b *testing.B) { benchResolve(b, sz[0], sz[1]) })
	}
}

// BenchmarkParse2000x3001 is the floor a whole resolve is compared with:
// merely reading the same CSV.
func BenchmarkParse2000x3001(b *testing.B) {
	dir := b.TempDir()
	series, _ := writeLarge(b, dir, 2000, 3001, 5)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := spectra.ReadMatrixCSV(series); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkALSBaseline2000x3001 is the practitioner's script: ALS on the
// full matrix with NNLS solved row by row and column by column (Lawson–
// Hanson on the data, no compression, no shared Gram matrix), for the
// speed-up ratio reported in docs/performance-history.md. It runs a fixed 10
// iterations; divide by 10 for the cost of one.
func BenchmarkALSBaseline2000x3001(b *testing.B) {
	dir := b.TempDir()
	series, blank := writeLarge(b, dir, 2000, 3001, 5)
	s := NewSettings()
	s.Data, s.Kind, s.Blanks, s.MaxIter, s.Components = []string{series}, "single-beam", []string{blank}, 1, "5"
	r, err := Run(s, nil)
	if err != nil {
		b.Fatal(err)
	}
	d := r.D
	c := mat.DenseCopyOf(r.ALS.C)
	b.ResetTimer()
	for it := 0; it < b.N; it++ {
		for iter := 0; iter < 10; iter++ {
			c = baselineIteration(b, d, c)
		}
	}
}

func baselineIteration(b *testing.B, d, c *mat.Dense) *mat.Dense {
	n, m := d.Dims()
	_, k := c.Dims()
	st := mat.NewDense(m, k, nil)
	for j := 0; j < m; j++ {
		x, err := mcr.NNLS(c, mat.Col(nil, j, d))
		if err != nil {
			b.Fatal(err)
		}
		st.SetRow(j, x)
	}
	cn := mat.NewDense(n, k, nil)
	for i := 0; i < n; i++ {
		x, err := mcr.NNLS(st, d.RawRowView(i))
		if err != nil {
			b.Fatal(err)
		}
		cn.SetRow(i, x)
	}
	return cn
}

// BenchmarkSpeedup2000x3001 measures the speed-up over the practitioner's
// script in one run: the whole analysis with the default settings (t_run),
// then, from the same purest-variable start, the script's iterations
// (BenchmarkALSBaseline's, timed over three) and the number it needs to
// converge (plain ALS without closure or extrapolation to the default
// tolerance: the same iterates as the script, since each half step is the
// same exact least-squares solution, computed here by the fast solver).
// Reported: baseline-s/iter, baseline-iters, baseline-s (their product),
// run-s, speedup (baseline-s / run-s), als-s (ALS alone, one start, on the
// compressed data) and speedup-per-iter (against one of its iterations).
func BenchmarkSpeedup2000x3001(b *testing.B) {
	dir := b.TempDir()
	series, blank := writeLarge(b, dir, 2000, 3001, 5)
	s := NewSettings()
	s.Data, s.Kind, s.Blanks = []string{series}, "single-beam", []string{blank}
	b.ResetTimer()
	for it := 0; it < b.N; it++ {
		t0 := time.Now()
		r, err := Run(s, nil)
		if err != nil {
			b.Fatal(err)
		}
		run := time.Since(t0).Seconds()
		c0, _, err := initialProfiles(r, r.Components)
		if err != nil {
			b.Fatal(err)
		}
		// Our ALS alone, per iteration, on the data it really runs on.
		// The run decomposed only the noise-scaled matrix: D's own
		// factors for the unweighted ALS compared here.
		fd, err := svd.Decompose(r.D, svd.DecomposeOptions{MaxFactors: largeFactors, Seed: r.Settings.Seed})
		if err != nil {
			b.Fatal(err)
		}
		rr := min(len(fd.S), r.Components+8)
		comp := mcr.Compressed{U: sliceCols(fd.U, rr), Sigma: fd.S[:rr], V: sliceCols(fd.V, rr), FrobSq: fd.FrobeniusSq}
		t0 = time.Now()
		ours, err := mcr.Resolve(comp, c0, mcr.Options{Mode: mcr.Species, Closure: true, Total: []float64{1}})
		if err != nil {
			b.Fatal(err)
		}
		oursIter := time.Since(t0).Seconds() / float64(ours.Iterations)
		plain, err := mcr.Resolve(mcr.Dense{D: r.D}, c0, mcr.Options{Mode: mcr.Species, NoExtrapolation: true, MaxIter: 5000})
		if err != nil {
			b.Fatal(err)
		}
		const timed = 3
		c := mat.DenseCopyOf(c0)
		t0 = time.Now()
		for i := 0; i < timed; i++ {
			c = baselineIteration(b, r.D, c)
		}
		perIter := time.Since(t0).Seconds() / timed
		base := perIter * float64(plain.Iterations)
		b.ReportMetric(run, "run-s")
		b.ReportMetric(perIter, "baseline-s/iter")
		b.ReportMetric(float64(plain.Iterations), "baseline-iters")
		b.ReportMetric(base, "baseline-s")
		b.ReportMetric(base/run, "speedup")
		b.ReportMetric(perIter/oursIter, "speedup-per-iter")
		b.ReportMetric(oursIter*float64(ours.Iterations), "als-s")
	}
}

// phaseLog timestamps the phase lines Run prints with the wall time and the
// process's CPU time, so a benchmark can say where one run's time went. CPU
// time is what the scaling exponents use: on a machine shared with other
// work the wall time of a phase says more about the neighbours than about
// the phase.
type phaseLog struct {
	start, cpu0 float64
	names       []string
	wall, cpu   []float64 // at the start of each phase
	// hwm is the process's peak resident set (MB) when each phase ended:
	// where a run's memory peak falls.
	hwm []float64
	// faults are the process's minor page faults at the start of each
	// phase: memory touched for the first time (docs/performance-history.md,
	// Machine), about 3.5 ms per MB (256 faults) on this kind of machine.
	faults []float64
}

func newPhaseLog() *phaseLog {
	return &phaseLog{start: wallNow(), cpu0: cputime.Process()}
}

// minorFaults is the process's count of minor page faults so far (0 where
// getrusage fails).
func minorFaults() float64 {
	var u syscall.Rusage
	if syscall.Getrusage(syscall.RUSAGE_SELF, &u) != nil {
		return 0
	}
	return float64(u.Minflt)
}

func wallNow() float64 { return float64(time.Now().UnixNano()) / 1e9 }

func (p *phaseLog) Write(b []byte) (int, error) {
	w, c := wallNow()-p.start, cputime.Process()-p.cpu0
	for _, l := range strings.Split(strings.TrimSpace(string(b)), "\n") {
		// Phases are named by their first word or two; "reading FILE" and
		// "data: n × m" are one phase with what follows them.
		f := strings.Fields(l)
		if len(f) == 0 {
			continue
		}
		name := f[0]
		if len(f) > 1 && !strings.HasPrefix(l, "reading") && !strings.HasPrefix(l, "data:") {
			name += " " + f[1]
		}
		if strings.HasPrefix(l, "data:") {
			continue
		}
		p.names, p.wall, p.cpu = append(p.names, name), append(p.wall, w), append(p.cpu, c)
		p.hwm = append(p.hwm, peakRSS())
		p.faults = append(p.faults, minorFaults())
		// The phase's name labels the CPU profile's samples of Run's
		// goroutine and of the goroutines it starts from now on (they
		// inherit it): pprof -tagfocus phase=NAME shows one phase.
		pprof.SetGoroutineLabels(pprof.WithLabels(context.Background(), pprof.Labels("phase", name)))
		trace.Log(context.Background(), "phase", name)
	}
	return len(b), nil
}

// peakRSS is the process's peak resident set so far in MB (VmHWM; 0 where
// /proc is not there).
func peakRSS() float64 {
	raw, err := os.ReadFile("/proc/self/status")
	if err != nil {
		return 0
	}
	for _, l := range strings.Split(string(raw), "\n") {
		if f := strings.Fields(l); len(f) >= 2 && f[0] == "VmHWM:" {
			kb, _ := strconv.ParseFloat(f[1], 64)
			return kb / 1024
		}
	}
	return 0
}

// durations gives each phase's wall and CPU seconds (a phase lasts until the
// next one starts; the last line closes the log).
func (p *phaseLog) durations() (names []string, wall, cpu []float64) {
	for i := 0; i+1 < len(p.names); i++ {
		names = append(names, p.names[i])
		wall = append(wall, p.wall[i+1]-p.wall[i])
		cpu = append(cpu, p.cpu[i+1]-p.cpu[i])
	}
	return names, wall, cpu
}

func (p *phaseLog) String() string {
	names, wall, cpu := p.durations()
	var b strings.Builder
	for i := range names {
		fmt.Fprintf(&b, "  %-32s %7.3f s wall %7.3f s CPU %6.0f MB peak RSS %6.1f MB faulted\n", names[i], wall[i], cpu[i], p.hwm[i+1], (p.faults[i+1]-p.faults[i])*pageMB)
	}
	return b.String()
}

// pageMB is one page in MB.
var pageMB = float64(os.Getpagesize()) / (1 << 20)

// parseCPU is the CPU time of the last parse wholeRun timed, parseHWM the
// peak resident set (MB) after it.
var parseCPU, parseHWM float64

// wholeRun is what `bandsolve resolve` does with the default settings,
// report included (read, resolve, write the folder, draw the report),
// preceded in the same process by merely parsing the CSV: whole/parse is
// the figure of merit, since both suffer alike from other load on a shared
// machine.
func wholeRun(b *testing.B, series, blank, out string) (parse, whole float64, log *phaseLog, r *Result) {
	trace.Log(context.Background(), "phase", "parse alone")
	t0, c0 := time.Now(), cputime.Process()
	if _, err := spectra.ReadMatrixCSV(series); err != nil {
		b.Fatal(err)
	}
	parse = time.Since(t0).Seconds()
	parseCPU, parseHWM = cputime.Process()-c0, peakRSS()
	runtime.GC()
	s := NewSettings()
	s.Data, s.Kind, s.Blanks = []string{series}, "single-beam", []string{blank}
	s.Out, s.Force, s.Quiet = out, true, true
	t0 = time.Now()
	r, log = resolveIntoFolder(b, s)
	whole = time.Since(t0).Seconds()
	return parse, whole, log, r
}

// resolveIntoFolder is what `bandsolve resolve` does with s after reading
// its flags: the run, every result file and the report written into s.Out,
// each phase logged.
func resolveIntoFolder(b *testing.B, s *Settings) (*Result, *phaseLog) {
	log := newPhaseLog()
	r, err := runForFolder(s, log)
	if err != nil {
		b.Fatal(err)
	}
	log.Write([]byte("writing results\n"))
	stage, err := output.NewStage(s.Out, true)
	if err != nil {
		b.Fatal(err)
	}
	if err := finish(r, stage, nil, Streams{Out: io.Discard}); err != nil {
		b.Fatal(err)
	}
	if err := stage.Commit(); err != nil {
		b.Fatal(err)
	}
	log.Write([]byte("done\n"))
	return r, log
}

func benchWhole(b *testing.B, n, m int) {
	dir := b.TempDir()
	series, blank := writeLarge(b, dir, n, m, 5)
	benchWholeOn(b, dir, series, blank)
}

func benchWholeOn(b *testing.B, dir, series, blank string) {
	runtime.GC()
	resetPeakRSS()
	b.ResetTimer()
	var parses, wholes, ratios, ratiosCPU []float64
	iterations := 0
	for i := 0; i < b.N; i++ {
		parse, whole, log, r := wholeRun(b, series, blank, filepath.Join(dir, "out"))
		b.Logf("parse alone %.3f s wall %.3f s CPU %.0f MB peak RSS; phases of the whole run:\n%s", parse, parseCPU, parseHWM, log)
		// The same ratio in CPU time, steadier when other work shares the
		// cores: each phase's CPU time summed against the parse's.
		_, _, cpu := log.durations()
		wholeCPU := 0.0
		for _, c := range cpu {
			wholeCPU += c
		}
		parses, wholes = append(parses, parse), append(wholes, whole)
		ratios, ratiosCPU = append(ratios, whole/parse), append(ratiosCPU, wholeCPU/parseCPU)
		iterations = r.ALS.Iterations
	}
	b.StopTimer()
	b.Logf("whole/parse per run, in run order: %.2f", ratios)
	// Medians over the b.N runs, each ratio taken within one run: the last
	// run alone, reported before, moved by ±10 % from one process to the
	// next with the parse's own spread.
	b.ReportMetric(median(parses), "parse-s")
	b.ReportMetric(median(wholes), "whole-s")
	b.ReportMetric(median(ratios), "whole/parse")
	b.ReportMetric(median(ratiosCPU), "whole/parse-cpu")
	b.ReportMetric(float64(iterations), "iterations")
	reportPeakMemory(b)
}

// median of v (the mean of the middle two for an even count); v is sorted.
func median(v []float64) float64 {
	if len(v) == 0 {
		return 0
	}
	slices.Sort(v)
	if n := len(v); n%2 == 0 {
		return (v[n/2-1] + v[n/2]) / 2
	}
	return v[len(v)/2]
}

// BenchmarkWhole2000x3001 is the target of the default answer: the whole
// resolve, report on, against the parse of the same file.
func BenchmarkWhole2000x3001(b *testing.B) { benchWhole(b, 2000, 3001) }

// BenchmarkWholeMinor2000x3001 is BenchmarkWhole2000x3001 with a sixth species
// whose amount grows from 0 to 1 % over the run: a factor the size test sets
// aside as minor and the refit test refits, so the resolution keeps what a
// second one would need (the rows it fills, not a copy of D). Only when asked
// for: -bench WholeMinor.
func BenchmarkWholeMinor2000x3001(b *testing.B) {
	explicitly(b, "WholeMinor")
	dir := b.TempDir()
	axis, spec, conc := largeTruth(2000, 3001, 6)
	for i := 0; i < 2000; i++ {
		conc.Set(i, 5, 0.01*float64(i)/2000)
	}
	series, blank := writeTruth(b, dir, axis, spec, conc)
	benchWholeOn(b, dir, series, blank)
}

// BenchmarkWhole20000x3000: the same on a 60-million-value series. Only
// when asked for: -bench Whole20000x3000.
func BenchmarkWhole20000x3000(b *testing.B) {
	explicitly(b, "Whole20000")
	benchWhole(b, 20000, 3000)
}

// BenchmarkWhole50000x3000: the same on 150 million values (a 1.5 GB file,
// written to a temporary folder first), for the peak resident memory of the
// largest series issue 15 names. Only when asked for: -bench Whole50000x3000.
func BenchmarkWhole50000x3000(b *testing.B) {
	explicitly(b, "Whole50000")
	benchWhole(b, 50000, 3000)
}

// BenchmarkScalingPhases runs the whole resolve at n = 500 … 4000 spectra ×
// 3000 points and at 2000 spectra × m = 750 … 6000 points (four sizes each,
// doubling), and prints for every phase its CPU time and the exponent of its
// growth, log₂ of the ratio per doubling (1 = linear, 2 = quadratic), fitted
// by least squares over the sizes. One run of the smallest size comes first
// and is not counted: the first run of a process pays alone for what every
// later one finds done (the heap grown from nothing, its pages touched), which
// tilted the fit over three sizes by its smallest point. Only when asked
// for: -bench ScalingPhases.
func BenchmarkScalingPhases(b *testing.B) {
	explicitly(b, "ScalingPhases")
	series := map[string][][2]int{
		"n": {{500, 3000}, {1000, 3000}, {2000, 3000}, {4000, 3000}},
		"m": {{2000, 750}, {2000, 1500}, {2000, 3000}, {2000, 6000}},
	}
	warm := b.TempDir()
	ws, wb := writeLarge(b, warm, 500, 750, 5)
	wholeRun(b, ws, wb, filepath.Join(warm, "out"))
	os.RemoveAll(warm)
	for _, dim := range []string{"n", "m"} {
		var names []string
		cpu := map[string][]float64{}
		for _, sz := range series[dim] {
			dir := b.TempDir()
			s, bl := writeLarge(b, dir, sz[0], sz[1], 5)
			parse, whole, log, _ := wholeRun(b, s, bl, filepath.Join(dir, "out"))
			ph, _, c := log.durations()
			if names == nil {
				names = ph
			}
			for i, name := range ph {
				cpu[name] = append(cpu[name], c[i])
			}
			cpu["(parse alone, wall)"] = append(cpu["(parse alone, wall)"], parse)
			cpu["(whole, wall)"] = append(cpu["(whole, wall)"], whole)
			os.RemoveAll(dir)
		}
		names = append(names, "(parse alone, wall)", "(whole, wall)")
		var out strings.Builder
		fmt.Fprintf(&out, "doubling %s over %v:\n", dim, series[dim])
		for _, name := range names {
			t := cpu[name]
			fmt.Fprintf(&out, "  %-32s", name)
			for _, v := range t {
				fmt.Fprintf(&out, " %7.3f s", v)
			}
			fmt.Fprintf(&out, "   exponent %5.2f\n", doublingExponent(t))
		}
		// Printed, not logged: the benchmark log is cut after a few lines.
		fmt.Print(out.String())
	}
}

// doublingExponent fits log₂ t = a + e·i over sizes that double with i and
// returns e; NaN when a time is missing or not positive.
func doublingExponent(t []float64) float64 {
	if len(t) < 2 {
		return math.NaN()
	}
	var sx, sy, sxx, sxy float64
	for i, v := range t {
		if !(v > 0) {
			return math.NaN()
		}
		x, y := float64(i), math.Log2(v)
		sx, sy, sxx, sxy = sx+x, sy+y, sxx+x*x, sxy+x*y
	}
	k := float64(len(t))
	return (k*sxy - sx*sy) / (k*sxx - sx*sx)
}

// BenchmarkScalingReading measures the reading phase alone, at the sizes of
// BenchmarkScalingPhases: the CSV parsed, the blank read, the series
// assembled as Run assembles it (blind points, noise model, both matrices'
// weights, absorbances) and checked for non-numbers. Each size is read three
// times after one read not counted, and the least CPU time is kept (other
// work on a shared machine only ever adds); it prints the CPU time of the
// parse and of the whole reading phase per size and their exponents of
// growth per doubling. Only when asked for: -bench ScalingReading.
func BenchmarkScalingReading(b *testing.B) {
	explicitly(b, "ScalingReading")
	series := map[string][][2]int{
		"n": {{500, 3000}, {1000, 3000}, {2000, 3000}, {4000, 3000}},
		"m": {{2000, 750}, {2000, 1500}, {2000, 3000}, {2000, 6000}},
	}
	for _, dim := range []string{"n", "m"} {
		var parse, read []float64
		for _, sz := range series[dim] {
			dir := b.TempDir()
			s, bl := writeLarge(b, dir, sz[0], sz[1], 5)
			p, r := math.Inf(1), math.Inf(1)
			for rep := 0; rep < 4; rep++ {
				pc, rc := readingCPU(b, s, bl)
				if rep > 0 {
					p, r = math.Min(p, pc), math.Min(r, rc)
				}
			}
			parse, read = append(parse, p), append(read, r)
			os.RemoveAll(dir)
		}
		var out strings.Builder
		fmt.Fprintf(&out, "reading, doubling %s over %v (least CPU of 3):\n", dim, series[dim])
		for _, row := range []struct {
			name string
			t    []float64
		}{{"parse", parse}, {"reading (parse + assembly)", read}} {
			fmt.Fprintf(&out, "  %-28s", row.name)
			for _, v := range row.t {
				fmt.Fprintf(&out, " %7.3f s", v)
			}
			fmt.Fprintf(&out, "   exponent %5.2f\n", doublingExponent(row.t))
		}
		fmt.Fprintf(&out, "  %-28s", "reading / parse")
		for i := range read {
			fmt.Fprintf(&out, " %7.2f  ", read[i]/parse[i])
		}
		fmt.Println(out.String())
	}
}

// readingCPU is the CPU time of parsing series and of the reading phase's
// work on it (the parse as Run makes it, blank, assembly as Run does it,
// the finiteness check).
func readingCPU(b *testing.B, series, blank string) (parse, read float64) {
	t := readingTimes(b, series, blank)
	return t.parseCPU, t.readCPU
}

// readTimes are the CPU and wall seconds of a parse alone and of the
// reading phase's work.
type readTimes struct{ parseCPU, readCPU, parseWall, readWall float64 }

// readingTimes parses series alone (ReadMatrixCSV, the parse the whole
// run's ratio divides by) and then does the reading phase's work as Run
// does it, parse included: the single beams scanned channel by channel as
// they are parsed (spectra.FolderOptions.ScanBeams), the blank, the
// assembly and the finiteness check.
func readingTimes(b *testing.B, series, blank string) readTimes {
	var t readTimes
	runtime.GC()
	w0, c0 := time.Now(), cputime.Process()
	if _, err := spectra.ReadMatrixCSV(series); err != nil {
		b.Fatal(err)
	}
	t.parseWall, t.parseCPU = time.Since(w0).Seconds(), cputime.Process()-c0
	runtime.GC()
	w0, c0 = time.Now(), cputime.Process()
	ser, err := spectra.Load(series, spectra.FolderOptions{ScanBeams: true})
	if err != nil {
		b.Fatal(err)
	}
	bs, err := spectra.ReadSpectrum(blank)
	if err != nil {
		b.Fatal(err)
	}
	as, err := spectra.Assemble(ser, spectra.AssembleOptions{Kind: spectra.SingleBeam, Blank: bs.Values,
		Reference: spectra.Reference{Mean: 1}, Consume: true})
	if err != nil {
		b.Fatal(err)
	}
	if err := checkAssembledFinite(series, ser, as); err != nil {
		b.Fatal(err)
	}
	t.readWall, t.readCPU = time.Since(w0).Seconds(), cputime.Process()-c0
	return t
}

// seriesOut names a folder to write the benchmark's 2000 × 3001 series and
// blank into (TestWriteBenchmarkSeries), so that runs of the command line on
// the very data the benchmarks time can be compared from one commit to the
// next (testdata/perf/reference-runs.sh).
var seriesOut = flag.String("series-out", "", "write the 2000 × 3001 benchmark series and blank into this folder")

// TestWriteBenchmarkSeries writes the benchmark series when -series-out is
// given, and checks that the file read back has the shape asked for.
func TestWriteBenchmarkSeries(t *testing.T) {
	if *seriesOut == "" {
		t.Skip("run with -args -series-out DIR to write the 2000 × 3001 series")
	}
	if err := os.MkdirAll(*seriesOut, 0o755); err != nil {
		t.Fatal(err)
	}
	series, _ := writeLarge(t, *seriesOut, 2000, 3001, 5)
	m, err := spectra.ReadMatrixCSV(series)
	if err != nil {
		t.Fatal(err)
	}
	if r, c := m.Values.Dims(); r != 2000 || c != 3001 {
		t.Fatalf("series read back as %d × %d, want 2000 × 3001", r, c)
	}
}
