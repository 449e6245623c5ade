package product

import "gonum.org/v1/gonum/mat"

// The wide products on AVX2 (wide_amd64.s): the tile is four output rows by
// twelve output columns, 12 ymm registers of sums, each lane one output
// entry. Across the lanes the sums are independent, so each entry is still
// the scalar sum of the Go loops and of gonum's Dgemm, term by term in
// ascending order of the inner index, each product rounded before it is
// added. The columns are taken four at a time; when k is not a multiple of
// four, the factor b and the result are copied to and from buffers whose
// rows are padded with zeros to the next multiple (the padding lanes are
// computed and dropped). Rows past the last multiple of four take the Go
// loop mulRow, the same sums.

// padded returns the entries of the r × k matrix m with its rows widened to
// kp ≥ k columns (zeros after the k-th) and their stride: m's own memory
// when kp = k.
func padded(m *mat.Dense, kp int) ([]float64, int) {
	raw := m.RawMatrix()
	if raw.Cols == kp {
		return raw.Data, raw.Stride
	}
	d := make([]float64, raw.Rows*kp)
	for i := 0; i < raw.Rows; i++ {
		copy(d[i*kp:i*kp+raw.Cols], raw.Data[i*raw.Stride:i*raw.Stride+raw.Cols])
	}
	return d, kp
}

// unpad copies the first k columns of the padded rows d (stride kp) into
// out.
func unpad(out *mat.Dense, d []float64, kp int) {
	raw := out.RawMatrix()
	if &raw.Data[0] == &d[0] {
		return
	}
	for i := 0; i < raw.Rows; i++ {
		copy(raw.Data[i*raw.Stride:i*raw.Stride+raw.Cols], d[i*kp:i*kp+raw.Cols])
	}
}

// tileRow4 adds, for four rows of sums o (stride so) and the inner index
// l = 0…n−1, a_r(l) b(l) over kp columns (a multiple of four) in tiles of
// 12, 8 or 4 columns.
func tileRow4(o []float64, so int, a []float64, ar, al int, b []float64, bl, n, kp int) {
	c := 0
	for ; c+12 <= kp; c += 12 {
		tile4(o[c:], so, a, ar, al, b[c:], bl, n, 12)
	}
	if w := kp - c; w > 0 {
		tile4(o[c:], so, a, ar, al, b[c:], bl, n, w)
	}
}

// mulWideVec is mulWideGo on the vector tiles: out (n × k, zero) = a b.
func mulWideVec(out, a, b *mat.Dense) {
	n, m := a.Dims()
	_, k := b.Dims()
	kp := (k + 3) &^ 3
	ra := a.RawMatrix()
	bd, bs := padded(b, kp)
	od, os := padded(out, kp)
	// Blocks of the inner index whose rows of b (blk × kp) stay in the
	// cache while the rows of a pass over them, four at a time.
	blk := max(32, min(m, (1<<13)/kp))
	InBlocks(n, n*m*k, 8, func(i0, i1 int) {
		for l0 := 0; l0 < m; l0 += blk {
			l1 := min(l0+blk, m)
			bb := bd[l0*bs:]
			i := i0
			for ; i+4 <= i1; i += 4 {
				tileRow4(od[i*os:], os, ra.Data[i*ra.Stride+l0:], ra.Stride, 1, bb, bs, l1-l0, kp)
			}
			for ; i < i1; i++ {
				mulRow(od[i*os:i*os+kp], ra.Data[i*ra.Stride+l0:i*ra.Stride+l1], bb, bs, kp)
			}
		}
	})
	unpad(out, od, kp)
}

// mulTWideVec is mulTWideGo on the vector tiles: out (m × k, zero) = aᵀ b.
// The four output rows of a tile are four neighbouring columns of a, read
// along the rows of a; the sums of a band of output rows stay in the cache
// while blocks of rows of a pass.
func mulTWideVec(out, a, b *mat.Dense) {
	n, m := a.Dims()
	_, k := b.Dims()
	kp := (k + 3) &^ 3
	ra := a.RawMatrix()
	bd, bs := padded(b, kp)
	od, os := padded(out, kp)
	const band = 64  // output rows (columns of a) per band
	const rows = 128 // rows of a per pass of the tiles
	InBlocks(m, n*m*k, band, func(j0, j1 int) {
		for jb := j0; jb < j1; jb += band {
			je := min(jb+band, j1)
			for i0 := 0; i0 < n; i0 += rows {
				h := min(rows, n-i0)
				aa := ra.Data[i0*ra.Stride:]
				bb := bd[i0*bs:]
				j := jb
				for ; j+4 <= je; j += 4 {
					tileRow4(od[j*os:], os, aa[j:], 1, ra.Stride, bb, bs, h, kp)
				}
				for ; j < je; j++ {
					o := od[j*os : j*os+kp]
					for r := 0; r < h; r++ {
						v := aa[r*ra.Stride+j]
						for c, w := range bb[r*bs : r*bs+kp] {
							o[c] += v * w
						}
					}
				}
			}
		}
	})
	unpad(out, od, kp)
}
