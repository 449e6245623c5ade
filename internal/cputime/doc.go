// Package cputime reads the CPU time the process has used, for the
// benchmarks that print CPU seconds beside wall time: on a shared machine
// CPU time moves less with the load than wall time does.
package cputime
