package product

import (
	"fmt"
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

// zeroView is view with every entry zero, for a result written in place.
func zeroView(r, c int) *mat.Dense {
	return mat.NewDense(r+2, c+5, nil).Slice(1, r+1, 2, c+2).(*mat.Dense)
}

// The wide products, each path on its own (the AVX2 tiles of widevec.go and
// the Go loops of wide.go), must give gonum's mat.Dense.Mul (its Dgemm) bit
// for bit at every column count 1…40 (every width of the 12-, 8- and
// 4-column tiles and every padding of a row to a multiple of four), at odd
// numbers of rows (the rows past a multiple of four take the Go row loop)
// and inner lengths, on sub-matrix views for every operand, and at sizes that
// cross the blocks of the inner index, the bands of output rows and the
// parallel split, at GOMAXPROCS 1, 2 and 3. gonum skips the terms whose
// factor from a is zero and the paths here add them (randomDense has zeros):
// the bits agree because the other factor is finite (wide.go).
func TestWidePathsEqualGonumBitForBit(t *testing.T) {
	paths := []struct {
		name     string
		ok       bool
		mul, mtt func(out, a, b *mat.Dense)
	}{
		{"go", true, mulWideGo, mulTWideGo},
		{"avx2", haveAVX2, mulWideVec, mulTWideVec},
	}
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
			for k := 1; k <= 40; k++ {
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
					got := zeroView(sh.n, k)
					p.mul(got, a, b)
					sameBits(t, "a b, "+what, got, &want)
					gotT := zeroView(sh.m, k)
					p.mtt(gotT, a, c)
					sameBits(t, "aᵀ c, "+what, gotT, &wantT)
				}
			}
		}
	}
	if !haveAVX2 {
		t.Log("no AVX2 on this processor or build: the vector path was not run")
	}
}
