package pipeline

import (
	"math"
	"testing"
)

// BenchmarkReading2000x3001 times the reading phase's work on
// BenchmarkWhole2000x3001's series as readingTimes does it (a parse alone,
// then the parse as Run makes it, the blank, the assembly with its noise
// model and weights, and the finiteness check), each iteration in the same
// process, and reports the least CPU and wall time of the parse and of the
// reading beyond it (other work on a shared machine only ever adds) and
// their ratio. Only when asked for: -bench Reading2000x3001.
func BenchmarkReading2000x3001(b *testing.B) {
	explicitly(b, "Reading2000x3001")
	series, blank := writeLarge(b, b.TempDir(), 2000, 3001, 5)
	parse, after := math.Inf(1), math.Inf(1)
	parseWall, afterWall := math.Inf(1), math.Inf(1)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		t := readingTimes(b, series, blank)
		parse, after = math.Min(parse, t.parseCPU), math.Min(after, t.readCPU-t.parseCPU)
		parseWall, afterWall = math.Min(parseWall, t.parseWall), math.Min(afterWall, t.readWall-t.parseWall)
	}
	b.ReportMetric(parse, "parse-cpu-s")
	b.ReportMetric(after, "after-parse-cpu-s")
	b.ReportMetric(after/parse, "after/parse-cpu")
	// Wall seconds, the least of the iterations (other work only adds):
	// the reading phase beyond a parse alone, which the target bounds.
	b.ReportMetric(parseWall, "parse-wall-s")
	b.ReportMetric(afterWall, "after-parse-wall-s")
}
