//go:build !amd64 || noasm || gccgo || safe

package mcr

import "gonum.org/v1/gonum/blas/blas64"

// modelRow sets dst to row i of C Sᵀ (see the amd64 file) as gonum's dot
// kernel forms each entry where its amd64 assembly is not built: through
// blas64.Dot, which calls that kernel for unit strides, as its Dgemm does.
func modelRow(dst, x, s []float64, stride int) {
	k := len(x)
	xv := blas64.Vector{N: k, Inc: 1, Data: x}
	for j := range dst {
		dst[j] = blas64.Dot(xv, blas64.Vector{N: k, Inc: 1, Data: s[j*stride : j*stride+k]})
	}
}
