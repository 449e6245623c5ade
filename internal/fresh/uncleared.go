//go:build !purego

package fresh

import "unsafe"

// mallocgc is the Go runtime's allocator. Its name and signature are kept
// stable for packages outside the standard library that call it (the
// runtime's own comment on it, go.dev/issue/67401); typ nil asks for memory
// the garbage collector does not scan, needzero false for no clearing.
//
//go:linkname mallocgc runtime.mallocgc
func mallocgc(size uintptr, typ unsafe.Pointer, needzero bool) unsafe.Pointer

// uncleared returns n float64s the runtime did not clear: a float64 holds no
// pointer, so leftover bits are only wrong values, which the caller
// overwrites, never a hazard to the garbage collector.
func uncleared(n int) []float64 {
	if n <= 0 {
		return nil
	}
	if n > 1<<40 {
		return make([]float64, n) // past any memory: the runtime's own refusal
	}
	p := mallocgc(uintptr(n)*8, nil, false)
	return unsafe.Slice((*float64)(p), n)
}
