//go:build unix

package cputime

import "syscall"

// Process is the user plus system time of the process so far, in seconds
// (getrusage(2), RUSAGE_SELF); 0 when the system does not say.
func Process() float64 {
	var ru syscall.Rusage
	if syscall.Getrusage(syscall.RUSAGE_SELF, &ru) != nil {
		return 0
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) / 1e9
}
