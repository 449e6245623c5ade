package product

import "gonum.org/v1/gonum/mat"

// The wide products on AVX2 (wide_amd64.s): the tile is four output rows by
// twelve output columns, 12 ymm registers of sums, each lane one output
// entry. Across the lanes the sums are independent, so each entry is still
// the scalar sum of the Go loops and of gonum's Dgemm, term by term in
// ascending order of the inner index, each product rounded before it is
// added. The columns past the last multiple of twelve take a tile of
// twelve, eight or four columns whose last group of four is loaded and
// stored under a mask (VMASKMOVPD), so that no padded copy of b or of the
// result is needed; rows past the last multiple of four take the Go row
// loop mulRow, the same sums. On a processor with AVX-512 the products of
// more than twelve columns take tiles of four rows by up to forty columns,
// eight to a zmm register (wide512_amd64.s), the same sums again.

// tileRow4 adds, for four rows of sums o (stride so) and the inner index
// l = 0…n−1, a_r(l) b(l) over k columns in tiles of twelve, the last of
// one to twelve.
func tileRow4(o []float64, so int, a []float64, ar, al int, b []float64, bl, n, k int) {
	for c := 0; c < k; c += 12 {
		tile4(o[c:], so, a, ar, al, b[c:], bl, n, min(12, k-c))
	}
}

// rowTiles adds the products of four rows, as tileRow4 (AVX2) and tileRow4z
// (AVX-512) do.
type rowTiles func(o []float64, so int, a []float64, ar, al int, b []float64, bl, n, k int)

// vecTiles is the widest vector tiles the processor has.
func vecTiles() rowTiles {
	if haveAVX512 {
		return tileRow4z
	}
	return tileRow4
}

// mulWideVec is mulWideGo on the vector tiles given: out (n × k, zero) = a b.
func mulWideVec(out, a, b *mat.Dense, tiles rowTiles) {
	n, m := a.Dims()
	_, k := b.Dims()
	ra, rb, ro := a.RawMatrix(), b.RawMatrix(), out.RawMatrix()
	// Blocks of the inner index whose rows of b (blk × k) stay in the
	// cache while the rows of a pass over them, four at a time.
	blk := max(32, min(m, (1<<13)/k))
	InBlocks(n, n*m*k, 8, func(i0, i1 int) {
		for l0 := 0; l0 < m; l0 += blk {
			l1 := min(l0+blk, m)
			bb := rb.Data[l0*rb.Stride:]
			i := i0
			for ; i+4 <= i1; i += 4 {
				tiles(ro.Data[i*ro.Stride:], ro.Stride, ra.Data[i*ra.Stride+l0:], ra.Stride, 1, bb, rb.Stride, l1-l0, k)
			}
			for ; i < i1; i++ {
				mulRow(ro.Data[i*ro.Stride:i*ro.Stride+k], ra.Data[i*ra.Stride+l0:i*ra.Stride+l1], bb, rb.Stride, k)
			}
		}
	})
}

// mulTWideVec is mulTWideGo on the vector tiles given: out (m × k, zero) = aᵀ b.
// The four output rows of a tile are four neighbouring columns of a, read
// along the rows of a; the sums of a band of output rows stay in the cache
// while blocks of rows of a pass.
func mulTWideVec(out, a, b *mat.Dense, tiles rowTiles) {
	n, m := a.Dims()
	_, k := b.Dims()
	ra, rb, ro := a.RawMatrix(), b.RawMatrix(), out.RawMatrix()
	const band = 64  // output rows (columns of a) per band
	const rows = 128 // rows of a per pass of the tiles
	InBlocks(m, n*m*k, band, func(j0, j1 int) {
		for jb := j0; jb < j1; jb += band {
			je := min(jb+band, j1)
			for i0 := 0; i0 < n; i0 += rows {
				h := min(rows, n-i0)
				aa := ra.Data[i0*ra.Stride:]
				bb := rb.Data[i0*rb.Stride:]
				j := jb
				for ; j+4 <= je; j += 4 {
					tiles(ro.Data[j*ro.Stride:], ro.Stride, aa[j:], 1, ra.Stride, bb, rb.Stride, h, k)
				}
				for ; j < je; j++ {
					mulTColumn(ro.Data[j*ro.Stride:j*ro.Stride+k], aa[j:], ra.Stride, bb, rb.Stride, h)
				}
			}
		}
	})
}
