package pipeline

import (
	"runtime"

	"gonum.org/v1/gonum/mat"
)

// Memory on large data: a 20 000 × 3000 series is 480 MB per matrix, and
// on this kind of machine memory touched for the first time costs about
// 3.5 ms per MB (docs/performance.md), so a step that can work in place or
// a block at a time does not make a data-sized matrix.

// subtractBaselineInPlace sets d to D − B Pᵀ, the same values as
// mcr.SubtractBaseline (each entry of B Pᵀ is the one dot product a gonum
// product forms for it, whatever the block), a block of rows at a time, so
// neither B Pᵀ nor the result is a second data-sized matrix. Whatever else
// holds d (the assembled absorbance it was stacked from) sees the change.
func subtractBaselineInPlace(d, b, p *mat.Dense) {
	n, m := d.Dims()
	_, nb := b.Dims()
	const block = 64
	var bp mat.Dense
	for i0 := 0; i0 < n; i0 += block {
		i1 := min(n, i0+block)
		bp.Reset()
		bp.Mul(b.Slice(i0, i1, 0, nb), p.T())
		for i := i0; i < i1; i++ {
			row, sub := d.RawRowView(i)[:m], bp.RawRowView(i-i0)
			for j := range row {
				row[j] -= sub[j]
			}
		}
	}
}

// collectAfterFactorAnalysis runs the garbage collector once when the
// factor analysis of large data ends. Go's collector lets the heap grow to
// twice the live heap of its last cycle before the next (GOGC = 100), and
// its last cycle fell while the factor analysis held D, the difference
// matrix and a scaled copy: three data-sized matrices, 3.6 GB at 50 000 ×
// 3000. Without a cycle here the resolution's short-lived slices filled
// that allowance (20 000 × 3000: peak 1.5 GB in the factor analysis, 2.5 GB
// in the resolution); after it the goal is twice D alone, and the pages
// freed are reused. It changes when memory is reclaimed, never a value.
func collectAfterFactorAnalysis(n, m int) {
	if largeData(n, m) {
		runtime.GC()
	}
}
