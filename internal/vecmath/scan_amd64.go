//go:build !purego

package vecmath

// allPositiveFiniteAVX2 is AllPositiveFinite for len(x) a multiple of 4.
//
//go:noescape
func allPositiveFiniteAVX2(x []float64) bool

// raiseAndStepAVX2 is RaiseAndStep for len(x) a positive multiple of 4.
//
//go:noescape
func raiseAndStepAVX2(a, b, x, p []float64) (largest, step float64)

// nextAtOrBelowAVX2 is NextAtOrBelow for len(x) a positive multiple of 4.
//
//go:noescape
func nextAtOrBelowAVX2(x, a, b []float64) int

// worstOffsetAVX2 is WorstOffset for len(g) a positive multiple of 4.
//
//go:noescape
func worstOffsetAVX2(a, b, g []float64) float64

// maxAbsAVX2 is MaxAbs for len(x) a positive multiple of 4.
//
//go:noescape
func maxAbsAVX2(x []float64) float64
