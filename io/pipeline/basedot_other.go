//go:build !amd64 || noasm || gccgo || safe

package pipeline

import "gonum.org/v1/gonum/blas/blas64"

// baselineDot is x · y (len(y) ≥ len(x)) as gonum's dot kernel forms it
// where its amd64 assembly is not built: through blas64.Dot, which calls
// that kernel for unit strides, as its Dgemm does.
func baselineDot(x, y []float64) float64 {
	n := len(x)
	return blas64.Dot(blas64.Vector{N: n, Inc: 1, Data: x}, blas64.Vector{N: n, Inc: 1, Data: y[:n]})
}

// baselineRow4 is lessBaseline's row for four terms.
func baselineRow4(dst, src, bi, p []float64, stride int) {
	for j, v := range src {
		dst[j] = v - baselineDot(bi, p[j*stride:j*stride+4])
	}
}

// baselineRowShort is lessBaseline's row for one to three terms.
func baselineRowShort(dst, src, bi, p []float64, stride int) {
	for j, v := range src {
		dst[j] = v - baselineDot(bi, p[j*stride:j*stride+len(bi)])
	}
}
