package mcr

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// modelFactors returns C (n × k) and S (m × k) with entries over many
// decades and of both signs, some exact zeros and negative zeros, S held
// with a stride wider than k (a column slice), as the resolution's are not.
func modelFactors(rng *rand.Rand, n, m, k int) (c, s *mat.Dense) {
	draw := func() float64 {
		switch rng.IntN(20) {
		case 0:
			return 0
		case 1:
			return math.Copysign(0, -1)
		}
		return rng.NormFloat64() * math.Pow(10, 6*rng.Float64()-3)
	}
	c = mat.NewDense(n, k, nil)
	wide := mat.NewDense(m, k+3, nil)
	for i := 0; i < n; i++ {
		for l := 0; l < k; l++ {
			c.Set(i, l, draw())
		}
	}
	for j := 0; j < m; j++ {
		for l := 0; l < k+3; l++ {
			wide.Set(j, l, draw())
		}
	}
	return c, wide.Slice(0, m, 0, k).(*mat.Dense)
}

// The model rows are gonum's product C Sᵀ (mat.Dense.Mul, the reference
// library) bit for bit at every number of components modelRow has its own
// loop for and past them; −0 in gonum's product is +0 (its Dgemm adds each
// dot product to a zeroed entry), the one difference allowed, which no
// residual square sees.
func TestModelRowIsGonumProduct(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 64))
	n, m := 9, 37
	for _, k := range []int{1, 2, 3, 4, 5, 6, 7, 8, 9, 12, 13, 64} {
		c, s := modelFactors(rng, n, m, k)
		var want mat.Dense
		want.Mul(c, s.T())
		got := make([]float64, m)
		rs := s.RawMatrix()
		for i := 0; i < n; i++ {
			modelRow(got, c.RawRowView(i)[:k], rs.Data, rs.Stride)
			for j, g := range got {
				w := want.At(i, j)
				if math.Float64bits(g) != math.Float64bits(w) && !(g == 0 && w == 0) {
					t.Fatalf("k = %d, entry (%d, %d): modelRow %v, mat.Dense.Mul %v", k, i, j, g, w)
				}
			}
		}
	}
}

// FitWeighted's figures are their definitions (WeightedFit) summed point by
// point in the order of the rows and channels over the residual D − C Sᵀ of
// gonum's product (mat.Dense.Mul, the reference library): the same bits,
// with and without weights and missing points, and at 65 components, past
// modelRow, where the residual comes from the product itself.
func TestFitWeightedIsItsDefinition(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 1997))
	n, m := 23, 41
	for _, k := range []int{3, 5, 65} {
		c, s := modelFactors(rng, n, m, k)
		d := mat.NewDense(n, m, nil)
		for i := 0; i < n; i++ {
			for j := 0; j < m; j++ {
				d.Set(i, j, rng.NormFloat64())
			}
		}
		a, b := rowColWeights(rng, n, m)
		gap := func(i, j int) bool { return (i+2*j)%7 == 0 }
		for _, tc := range []struct {
			name     string
			row, col []float64
			missing  func(i, j int) bool
		}{{"plain", nil, nil, nil}, {"weighted", a, b, nil}, {"weighted, missing", a, b, gap}, {"plain, missing", nil, nil, gap}} {
			got := FitWeighted(d, c, s, tc.row, tc.col, tc.missing)
			want := fitByDefinition(d, c, s, tc.row, tc.col, tc.missing)
			if got != want {
				t.Errorf("k = %d, %s: FitWeighted %+v, definition %+v", k, tc.name, got, want)
			}
		}
	}
}

// fitByDefinition is WeightedFit from D − C Sᵀ formed by mat.Dense.Mul and
// Sub, each sum taken over the observed points in row-major order.
func fitByDefinition(d, c, s *mat.Dense, row, col []float64, missing func(i, j int) bool) WeightedFit {
	var e mat.Dense
	e.Mul(c, s.T())
	e.Sub(d, &e)
	n, m := d.Dims()
	var f WeightedFit
	ssr := 0.0
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			if missing != nil && missing(i, j) {
				continue
			}
			a, b := 1.0, 1.0
			if row != nil {
				a, b = row[i], col[j]
			}
			r, v := e.At(i, j), d.At(i, j)
			ssr += r * r
			f.DataSS += v * v
			f.WeightedSS += a * b * r * r
			f.NoiseSS += 1 / (a * b)
			f.Observed++
		}
	}
	if f.DataSS > 0 {
		f.LackOfFitPercent = 100 * math.Sqrt(ssr/f.DataSS)
	}
	return f
}

// The outlier test's residual rows are D − C Sᵀ − B Pᵀ by its definition,
// entry by entry d_ij − Σ_l c_il s_jl − Σ_l b_il p_jl with the terms taken
// away one at a time in order (a plain loop here), bit for bit at every
// number of components subtractTerms has its own loop for and past them,
// with and without baseline terms; and the squares and lag-1 products are
// their sums in index order.
func TestResidualRowIsItsDefinition(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 1993))
	n, m := 7, 29
	d := mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, rng.NormFloat64())
		}
	}
	for _, k := range []int{1, 2, 3, 4, 5, 6, 7, 9} {
		c, s := modelFactors(rng, n, m, k)
		bl, p := modelFactors(rng, n, m, 1+k%4)
		for _, base := range []bool{false, true} {
			b, pp := (*mat.Dense)(nil), (*mat.Dense)(nil)
			if base {
				b, pp = bl, p
			}
			e := make([]float64, m)
			for i := 0; i < n; i++ {
				residualRow(e, d, c, s, b, pp, i)
				var ss, num float64
				for j := range e {
					v := d.At(i, j)
					for l := 0; l < k; l++ {
						v -= c.At(i, l) * s.At(j, l)
					}
					if base {
						_, nb := bl.Dims()
						for l := 0; l < nb; l++ {
							v -= bl.At(i, l) * p.At(j, l)
						}
					}
					if math.Float64bits(e[j]) != math.Float64bits(v) {
						t.Fatalf("k = %d, baseline %v, entry (%d, %d): %v, definition %v", k, base, i, j, e[j], v)
					}
					ss += v * v
					if j > 0 {
						num += e[j-1] * v
					}
				}
				if gs, gn := squaresAndLag(e); gs != ss || gn != num {
					t.Fatalf("k = %d, row %d: squares %v and lag %v, in order %v and %v", k, i, gs, gn, ss, num)
				}
			}
		}
	}
}

// transpose gives aᵀ: every entry of gonum's transposed view a.T() (the
// reference library's definition), bit for bit, for a matrix held in a wider
// one (stride past its columns) and with a NaN among the values.
func TestTransposeIsGonumsView(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	for _, sh := range [][2]int{{1, 1}, {5, 37}, {37, 5}, {6, 6}} {
		wide := mat.NewDense(sh[0], sh[1]+2, nil)
		for i := 0; i < sh[0]; i++ {
			for j := 0; j < sh[1]+2; j++ {
				wide.Set(i, j, rng.NormFloat64())
			}
		}
		wide.Set(sh[0]-1, 0, math.NaN())
		a := wide.Slice(0, sh[0], 0, sh[1]).(*mat.Dense)
		got, want := transpose(a), a.T()
		if r, c := got.Dims(); r != sh[1] || c != sh[0] {
			t.Fatalf("%v: transpose is %d × %d", sh, r, c)
		}
		for i := 0; i < sh[1]; i++ {
			for j := 0; j < sh[0]; j++ {
				if math.Float64bits(got.At(i, j)) != math.Float64bits(want.At(i, j)) {
					t.Fatalf("%v: entry (%d, %d) %v, a.T() %v", sh, i, j, got.At(i, j), want.At(i, j))
				}
			}
		}
	}
}
