//go:build !linux

package spectra

// physicalMemory is unknown here: the fixed MaxFileBytes applies.
func physicalMemory() int64 { return 0 }
