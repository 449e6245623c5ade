package pipeline

import (
	"math"
	"runtime"
	"sync/atomic"

	"github.com/bandsolve/bandsolve/internal/product"
	"github.com/bandsolve/bandsolve/internal/vecmath"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// Memory on large data: a 20 000 × 3000 series is 480 MB per matrix, and
// on this kind of machine memory touched for the first time costs about
// 3.5 ms per MB (docs/performance.md), so a step that can work in place or
// a block at a time does not make a data-sized matrix.

// subtractBaselineInPlace sets d to D − B Pᵀ, the same values as
// mcr.SubtractBaseline (each entry of B Pᵀ is the one dot product a gonum
// product forms for it: baselineDot), a row at a time, so neither B Pᵀ nor
// the result is a second data-sized matrix. Whatever else holds d (the
// assembled absorbance it was stacked from) sees the change.
func subtractBaselineInPlace(d, b, p *mat.Dense) {
	lessBaseline(d, d, b, p)
}

// lessBaseline writes D − B Pᵀ into out (n × m; out may be d itself), entry
// by entry d_ij − baselineDot(b_i, p_j): mat.Dense.Mul of B and Pᵀ forms
// each entry of B Pᵀ as one call of gonum's dot kernel on a row of B and a
// row of P (its Dgemm with the second factor transposed, k = the few
// baseline terms), and Sub takes the difference. Here the products are not
// stored, and the kernel's call per entry, which cost more than its four
// multiply–adds (0.03 s a pass at 2000 × 3001), is inlined for up to four
// terms.
func lessBaseline(out, d, b, p *mat.Dense) {
	n, m := d.Dims()
	_, nb := b.Dims()
	for i := 0; i < n; i++ {
		lessBaselineRow(out.RawRowView(i)[:m], d.RawRowView(i)[:m], b.RawRowView(i)[:nb], p)
	}
}

// lessBaselineRow writes row i of D − B Pᵀ into dst: src is row i of D, bi
// that of B (dst may be src).
func lessBaselineRow(dst, src, bi []float64, p *mat.Dense) {
	rp := p.RawMatrix()
	switch len(bi) {
	case 1, 2, 3:
		baselineRowShort(dst, src, bi, rp.Data, rp.Stride)
	case 4:
		baselineRow4(dst, src, bi, rp.Data, rp.Stride)
	default:
		nb := len(bi)
		for j, v := range src {
			dst[j] = v - baselineDot(bi, rp.Data[j*rp.Stride:j*rp.Stride+nb])
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
// The cycle runs on a goroutine beside the resolution's start (runtime.GC
// returns only once the whole heap is swept: 3–5 ms at 2000 × 3001 that
// the run waited for); what the resolution allocates meanwhile counts as
// live for that one cycle. The caller waits for it before the run returns
// (get), so that no goroutine outlives the run.
func collectAfterFactorAnalysis(n, m int) *later[struct{}] {
	if !largeData(n, m) {
		return nil
	}
	return startLater(func() struct{} {
		runtime.GC()
		return struct{}{}
	})
}

// borrowDifference lends the difference matrix's memory to the scaled copy
// √A D √B of species mode with noise weights, so that the factor analysis
// holds two data-sized matrices instead of three and makes no fresh one (at
// 2000 × 3001 the new 48 MB cost 0.17–0.23 s CPU, half of it page faults).
// Within an experiment every difference spectrum is the absorbance spectrum
// less one fixed spectrum, ΔA_i = A_i − g_e (g_e = log10(I_blank/I_ref)), so
// the differences are rebuilt from D and g_e afterwards (scaledDifferenceInto),
// equal to the assembled ones to rounding. That is checked point by point
// before anything is overwritten; where it fails (or with blind points, whose
// placeholders the two matrices fill differently) nothing is borrowed and nil
// is returned. Otherwise the report's map rows are kept first, the
// experiments let go of their difference matrices, and the buffer (dd itself
// for one experiment, the stacked copy for several) and each experiment's
// g_e are returned.
func borrowDifference(r *Result, diffRows []*mat.Dense) (*mat.Dense, [][]float64) {
	if r.Blind != nil && r.Blind.Count > 0 {
		return nil, nil
	}
	dd := stack(diffRows)
	n, m := dd.Dims()
	if rn, rm := r.D.Dims(); rn != n || rm != m {
		return nil, nil
	}
	g := make([][]float64, len(r.Experiments))
	for e, ex := range r.Experiments {
		lo, hi := ex.FirstRow, ex.FirstRow+ex.Rows
		g[e] = make([]float64, m)
		a, b := r.D.RawRowView(lo)[:m], dd.RawRowView(lo)[:m]
		for j := range g[e] {
			g[e][j] = a[j] - b[j]
		}
		if !differenceRows(r.D, dd, g[e], lo, hi) {
			return nil, nil
		}
	}
	r.diffMapRows = mapRows(r, dd)
	for _, e := range r.Experiments {
		e.Assembled.Difference = nil
	}
	return dd, g
}

// differenceRows says whether every row i = lo … hi−1 of dd is that of d less
// g to rounding (differenceRow). The rows are checked in fixed blocks on up to
// GOMAXPROCS goroutines, each block stopping at its first row that fails: the
// answer, all or not, is the same whatever the number of goroutines. Two
// matrices read once (12 ms at 2000 × 3001) split between the cores.
func differenceRows(d, dd *mat.Dense, g []float64, lo, hi int) bool {
	m := len(g)
	var failed atomic.Bool
	product.FixedBlocks(hi-lo, 64, func(r0, r1 int) {
		for i := lo + r0; i < lo+r1 && !failed.Load(); i++ {
			if !differenceRow(d.RawRowView(i)[:m], dd.RawRowView(i)[:m], g) {
				failed.Store(true)
			}
		}
	})
	return !failed.Load()
}

// differenceRow says whether the difference row b is the absorbance row a
// less g to rounding: |a_j − g_j − b_j| ≤ 2⁻⁴⁶ (1 + |a_j| + |g_j| + |b_j|) at
// every point, a few roundings (64 ulps) of the terms' size, or of 1:
// logarithms of ratios near 1 err by about eps/ln 10 in absorbance whatever
// their own size. The bound is never below 2⁻⁴⁶, so a row whose largest
// |a_j − g_j − b_j| is within 2⁻⁴⁶ passes without it (a NaN passes either
// way: it fails no comparison), one subtraction pair and a comparison per
// point instead of four absolute values and three sums.
//
// The largest |a_j − g_j − b_j| is vecmath.WorstOffset's, four points at a
// time: the Go loop that took it was bound by its compare and branch per
// point more than by reading the rows (about 4.5 ms of CPU for 2000 × 3001
// with the rows in cache, 6 ms read from memory).
func differenceRow(a, b, g []float64) bool {
	a, b = a[:len(g)], b[:len(g)]
	if vecmath.WorstOffset(a, b, g) <= 0x1p-46 {
		return true
	}
	for j, gj := range g {
		if math.Abs(a[j]-gj-b[j]) > 0x1p-46*(1+math.Abs(a[j])+math.Abs(gj)+math.Abs(b[j])) {
			return false
		}
	}
	return true
}

// scaledDifferenceInto writes √A′ (D − 1 g_eᵀ) √B′ into out, the difference
// matrix rebuilt from D and each experiment's fixed spectrum (borrowDifference)
// and scaled with its own weights, as svd.ScaleInto scales it, and screens
// each row as it is written (svd.Screen, with the sum of squares).
func scaledDifferenceInto(out *mat.Dense, r *Result, g [][]float64) (*mat.Dense, *svd.Screen) {
	n, m := r.D.Dims()
	screen := svd.NewScreen(n, m, true)
	sb := make([]float64, m)
	for j, b := range r.DiffWeights.Col {
		sb[j] = math.Sqrt(b)
	}
	for e, ex := range r.Experiments {
		ge := g[e][:m]
		for i := ex.FirstRow; i < ex.FirstRow+ex.Rows; i++ {
			sa := math.Sqrt(r.DiffWeights.Row[i])
			src, dst := r.D.RawRowView(i)[:m], out.RawRowView(i)[:m]
			// Screened as written (svd.Screen.Written): the squares added
			// to the screen's sum in index order while the row is formed.
			sum, z := screen.Sum(), 0.0
			for j, v := range src {
				x := sa * (v - ge[j]) * sb[j]
				dst[j] = x
				sum += x * x
				z += x - x
			}
			screen.Written(i, dst, sum, z == 0)
		}
	}
	return out, screen
}
