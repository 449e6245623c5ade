package pipeline

import (
	"fmt"
	"math/rand/v2"
	"path/filepath"
	"reflect"
	"runtime"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/internal/cputime"
	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/report"
)

// BenchmarkWrite2000x3001 times the writing phase alone (result files,
// maps.csv, JCAMP-DX, record and manifest, report.html and the figure
// files) of the default resolve of BenchmarkWhole2000x3001's series: the
// resolve runs once, outside the timer, then each iteration writes a fresh
// folder. Each writer's CPU time (getrusage) is logged, and the writing's
// CPU time against a parse of the same file measured in the same process.
// Only when asked for: -bench Write2000x3001.
func BenchmarkWrite2000x3001(b *testing.B) {
	explicitly(b, "Write2000x3001")
	dir := b.TempDir()
	series, blank := writeLarge(b, dir, 2000, 3001, 5)
	_, _, _, r := wholeRun(b, series, blank, filepath.Join(dir, "first"))
	runtime.GC()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		stage, err := output.NewStage(filepath.Join(dir, fmt.Sprintf("out%d", i)), true)
		if err != nil {
			b.Fatal(err)
		}
		r.Supplied = stage.Files()
		var log strings.Builder
		total, c0 := 0.0, cputime.Process()
		step := func(name string, f func() error) {
			c := cputime.Process()
			if err := f(); err != nil {
				b.Fatal(err)
			}
			fmt.Fprintf(&log, "  %-28s %7.3f s CPU\n", name, cputime.Process()-c)
		}
		step("WriteResults", func() error { return WriteResults(r, stage) })
		for _, h := range writersAfterResults() {
			name := runtime.FuncForPC(reflect.ValueOf(h).Pointer()).Name()
			step(name[strings.LastIndex(name, ".")+1:], func() error { return h(r, stage) })
		}
		total = cputime.Process() - c0
		if err := stage.Commit(); err != nil {
			b.Fatal(err)
		}
		b.Logf("writing %.3f s CPU, %.2f × the parse's %.3f s CPU:\n%s", total, total/parseCPU, parseCPU, log.String())
		b.ReportMetric(total, "write-cpu-s")
		b.ReportMetric(total/parseCPU, "write/parse-cpu")
	}
}

// BenchmarkAheadMapsFormat is the formatting of maps.csv's three matrices
// (data, difference, residual) at the points the 2000 × 3001 series keeps
// (200 rows × 400 columns each), as the run's ahead goroutine does it.
func BenchmarkAheadMapsFormat(b *testing.B) {
	const n, m = 2000, 3001
	rng := rand.New(rand.NewPCG(3, 4))
	a := &aheadMaps{rows: report.MapRows(n), cols: report.MapCols(m), axis: make([]float64, m), times: make([]float64, n), exp: make([]int, n)}
	for j := range a.axis {
		a.axis[j] = 4000 - float64(j)
	}
	for i := range a.times {
		a.times[i] = float64(i) * 2.5
	}
	for _, name := range []string{"data", "difference", "residual"} {
		v := make([]float64, len(a.rows)*len(a.cols))
		for k := range v {
			v[k] = rng.NormFloat64() * 1e-3
		}
		a.names, a.vals = append(a.names, name), append(a.vals, v)
	}
	for b.Loop() {
		a.format()
	}
}
