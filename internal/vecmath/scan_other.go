//go:build !amd64 || purego

package vecmath

func allPositiveFiniteAVX2(x []float64) bool {
	panic("vecmath: no vector scan on this build")
}

func raiseAndStepAVX2(a, b, x, p []float64) (largest, step float64) {
	panic("vecmath: no vector scan on this build")
}

func nextAtOrBelowAVX2(x, a, b []float64) int {
	panic("vecmath: no vector scan on this build")
}

func worstOffsetAVX2(a, b, g []float64) float64 {
	panic("vecmath: no vector scan on this build")
}

func maxAbsAVX2(x []float64) float64 {
	panic("vecmath: no vector scan on this build")
}
