//go:build !purego

package vecmath

// quoAVX2 sets dst[i] = x[i] / y[i] four at a time; len(x) is a multiple of
// 4 and dst and y are as long.
//
//go:noescape
func quoAVX2(dst, x, y []float64)

// quoByAVX2 sets dst[i] = x[i] / c four at a time; len(x) is a multiple of
// 4 and dst is as long.
//
//go:noescape
func quoByAVX2(dst, x []float64, c float64)
