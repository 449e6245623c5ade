//go:build !unix

package svd

// cpuNow is unknown here: the benchmarks report 0 CPU time.
func cpuNow() float64 { return 0 }
