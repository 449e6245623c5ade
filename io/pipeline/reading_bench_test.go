package pipeline

import (
	"math"
	"testing"
)

// BenchmarkReading2000x3001 times the reading phase's work on
// BenchmarkWhole2000x3001's series as readingCPU does it (the parse, then
// the blank, the assembly with its noise model and weights, and the
// finiteness check), each iteration in the same process, and reports the
// least CPU time of the parse and of the work after it (other work on a
// shared machine only ever adds) and their ratio. Only when asked for:
// -bench Reading2000x3001.
func BenchmarkReading2000x3001(b *testing.B) {
	explicitly(b, "Reading2000x3001")
	series, blank := writeLarge(b, b.TempDir(), 2000, 3001, 5)
	parse, after := math.Inf(1), math.Inf(1)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		p, r := readingCPU(b, series, blank)
		parse, after = math.Min(parse, p), math.Min(after, r-p)
	}
	b.ReportMetric(parse, "parse-cpu-s")
	b.ReportMetric(after, "after-parse-cpu-s")
	b.ReportMetric(after/parse, "after/parse-cpu")
}
