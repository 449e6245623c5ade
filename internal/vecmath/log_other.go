//go:build !amd64 || purego

package vecmath

// useAVX2 and useAVX512 are false: every value goes through math.Log.
const useAVX2, useAVX512 = false, false

func logAVX2(dst, src []float64)   { panic("vecmath: no vector logarithm on this build") }
func log10AVX2(dst, src []float64) { panic("vecmath: no vector logarithm on this build") }

func log10QuoAVX2(dst, x, y []float64) bool {
	panic("vecmath: no vector logarithm on this build")
}

func log10QuoMaxAVX2(dst, x, y, top []float64) bool {
	panic("vecmath: no vector logarithm on this build")
}

func quoSquaresAVX2(d, a, x, y, e []float64, c float64, logs bool) bool {
	panic("vecmath: no vector division on this build")
}

func logAVX512(dst, src []float64) { panic("vecmath: no vector logarithm on this build") }

func log10QuoAVX512(dst, x, y []float64) bool {
	panic("vecmath: no vector logarithm on this build")
}

func log10QuoMaxAVX512(dst, x, y, top []float64) bool {
	panic("vecmath: no vector logarithm on this build")
}

func quoSquaresAVX512(d, a, x, y, e []float64, c float64, logs bool) bool {
	panic("vecmath: no vector division on this build")
}

func scaleObservedAVX512(o, w []float64, a float64) (float64, bool) {
	panic("vecmath: no vector scaling on this build")
}
