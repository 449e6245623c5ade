//go:build !purego

package vecmath

import "golang.org/x/sys/cpu"

// useAVX2 is fixed at start: the CPU does not change under the program.
var useAVX2 = cpu.X86.HasAVX2

// logAVX2 sets dst[i] = log(src[i]) four at a time; len(src) is a multiple
// of 4 and len(dst) ≥ len(src).
//
//go:noescape
func logAVX2(dst, src []float64)

// log10AVX2 is logAVX2 followed by the product with 1/ln10.
//
//go:noescape
func log10AVX2(dst, src []float64)
