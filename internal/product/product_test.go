package product

import (
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"testing"

	"github.com/bandsolve/bandsolve/internal/cputime"
	"gonum.org/v1/gonum/mat"
)

// randomDense has entries of widely different sizes and signs, some exactly
// zero (the terms gonum skips), so that any change in the order of the sums
// or in the rounding of a term shows in the last bits.
func randomDense(rng *rand.Rand, r, c int) *mat.Dense {
	d := mat.NewDense(r, c, nil)
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			if rng.IntN(10) == 0 {
				continue
			}
			d.Set(i, j, rng.NormFloat64()*math.Pow(10, float64(rng.IntN(9)-4)))
		}
	}
	return d
}

func sameBits(t *testing.T, what string, got, want *mat.Dense) {
	t.Helper()
	r, c := want.Dims()
	if gr, gc := got.Dims(); gr != r || gc != c {
		t.Fatalf("%s: %d × %d, want %d × %d", what, gr, gc, r, c)
	}
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			if math.Float64bits(got.At(i, j)) != math.Float64bits(want.At(i, j)) {
				t.Fatalf("%s: entry (%d, %d) = %v, gonum's Dgemm gives %v", what, i, j, got.At(i, j), want.At(i, j))
			}
		}
	}
}

// The reference is gonum's mat.Dense.Mul (its Dgemm): both products must give
// it bit for bit, on shapes that go serial and parallel, with k from 1 to past
// a multiple of four and, past eight (the register tiles of wide.go), every
// remainder of three, on a sub-matrix view (stride wider than the columns),
// at GOMAXPROCS 1 and 2. The transposed product read the other way round,
// MulT(a, c)ᵀ, must give gonum's cᵀ a too: the randomized SVD forms its
// last pass so.
func TestProductsEqualGonumBitForBit(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	for _, procs := range []int{1, 2, 3} {
		runtime.GOMAXPROCS(procs)
		for _, sh := range [][2]int{{3, 5}, {58, 695}, {300, 257}, {1000, 90}} {
			n, m := sh[0], sh[1]
			a := randomDense(rng, n, m+3).Slice(0, n, 1, m+1).(*mat.Dense)
			for _, k := range []int{1, 2, 3, 4, 5, 7, 9, 10, 11, 34} {
				b := randomDense(rng, m, k)
				var want mat.Dense
				want.Mul(a, b)
				sameBits(t, "Mul", Mul(a, b), &want)
				reused := randomDense(rng, n, k) // MulTo overwrites what was there
				MulTo(reused, a, b)
				sameBits(t, "MulTo", reused, &want)
				c := randomDense(rng, n, k)
				var wantT mat.Dense
				wantT.Mul(a.T(), c)
				got := MulT(a, c)
				sameBits(t, "MulT", got, &wantT)
				reusedT := randomDense(rng, m, k)
				MulTTo(reusedT, a, c)
				sameBits(t, "MulTTo", reusedT, &wantT)
				var wantTT mat.Dense
				wantTT.Mul(c.T(), a)
				sameBits(t, "MulT transposed", mat.DenseCopyOf(got.T()), &wantTT)
			}
		}
	}
}

// A factor with an infinite or NaN entry takes loops that skip the terms
// whose entry of a is zero, as gonum's do: 0·Inf is not formed, and the
// products must still be gonum's (NaN where gonum has NaN).
// At three columns that is the Go loop of product.go (mulSmall), at twelve
// gonum's own.
func TestProductsWithNonFiniteFactor(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	a := randomDense(rng, 40, 50)
	for _, tc := range []struct {
		bad float64
		k   int
	}{{math.Inf(1), 12}, {math.NaN(), 12}, {math.Inf(-1), 3}, {math.NaN(), 3}} {
		bad := tc.bad
		b := randomDense(rng, 50, tc.k)
		b.Set(7, 2, bad)
		var want mat.Dense
		want.Mul(a, b)
		got := Mul(a, b)
		c := randomDense(rng, 40, tc.k)
		c.Set(9, 1, bad)
		var wantT mat.Dense
		wantT.Mul(a.T(), c)
		gotT := MulT(a, c)
		for _, pr := range []struct {
			what      string
			got, want *mat.Dense
		}{{"Mul", got, &want}, {"MulT", gotT, &wantT}} {
			r, cc := pr.want.Dims()
			for i := 0; i < r; i++ {
				for j := 0; j < cc; j++ {
					g, w := pr.got.At(i, j), pr.want.At(i, j)
					if math.IsNaN(w) != math.IsNaN(g) || (!math.IsNaN(w) && math.Float64bits(g) != math.Float64bits(w)) {
						t.Fatalf("%s with %v in a factor of %d columns: entry (%d, %d) = %v, gonum's Dgemm gives %v", pr.what, bad, tc.k, i, j, g, w)
					}
				}
			}
		}
	}
}

// The Go loops for one to eight columns (mulSmall, mulTSmall), which a
// processor with AVX2 takes only when a factor is not finite, must give
// gonum's mat.Dense.Mul bit for bit on their own too: odd shapes, sub-matrix
// views, sizes past the blocks of the inner index and the parallel split, at
// GOMAXPROCS 1 and 2.
func TestSmallPathEqualsGonumBitForBit(t *testing.T) {
	rng := rand.New(rand.NewPCG(23, 29))
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		for _, sh := range [][2]int{{1, 1}, {3, 5}, {7, 33}, {58, 695}, {301, 257}} {
			n, m := sh[0], sh[1]
			for k := 1; k <= maxK; k++ {
				a, b, c := view(rng, n, m), view(rng, m, k), view(rng, n, k)
				var want, wantT mat.Dense
				want.Mul(a, b)
				wantT.Mul(a.T(), c)
				got, _ := zeroView(n, k)
				gotT, _ := zeroView(m, k)
				mulSmall(got, a, b)
				mulTSmall(gotT, a, c)
				what := fmt.Sprintf("%d × %d by %d columns, GOMAXPROCS %d", n, m, k, procs)
				sameBits(t, "Go loop a b, "+what, got, &want)
				sameBits(t, "Go loop aᵀ c, "+what, gotT, &wantT)
			}
		}
	}
}

// benchOne runs f b.N times and reports, besides the wall time, the
// process CPU time per run (getrusage), the figure that stays honest on a
// shared machine.
func benchOne(b *testing.B, f func()) {
	c0 := cputime.Process()
	for i := 0; i < b.N; i++ {
		f()
	}
	b.ReportMetric((cputime.Process()-c0)*1e9/float64(b.N), "cpu-ns/op")
}

func benchShapes(b *testing.B, n, m, k int) {
	rng := rand.New(rand.NewPCG(1, 2))
	a, s, c := randomDense(rng, n, m), randomDense(rng, m, k), randomDense(rng, n, k)
	b.Run("Mul", func(b *testing.B) { benchOne(b, func() { Mul(a, s) }) })
	b.Run("gonum-Mul", func(b *testing.B) {
		benchOne(b, func() {
			var o mat.Dense
			o.Mul(a, s)
		})
	})
	b.Run("MulT", func(b *testing.B) { benchOne(b, func() { MulT(a, c) }) })
	b.Run("gonum-MulT", func(b *testing.B) {
		benchOne(b, func() {
			var o mat.Dense
			o.Mul(a.T(), c)
		})
	})
	// The AVX2 tiles, the path without AVX-512, in the same run.
	if haveAVX2 {
		b.Run("Mul-avx2", func(b *testing.B) { benchOne(b, func() { mulWideVec(mat.NewDense(n, k, nil), a, s, tileRow4) }) })
		b.Run("MulT-avx2", func(b *testing.B) { benchOne(b, func() { mulTWideVec(mat.NewDense(m, k, nil), a, c, tileRow4) }) })
	}
	// The Go loops, the path without AVX2, in the same run.
	mul, mulT := mulWideGo, mulTWideGo
	if k <= maxK {
		mul, mulT = mulSmall, mulTSmall
	}
	b.Run("Mul-go", func(b *testing.B) { benchOne(b, func() { mul(mat.NewDense(n, k, nil), a, s) }) })
	b.Run("MulT-go", func(b *testing.B) { benchOne(b, func() { mulT(mat.NewDense(m, k, nil), a, c) }) })
}

// The ATR series' shape with two components, the benchmark's with five
// species and a cubic baseline, and the randomized SVD's sketch (24 + 10).
func BenchmarkProducts58x6950k2(b *testing.B)    { benchShapes(b, 58, 6950, 2) }
func BenchmarkProducts2000x3001k9(b *testing.B)  { benchShapes(b, 2000, 3001, 9) }
func BenchmarkProducts2000x3001k34(b *testing.B) { benchShapes(b, 2000, 3001, 34) }

func BenchmarkProducts58x6950k1(b *testing.B) { benchShapes(b, 58, 6950, 1) }
func BenchmarkProducts58x6950k6(b *testing.B) { benchShapes(b, 58, 6950, 6) }
func BenchmarkProducts58x6950k8(b *testing.B) { benchShapes(b, 58, 6950, 8) }

func BenchmarkProducts58x6950k5(b *testing.B) { benchShapes(b, 58, 6950, 5) }
