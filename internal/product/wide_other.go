//go:build !amd64 || purego

package product

// haveAVX2 is false off amd64 and under the purego build tag: the Go loops
// of wide.go do the wide products.
const haveAVX2 = false

// haveAVX512 is false with haveAVX2.
const haveAVX512 = false

// tileRow4z is never called without haveAVX512.
func tileRow4z(o []float64, so int, a []float64, ar, al int, b []float64, bl, n, k int) {
	panic("product: no vector tiles in this build")
}

// tile4 is never called without haveAVX2.
func tile4(o []float64, so int, a []float64, ar, al int, b []float64, bl, n, w int) {
	panic("product: no vector tiles in this build")
}
