package product

import (
	"gonum.org/v1/gonum/mat"
)

// The products of a randomized SVD's passes (Halko, Martinsson & Tropp,
// SIAM Review 2011): the data matrix times a sketch of ten to forty
// columns, D X and Dᵀ Y. gonum's Dgemm makes one call of its vector kernel
// per entry of D, on a row of the sketch: every product is then a load, a
// multiply, an add and a store of the output. Here a tile of two output
// rows by three output columns stays in registers while the inner index
// runs, so each term costs a multiply and an add, and each entry is still
// the same sum: ascending inner index, each product rounded before it is
// added. Measured (process CPU time, best of five, GOMAXPROCS 1 and 2, on
// the shared 2-core machine; 2000 × 3001 by 34 columns, the benchmark's
// sketch): D X 47–55 ms against Dgemm's 63–64, Dᵀ Y 61–64 ms against
// 67–70; at 9 columns 15.5 and 22.8 ms against 39 and 42. On a processor
// with AVX2 the same sums are formed four output columns to a register
// (widevec.go, wide_amd64.s); these loops are the path elsewhere and under
// the purego build tag.
//
// gonum skips the terms whose factor from D is zero; here they are added.
// A sum that starts at +0 is never −0 (x + y is −0 in round-to-nearest only
// when both are −0), so adding a product 0·b = ±0 leaves it unchanged when
// b is finite: the bits are gonum's whenever the sketch is finite, which
// wideOK checks before the loops here are used.

// wideCols is the width of the register tile: two rows by three columns
// are six sums, two entries of D and six products in registers (14 of the
// 15 the Go compiler gives floating point on amd64, whose two-operand
// multiply needs a register per product). Four columns spilled sums to
// the stack and ran slower than Dgemm.
const wideCols = 3

// wideOK says whether every entry of b is finite (see above): v·0 is ±0
// for a finite v and NaN for ±Inf and NaN, and a sum of them is 0 only
// when every term is ±0. Four sums in flight, without a branch per entry:
// the check took longer than the product on ALS's n × k profiles
// (docs/performance-history.md, twenty-fourth round).
func wideOK(b *mat.Dense) bool {
	r, c := b.Dims()
	raw := b.RawMatrix()
	var s0, s1, s2, s3 float64
	for i := 0; i < r; i++ {
		row := raw.Data[i*raw.Stride : i*raw.Stride+c]
		j := 0
		for ; j+4 <= len(row); j += 4 {
			s0 += row[j] * 0
			s1 += row[j+1] * 0
			s2 += row[j+2] * 0
			s3 += row[j+3] * 0
		}
		for ; j < len(row); j++ {
			s0 += row[j] * 0
		}
	}
	return s0+s1+s2+s3 == 0
}

// mulWide is Mul for k > maxK: out (n × k, zero) = a b, on the vector
// tiles of widevec.go where the processor has them.
func mulWide(out, a, b *mat.Dense) {
	if haveAVX2 {
		mulWideVec(out, a, b, vecTiles())
		return
	}
	mulWideGo(out, a, b)
}

// mulTWide is MulT for k > maxK: out (m × k, zero) = aᵀ b, on the vector
// tiles where the processor has them.
func mulTWide(out, a, b *mat.Dense) {
	if haveAVX2 {
		mulTWideVec(out, a, b, vecTiles())
		return
	}
	mulTWideGo(out, a, b)
}

// mulWideGo is mulWide in Go.
func mulWideGo(out, a, b *mat.Dense) {
	n, m := a.Dims()
	_, k := b.Dims()
	ra, rb, ro := a.RawMatrix(), b.RawMatrix(), out.RawMatrix()
	// Blocks of the inner index whose rows of b (blk × k) stay in the
	// first-level cache while a pair of rows of a passes over them.
	blk := max(32, min(m, (1<<12)/k))
	InBlocks(n, n*m*k, 8, func(i0, i1 int) {
		for l0 := 0; l0 < m; l0 += blk {
			l1 := min(l0+blk, m)
			bb := rb.Data[l0*rb.Stride:]
			i := i0
			for ; i+1 < i1; i += 2 {
				o := ro.Data[i*ro.Stride : i*ro.Stride+k]
				p := ro.Data[(i+1)*ro.Stride : (i+1)*ro.Stride+k]
				x := ra.Data[i*ra.Stride+l0 : i*ra.Stride+l1]
				y := ra.Data[(i+1)*ra.Stride+l0 : (i+1)*ra.Stride+l1]
				c := 0
				for ; c+wideCols <= k; c += wideCols {
					tile2x3(o[c:c+3], p[c:c+3], x, y, bb[c:], rb.Stride)
				}
				for ; c < k; c++ {
					tile2x1(&o[c], &p[c], x, y, bb[c:], rb.Stride)
				}
			}
			if i < i1 {
				mulRow(ro.Data[i*ro.Stride:i*ro.Stride+k], ra.Data[i*ra.Stride+l0:i*ra.Stride+l1], bb, rb.Stride, k)
			}
		}
	})
}

// tile2x3 adds Σ_l x_l b_l to o and Σ_l y_l b_l to p (three entries each),
// b_l = b[l·st : l·st+3], l ascending.
func tile2x3(o, p, x, y, b []float64, st int) {
	o, p = o[:3], p[:3]
	y = y[:len(x)]
	s0, s1, s2 := o[0], o[1], o[2]
	t0, t1, t2 := p[0], p[1], p[2]
	off := 0
	for l, v := range x {
		w := y[l]
		r := b[off : off+3 : off+3]
		s0 += v * r[0]
		t0 += w * r[0]
		s1 += v * r[1]
		t1 += w * r[1]
		s2 += v * r[2]
		t2 += w * r[2]
		off += st
	}
	o[0], o[1], o[2] = s0, s1, s2
	p[0], p[1], p[2] = t0, t1, t2
}

// tile2x1 is tile2x3 for one column.
func tile2x1(o, p *float64, x, y, b []float64, st int) {
	y = y[:len(x)]
	s, t := *o, *p
	off := 0
	for l, v := range x {
		r := b[off]
		s += v * r
		t += y[l] * r
		off += st
	}
	*o, *p = s, t
}

// mulTWideGo is mulTWide in Go. Output rows
// j, j+1 are columns of a; the tile takes a few rows of a at a time, which
// it reads along the row (the rows of a next to each other in memory), and
// keeps each output row's sums in memory between those row blocks, so that
// a band of output rows stays in the cache while a streams past.
func mulTWideGo(out, a, b *mat.Dense) {
	n, m := a.Dims()
	_, k := b.Dims()
	ra, rb, ro := a.RawMatrix(), b.RawMatrix(), out.RawMatrix()
	const band = 64 // output rows (columns of a) per band: band·k sums in cache
	const rows = 8  // rows of a per pass of the tile
	InBlocks(m, n*m*k, band, func(j0, j1 int) {
		for jb := j0; jb < j1; jb += band {
			je := min(jb+band, j1)
			for i0 := 0; i0 < n; i0 += rows {
				h := min(rows, n-i0)
				aa := ra.Data[i0*ra.Stride:]
				bb := rb.Data[i0*rb.Stride:]
				j := jb
				for ; j+1 < je; j += 2 {
					o := ro.Data[j*ro.Stride : j*ro.Stride+k]
					p := ro.Data[(j+1)*ro.Stride : (j+1)*ro.Stride+k]
					c := 0
					for ; c+wideCols <= k; c += wideCols {
						tileT2x3(o[c:c+3], p[c:c+3], aa[j:], ra.Stride, bb[c:], rb.Stride, h)
					}
					for ; c < k; c++ {
						tileT2x1(&o[c], &p[c], aa[j:], ra.Stride, bb[c:], rb.Stride, h)
					}
				}
				if j < je {
					mulTColumn(ro.Data[j*ro.Stride:j*ro.Stride+k], aa[j:], ra.Stride, bb, rb.Stride, h)
				}
			}
		}
	})
}

// mulTColumn adds Σ_r x_r b_r to o over h rows r ascending, with
// x_r = a[r·sa] and b_r = b[r·sb : r·sb+len(o)]: one output row of aᵀ b
// that no tile covers.
func mulTColumn(o, a []float64, sa int, b []float64, sb, h int) {
	for r := 0; r < h; r++ {
		v := a[r*sa]
		for c, w := range b[r*sb : r*sb+len(o)] {
			o[c] += v * w
		}
	}
}

// tileT2x3 adds Σ_r x_r b_r to o and Σ_r y_r b_r to p (three entries
// each) over h rows r ascending, with x_r = a[r·sa], y_r = a[r·sa+1] and
// b_r = b[r·sb : r·sb+3].
func tileT2x3(o, p, a []float64, sa int, b []float64, sb, h int) {
	o, p = o[:3], p[:3]
	s0, s1, s2 := o[0], o[1], o[2]
	t0, t1, t2 := p[0], p[1], p[2]
	ao, bo := 0, 0
	for r := 0; r < h; r++ {
		xy := a[ao : ao+2 : ao+2]
		v, w := xy[0], xy[1]
		q := b[bo : bo+3 : bo+3]
		s0 += v * q[0]
		t0 += w * q[0]
		s1 += v * q[1]
		t1 += w * q[1]
		s2 += v * q[2]
		t2 += w * q[2]
		ao += sa
		bo += sb
	}
	o[0], o[1], o[2] = s0, s1, s2
	p[0], p[1], p[2] = t0, t1, t2
}

// tileT2x1 is tileT2x3 for one column.
func tileT2x1(o, p *float64, a []float64, sa int, b []float64, sb, h int) {
	s, t := *o, *p
	ao, bo := 0, 0
	for r := 0; r < h; r++ {
		xy := a[ao : ao+2 : ao+2]
		q := b[bo]
		s += xy[0] * q
		t += xy[1] * q
		ao += sa
		bo += sb
	}
	*o, *p = s, t
}
