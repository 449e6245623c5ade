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

// log10QuoAVX2 sets dst[i] = log10(x[i]/y[i]) four at a time, as quoAVX2
// then log10AVX2 would, and reports whether every value set is finite;
// len(x) is a multiple of 4 and dst and y are as long.
//
//go:noescape
func log10QuoAVX2(dst, x, y []float64) (finite bool)

// log10QuoMaxAVX2 is log10QuoAVX2 that also raises top[i] to dst[i] where
// dst[i] > top[i]; top is as long as x.
//
//go:noescape
func log10QuoMaxAVX2(dst, x, y, top []float64) (finite bool)

// quoSquaresAVX2 is QuoSquares (logs false) or LogQuoSquares (logs true)
// four at a time; len(x) is a multiple of 4 and d, a, y and e are as long.
// finite is whether every logarithm set is finite (true without logs).
//
//go:noescape
func quoSquaresAVX2(d, a, x, y, e []float64, c float64, logs bool) (finite bool)

// useAVX512 says whether the eight-lane kernels below run instead of the
// four-lane ones: the processor has AVX-512's foundation set and the
// operating system saves the zmm and mask registers (cpu.X86.HasAVX512F
// checks both).
var useAVX512 = cpu.X86.HasAVX512F && useAVX2

// logAVX512 is logAVX2 eight at a time; len(src) is a multiple of 8.
//
//go:noescape
func logAVX512(dst, src []float64)

// log10QuoAVX512 is log10QuoAVX2 eight at a time; len(x) is a multiple of 8.
//
//go:noescape
func log10QuoAVX512(dst, x, y []float64) (finite bool)

// log10QuoMaxAVX512 is log10QuoMaxAVX2 eight at a time; len(x) is a
// multiple of 8.
//
//go:noescape
func log10QuoMaxAVX512(dst, x, y, top []float64) (finite bool)

// quoSquaresAVX512 is quoSquaresAVX2 eight at a time; len(x) is a multiple
// of 8.
//
//go:noescape
func quoSquaresAVX512(d, a, x, y, e []float64, c float64, logs bool) (finite bool)

// scaleObservedAVX512 is ScaleObserved eight at a time; len(o) is a
// positive multiple of 8 and w is as long.
//
//go:noescape
func scaleObservedAVX512(o, w []float64, a float64) (peak float64, nan bool)
