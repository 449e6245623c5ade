package product

import (
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// view returns an r × c sub-matrix of a larger random matrix, starting one
// row and one column in, so that its stride is wider than its columns and
// its first entry is not where an allocation starts (the tiles load without
// alignment).
func view(rng *rand.Rand, r, c int) *mat.Dense {
	return randomDense(rng, r+2, c+3).Slice(1, r+1, 1, c+1).(*mat.Dense)
}

// zeroView is an r × c result of zeros, for a product written in place,
// inside a larger matrix (the one returned with it) whose other entries are
// a mark, border.
func zeroView(r, c int) (v, parent *mat.Dense) {
	parent = mat.NewDense(r+2, c+5, nil)
	for i := 0; i < r+2; i++ {
		for j := 0; j < c+5; j++ {
			parent.Set(i, j, border)
		}
	}
	v = parent.Slice(1, r+1, 2, c+2).(*mat.Dense)
	v.Zero()
	return v, parent
}

// border marks the entries around a result (zeroView).
const border = -1234.5

// untouchedAround fails unless every entry of parent (from zeroView) outside
// its view is still the mark: a tile must not store past its columns or
// rows.
func untouchedAround(t *testing.T, what string, parent *mat.Dense) {
	t.Helper()
	pr, pc := parent.Dims()
	for i := 0; i < pr; i++ {
		for j := 0; j < pc; j++ {
			inside := i >= 1 && i < pr-1 && j >= 2 && j < pc-3
			if !inside && parent.At(i, j) != border {
				t.Fatalf("%s: wrote %v outside the result, at (%d, %d) of the matrix under it", what, parent.At(i, j), i-1, j-2)
			}
		}
	}
}

// The wide products, each path on its own (the AVX2 tiles of widevec.go and
// the Go loops of wide.go), must give gonum's mat.Dense.Mul (its Dgemm) bit
// for bit at every column count 1…40 (every width of the 12-, 8- and
// 4-column tiles and every padding of a row to a multiple of four; every
// width of the AVX-512 tiles of wide512_amd64.s, 9…40, and every mask of
// their last group of eight) and at wider ones that split into several
// AVX-512 tiles (41…48 as 32 and the rest, more as 40 and the rest), at odd
// numbers of rows (the rows past a multiple of four take the Go row loop)
// and inner lengths, on sub-matrix views for every operand, and at sizes that
// cross the blocks of the inner index, the bands of output rows and the
// parallel split, at GOMAXPROCS 1, 2 and 3; nothing outside the result may
// be written. gonum skips the terms whose
// factor from a is zero and the paths here add them (randomDense has zeros):
// the bits agree because the other factor is finite (wide.go).
func TestWidePathsEqualGonumBitForBit(t *testing.T) {
	paths := []struct {
		name     string
		ok       bool
		mul, mtt func(out, a, b *mat.Dense)
	}{
		{"go", true, mulWideGo, mulTWideGo},
		{"avx2", haveAVX2,
			func(out, a, b *mat.Dense) { mulWideVec(out, a, b, tileRow4) },
			func(out, a, b *mat.Dense) { mulTWideVec(out, a, b, tileRow4) }},
		{"avx512", haveAVX512,
			func(out, a, b *mat.Dense) { mulWideVec(out, a, b, tileRow4z) },
			func(out, a, b *mat.Dense) { mulTWideVec(out, a, b, tileRow4z) }},
	}
	var widths []int
	for k := 1; k <= 40; k++ {
		widths = append(widths, k)
	}
	widths = append(widths, 41, 44, 48, 49, 57, 81, 88)
	rng := rand.New(rand.NewPCG(17, 19))
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	type shape struct{ n, m int }
	small := []shape{{1, 1}, {2, 3}, {3, 1}, {4, 4}, {5, 2}, {7, 9}, {9, 33}, {13, 5}, {33, 67}}
	large := []shape{{300, 257}, {131, 450}}
	for _, procs := range []int{1, 2, 3} {
		runtime.GOMAXPROCS(procs)
		shapes := small
		if procs > 1 {
			shapes = nil // the parallel split matters only where work is large
		}
		shapes = append(shapes, large...)
		for _, sh := range shapes {
			for _, k := range widths {
				a := view(rng, sh.n, sh.m)
				b := view(rng, sh.m, k)
				c := view(rng, sh.n, k)
				var want, wantT mat.Dense
				want.Mul(a, b)
				wantT.Mul(a.T(), c)
				for _, p := range paths {
					if !p.ok {
						continue
					}
					what := fmt.Sprintf("%s path, %d × %d by %d columns, GOMAXPROCS %d", p.name, sh.n, sh.m, k, procs)
					got, under := zeroView(sh.n, k)
					p.mul(got, a, b)
					sameBits(t, "a b, "+what, got, &want)
					untouchedAround(t, "a b, "+what, under)
					gotT, underT := zeroView(sh.m, k)
					p.mtt(gotT, a, c)
					sameBits(t, "aᵀ c, "+what, gotT, &wantT)
					untouchedAround(t, "aᵀ c, "+what, underT)
				}
			}
		}
	}
	if !haveAVX2 {
		t.Log("no AVX2 on this processor or build: the vector path was not run")
	}
	if !haveAVX512 {
		t.Log("no AVX-512 on this processor or build: its tiles were not run")
	}
}

// wideOK against its definition (every entry finite: !math.IsInf and
// !math.IsNaN, the standard library's classification as reference) on
// views of 1 to 9 columns with one entry set to each value that is or
// is not finite, at every place, and on the all-finite views themselves.
func TestWideOKIsFiniteEverywhere(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	values := []float64{math.Inf(1), math.Inf(-1), math.NaN(), 0, math.Copysign(0, -1), math.MaxFloat64, -math.MaxFloat64, 5e-324, 1}
	for c := 1; c <= 9; c++ {
		for _, r := range []int{1, 3} {
			v := view(rng, r, c)
			if !wideOK(v) {
				t.Fatalf("%d × %d: a finite view refused", r, c)
			}
			for i := 0; i < r; i++ {
				for j := 0; j < c; j++ {
					old := v.At(i, j)
					for _, x := range values {
						v.Set(i, j, x)
						want := !math.IsInf(x, 0) && !math.IsNaN(x)
						if got := wideOK(v); got != want {
							t.Fatalf("%d × %d, %v at (%d, %d): wideOK %v, want %v", r, c, x, i, j, got, want)
						}
					}
					v.Set(i, j, old)
				}
			}
		}
	}
	// Entries outside the view (its stride) are not the view's.
	parent := mat.NewDense(2, 4, []float64{1, 2, math.NaN(), math.Inf(1), 3, 4, math.NaN(), math.NaN()})
	if !wideOK(parent.Slice(0, 2, 0, 2).(*mat.Dense)) {
		t.Error("a NaN outside the view counted")
	}
}

// BenchmarkWideOK is the check on the profiles of ALS's half steps on the
// 2000 × 3001 series (2000 × 5).
func BenchmarkWideOK(b *testing.B) {
	v := randomDense(rand.New(rand.NewPCG(9, 10)), 2000, 5)
	for b.Loop() {
		if !wideOK(v) {
			b.Fatal("refused")
		}
	}
}
