//go:build !linux

package fresh

// Advise does nothing here: the advice is Linux's.
func Advise(v []float64) {}
