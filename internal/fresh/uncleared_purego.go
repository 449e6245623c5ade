//go:build purego

package fresh

// uncleared is make here (the purego build, without the runtime's
// allocator by linkname): the memory is cleared, which no caller reads.
func uncleared(n int) []float64 {
	if n <= 0 {
		return nil
	}
	return make([]float64, n)
}
