// Package product forms the matrix products the analysis makes over its data
// with few columns on one side: D S and Dᵀ C for an n × m data matrix D and
// k ≤ 8 columns, the products of alternating least squares (k components and
// baseline terms) every iteration, and the same for ten to forty columns,
// the passes of a randomized SVD over the data (wide.go).
//
// Each entry is the same sum as gonum's Dgemm forms it, term by term in
// ascending order of the inner index, each product rounded before it is added
// and terms with a zero factor from D skipped (or added, which changes no bit
// when the other factor is finite: wide.go), so the results are bit-identical
// to mat.Dense.Mul (on amd64 without fused multiply–add, the Go toolchain's
// default). What differs is the loop: gonum calls a vector kernel once per
// entry of D with a vector of k entries, whose call costs more than the work
// when k is small (one to ten components); here the k sums of a row are kept
// in registers four at a time, or, on a processor with AVX2 and a finite
// factor, in the register tiles of widevec.go at every k (four rows by up to
// twelve columns, one output entry a lane). The work is split into fixed
// blocks of output rows, each computed by one goroutine in the same order, so
// the bytes do not depend on GOMAXPROCS.
package product

import (
	"runtime"
	"sync"
	"sync/atomic"

	"github.com/bandsolve/bandsolve/internal/fanout"
	"gonum.org/v1/gonum/mat"
)

// maxK is the most columns the Go loops here take; past it the register
// tiles of wide.go (two rows by three columns) do the work, which beat
// gonum's vector kernel there (BenchmarkProducts2000x3001k9, k34). With
// AVX2 the tiles of widevec.go take every k: at 58 × 6950 by 1–8 columns
// they ran 3–10 times faster than the loops here.
const maxK = 8

// minWork is the number of multiply–adds below which a product runs on the
// calling goroutine (starting workers costs more).
const minWork = 1 << 16

// Mul returns a b for an n × m matrix a and an m × k matrix b (n × k).
func Mul(a, b *mat.Dense) *mat.Dense {
	n, _ := a.Dims()
	_, k := b.Dims()
	out := mat.NewDense(n, k, nil)
	MulTo(out, a, b)
	return out
}

// MulTo is Mul into out (n × k, overwritten), so that repeated products of
// one shape reuse its memory.
func MulTo(out, a, b *mat.Dense) {
	n, m := a.Dims()
	bm, k := b.Dims()
	if on, ok := out.Dims(); bm != m || on != n || ok != k {
		panic(mat.ErrShape)
	}
	if k > maxK || haveAVX2 {
		if wideOK(b) {
			out.Zero()
			mulWide(out, a, b)
			return
		}
		if k > maxK {
			out.Mul(a, b)
			return
		}
	}
	out.Zero()
	mulSmall(out, a, b)
}

// mulSmall is MulTo for k ≤ maxK in Go, skipping the terms whose factor from
// a is zero as gonum does: the path without AVX2, and with it when b has an
// entry that is not finite.
func mulSmall(out, a, b *mat.Dense) {
	n, m := a.Dims()
	_, k := b.Dims()
	ra, rb, ro := a.RawMatrix(), b.RawMatrix(), out.RawMatrix()
	// Blocks of the inner index small enough that their rows of b stay in
	// cache while a block of rows of a passes over them; the sums carry on
	// from one block to the next in the same order.
	blk := max(64, min(m, (1<<12)/max(k, 1)))
	InBlocks(n, n*m*k, 8, func(i0, i1 int) {
		for l0 := 0; l0 < m; l0 += blk {
			l1 := min(l0+blk, m)
			i := i0
			for ; i+1 < i1; i += 2 {
				mulRows2(ro.Data[i*ro.Stride:i*ro.Stride+k], ro.Data[(i+1)*ro.Stride:(i+1)*ro.Stride+k],
					ra.Data[i*ra.Stride+l0:i*ra.Stride+l1], ra.Data[(i+1)*ra.Stride+l0:(i+1)*ra.Stride+l1], rb.Data[l0*rb.Stride:], rb.Stride, k)
			}
			if i < i1 {
				mulRow(ro.Data[i*ro.Stride:i*ro.Stride+k], ra.Data[i*ra.Stride+l0:i*ra.Stride+l1], rb.Data[l0*rb.Stride:], rb.Stride, k)
			}
		}
	})
}

// mulRow adds Σ_l x_l b_l to o (k), b_l the rows of b (stride st), l
// ascending, terms with x_l = 0 skipped.
func mulRow(o, x, b []float64, st, k int) {
	c := 0
	for ; c+4 <= k; c += 4 {
		s0, s1, s2, s3 := o[c], o[c+1], o[c+2], o[c+3]
		for l, v := range x {
			if v != 0 {
				r := b[l*st+c : l*st+c+4 : l*st+c+4]
				s0 += v * r[0]
				s1 += v * r[1]
				s2 += v * r[2]
				s3 += v * r[3]
			}
		}
		o[c], o[c+1], o[c+2], o[c+3] = s0, s1, s2, s3
	}
	switch k - c {
	case 3:
		s0, s1, s2 := o[c], o[c+1], o[c+2]
		for l, v := range x {
			if v != 0 {
				r := b[l*st+c : l*st+c+3 : l*st+c+3]
				s0 += v * r[0]
				s1 += v * r[1]
				s2 += v * r[2]
			}
		}
		o[c], o[c+1], o[c+2] = s0, s1, s2
	case 2:
		s0, s1 := o[c], o[c+1]
		for l, v := range x {
			if v != 0 {
				r := b[l*st+c : l*st+c+2 : l*st+c+2]
				s0 += v * r[0]
				s1 += v * r[1]
			}
		}
		o[c], o[c+1] = s0, s1
	case 1:
		s0 := o[c]
		for l, v := range x {
			if v != 0 {
				s0 += v * b[l*st+c]
			}
		}
		o[c] = s0
	}
}

// mulRows2 is mulRow for two rows at once (x into o, y into p): twice as
// many independent sums in flight, each still in its own order.
func mulRows2(o, p, x, y, b []float64, st, k int) {
	y = y[:len(x)]
	for c := 0; c < k; c += 2 {
		if c+1 == k {
			s0, t0 := o[c], p[c]
			for l, v := range x {
				w := y[l]
				r := b[l*st+c]
				if v != 0 {
					s0 += v * r
				}
				if w != 0 {
					t0 += w * r
				}
			}
			o[c], p[c] = s0, t0
			break
		}
		s0, s1, t0, t1 := o[c], o[c+1], p[c], p[c+1]
		for l, v := range x {
			w := y[l]
			r := b[l*st+c : l*st+c+2 : l*st+c+2]
			if v != 0 {
				s0 += v * r[0]
				s1 += v * r[1]
			}
			if w != 0 {
				t0 += w * r[0]
				t1 += w * r[1]
			}
		}
		o[c], o[c+1], p[c], p[c+1] = s0, s1, t0, t1
	}
}

// MulT returns aᵀ b for an n × m matrix a and an n × k matrix b (m × k).
func MulT(a, b *mat.Dense) *mat.Dense {
	_, m := a.Dims()
	_, k := b.Dims()
	out := mat.NewDense(m, k, nil)
	MulTTo(out, a, b)
	return out
}

// MulTTo is MulT into out (m × k, overwritten).
func MulTTo(out, a, b *mat.Dense) {
	n, m := a.Dims()
	bn, k := b.Dims()
	if om, ok := out.Dims(); bn != n || om != m || ok != k {
		panic(mat.ErrShape)
	}
	if k > maxK || haveAVX2 {
		if wideOK(b) {
			out.Zero()
			mulTWide(out, a, b)
			return
		}
		if k > maxK {
			out.Mul(a.T(), b)
			return
		}
	}
	out.Zero()
	mulTSmall(out, a, b)
}

// mulTSmall is MulTTo for k ≤ maxK in Go (see mulSmall).
func mulTSmall(out, a, b *mat.Dense) {
	n, m := a.Dims()
	_, k := b.Dims()
	ra, rb, ro := a.RawMatrix(), b.RawMatrix(), out.RawMatrix()
	// Blocks of output rows (columns of a) small enough that their k sums
	// stay in cache while every row of a passes over them.
	blk := max(16, min(512, (1<<15)/max(k, 1)))
	InBlocks(m, n*m*k, blk, func(j0, j1 int) {
		for j := j0; j < j1; j += blk {
			je := min(j+blk, j1)
			o := ro.Data[j*ro.Stride : (je-1)*ro.Stride+k]
			for i := 0; i < n; i++ {
				mulTRow(o, ro.Stride, ra.Data[i*ra.Stride+j:i*ra.Stride+je], rb.Data[i*rb.Stride:i*rb.Stride+k])
			}
		}
	})
}

// mulTRow adds x_j y to row j of o (stride st) for every j with x_j ≠ 0.
func mulTRow(o []float64, st int, x, y []float64) {
	k := len(y)
	switch k {
	case 1:
		y0 := y[0]
		for j, v := range x {
			if v != 0 {
				o[j*st] += v * y0
			}
		}
	case 2:
		y0, y1 := y[0], y[1]
		for j, v := range x {
			if v != 0 {
				r := o[j*st : j*st+2 : j*st+2]
				r[0] += v * y0
				r[1] += v * y1
			}
		}
	case 3:
		y0, y1, y2 := y[0], y[1], y[2]
		for j, v := range x {
			if v != 0 {
				r := o[j*st : j*st+3 : j*st+3]
				r[0] += v * y0
				r[1] += v * y1
				r[2] += v * y2
			}
		}
	case 4:
		y0, y1, y2, y3 := y[0], y[1], y[2], y[3]
		for j, v := range x {
			if v != 0 {
				r := o[j*st : j*st+4 : j*st+4]
				r[0] += v * y0
				r[1] += v * y1
				r[2] += v * y2
				r[3] += v * y3
			}
		}
	default: // 5 to 8: the first four from registers, the rest from y
		y0, y1, y2, y3 := y[0], y[1], y[2], y[3]
		rest := y[4:]
		for j, v := range x {
			if v != 0 {
				r := o[j*st : j*st+k : j*st+k]
				r[0] += v * y0
				r[1] += v * y1
				r[2] += v * y2
				r[3] += v * y3
				for c, w := range rest {
					r[4+c] += v * w
				}
			}
		}
	}
}

// InBlocks runs f over [0, rows) in blocks of a multiple of unit rows, on up
// to GOMAXPROCS goroutines; work is the product's number of multiply–adds,
// below minWork it runs on the calling goroutine. Each row is done by one
// call, so the result does not depend on how many goroutines ran.
func InBlocks(rows, work, unit int, f func(r0, r1 int)) {
	w := runtime.GOMAXPROCS(0)
	if w < 2 || work < minWork || rows < 2*unit {
		f(0, rows)
		return
	}
	nb := min(w*4, (rows+unit-1)/unit)
	size := (rows + nb - 1) / nb
	size = (size + unit - 1) / unit * unit
	FixedBlocks(rows, size, f)
}

// Each calls task(0), …, task(n−1) on up to GOMAXPROCS goroutines and
// returns when all are done: for independent jobs of unequal size (whole
// fits), taken in turn by whichever goroutine is free. Each task must write
// only its own results, so nothing depends on which goroutine ran it. A
// task's panic is raised again here once all have ended (that of the lowest
// i if several panic): on a worker's goroutine it would end the program.
func Each(n int, task func(i int)) {
	workers := min(runtime.GOMAXPROCS(0), n)
	if workers <= 1 {
		for i := 0; i < n; i++ {
			task(i)
		}
		return
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	var fault fanout.Fault
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			i := 0
			defer fault.Catch(&i)
			for i = int(next.Add(1)) - 1; i < n; i = int(next.Add(1)) - 1 {
				task(i)
			}
		}()
	}
	wg.Wait()
	fault.Raise()
}

// FixedBlocks runs f on the blocks [k·b, min((k+1)·b, n)) covering [0, n),
// on up to GOMAXPROCS goroutines: the blocks are the same whatever the
// number of goroutines, so work that depends on a block's bounds (a buffer
// per block, a maximum per block) gives the same result too. A panic in f
// is raised again here once all blocks have ended (that of the lowest block
// if several panic): on a worker's goroutine it would end the program.
func FixedBlocks(n, b int, f func(r0, r1 int)) {
	w := min(runtime.GOMAXPROCS(0), (n+b-1)/b)
	if w < 2 {
		f(0, n)
		return
	}
	next := make(chan int, (n+b-1)/b)
	for r := 0; r < n; r += b {
		next <- r
	}
	close(next)
	var wg sync.WaitGroup
	var fault fanout.Fault
	for g := 0; g < w; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			r0 := 0
			defer fault.Catch(&r0)
			for r0 = range next {
				f(r0, min(r0+b, n))
			}
		}()
	}
	wg.Wait()
	fault.Raise()
}
