package mcr

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// windowData is three species, each alone for a while (unique resolution),
// with Gaussian bands and closure, plus white noise of standard deviation sd.
func windowData(rng *rand.Rand, n, m int, sd float64) (d, c, s *mat.Dense) {
	const k = 3
	c = mat.NewDense(n, k, nil)
	for i := 0; i < n; i++ {
		t := float64(i) / float64(n-1)
		w := make([]float64, k)
		sum := 0.0
		for j := range w {
			u := (t - (float64(j)+0.5)/k) / (0.8 / k)
			if u*u < 1 {
				w[j] = (1 - u*u) * (1 - u*u)
			}
			sum += w[j]
		}
		for j := range w {
			c.Set(i, j, w[j]/sum)
		}
	}
	s = mat.NewDense(m, k, nil)
	for j := 0; j < m; j++ {
		for q := 0; q < k; q++ {
			x := (float64(j) - float64(m)*(0.2+0.3*float64(q))) / (0.06 * float64(m))
			s.Set(j, q, math.Exp(-0.5*x*x)+0.3*math.Exp(-0.5*(x+2)*(x+2)))
		}
	}
	d = mat.NewDense(n, m, nil)
	d.Mul(c, s.T())
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, d.At(i, j)+sd*rng.NormFloat64())
		}
	}
	return d, c, s
}

// compress truncates the exact SVD (LAPACK, gonum mat.SVD) to r factors.
func compress(t *testing.T, d *mat.Dense, r int) Compressed {
	t.Helper()
	var sv mat.SVD
	if !sv.Factorize(d, mat.SVDThin) {
		t.Fatal("SVD failed")
	}
	var u, v mat.Dense
	sv.UTo(&u)
	sv.VTo(&v)
	n, _ := u.Dims()
	m, _ := v.Dims()
	return Compressed{U: mat.DenseCopyOf(u.Slice(0, n, 0, r)), Sigma: sv.Values(nil)[:r],
		V: mat.DenseCopyOf(v.Slice(0, m, 0, r)), FrobSq: frobSq(d)}
}

// ALS on the truncated SVD (r = k + 8, as the pipeline uses) gives the spectra
// and profiles of ALS on the full matrix: the two objectives differ only by
// the noise outside the leading r factors, which the rank-k model cannot fit
// anyway (Eckart–Young), so the minimisers agree to well within the noise.
// The lack of fit of the compressed path counts the whole ‖D‖² (trace
// identity, PRIMER §4) and so matches the full residual.
func TestCompressedSameAsDense(t *testing.T) {
	rng := rand.New(rand.NewPCG(2004, 1997))
	d, _, _ := windowData(rng, 80, 150, 1e-3)
	c0 := mat.NewDense(80, 3, nil)
	for i := 0; i < 80; i++ {
		for j := 0; j < 3; j++ {
			c0.Set(i, j, d.At(i, 20+50*j)+0.05)
		}
	}
	opt := Options{Mode: Species, Closure: true, Total: []float64{1}, Tolerance: 1e-12, MaxIter: 3000}
	dense, err := Resolve(Dense{D: d}, c0, opt)
	if err != nil {
		t.Fatal(err)
	}
	comp, err := Resolve(compress(t, d, 3+8), c0, opt)
	if err != nil {
		t.Fatal(err)
	}
	if !dense.Converged || !comp.Converged {
		t.Fatalf("converged: dense %v (%d iterations), compressed %v (%d)", dense.Converged, dense.Iterations, comp.Converged, comp.Iterations)
	}
	for j := 0; j < 3; j++ {
		a, b := mat.Col(nil, j, dense.S), mat.Col(nil, j, comp.S)
		if cos := cosine(a, b); cos < 1-1e-6 {
			t.Errorf("spectrum %d: cosine %.9f between dense and compressed", j+1, cos)
		}
		pa, pb := mat.Col(nil, j, dense.C), mat.Col(nil, j, comp.C)
		for i := range pa {
			if math.Abs(pa[i]-pb[i]) > 1e-3 {
				t.Errorf("profile %d row %d: dense %.6f compressed %.6f", j+1, i, pa[i], pb[i])
				break
			}
		}
	}
	_, fullDense := Residuals(d, dense.C, dense.S)
	_, fullComp := Residuals(d, comp.C, comp.S)
	if math.Abs(fullDense-dense.LackOfFitPercent) > 1e-9*fullDense {
		t.Errorf("dense: trace-identity lack of fit %.12g %%, full residual %.12g %%", dense.LackOfFitPercent, fullDense)
	}
	if math.Abs(fullComp-comp.LackOfFitPercent) > 1e-6*fullComp {
		t.Errorf("compressed: trace-identity lack of fit %.12g %%, full residual %.12g %%", comp.LackOfFitPercent, fullComp)
	}
	if math.Abs(fullComp-fullDense) > 1e-4*fullDense {
		t.Errorf("full lack of fit: compressed %.9g %%, dense %.9g %%", fullComp, fullDense)
	}
}

// The Gram matrix and the compressed products are the sums gonum forms
// (reference library: SymOuterK for CᵀC, Dense.Mul for U diag(Σ) Vᵀ S and
// V diag(Σ) Uᵀ C), bit for bit, at k = 1 … 9 (9 is past package product's
// own loops) and with zeros among the entries, which both skip.
func TestGramAndCompressedProductsEqualGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 32))
	fill := func(r, c int) *mat.Dense {
		a := mat.NewDense(r, c, nil)
		for i := 0; i < r; i++ {
			for j := 0; j < c; j++ {
				if rng.IntN(7) > 0 {
					a.Set(i, j, rng.NormFloat64())
				}
			}
		}
		return a
	}
	for k := 1; k <= 9; k++ {
		const n, m, r = 301, 457, 12
		a := fill(n, k)
		var want mat.SymDense
		want.SymOuterK(1, a.T())
		if got := gram(a); !mat.Equal(got, &want) {
			t.Errorf("k = %d: gram differs from SymOuterK", k)
		}
		sig := make([]float64, r)
		for i := range sig {
			sig[i] = float64(r-i) + rng.Float64()
		}
		d := Compressed{U: fill(n, r), Sigma: sig, V: fill(m, r)}
		s, c := fill(m, k), fill(n, k)
		var vs, us, ws, wc mat.Dense
		vs.Mul(d.V.T(), s)
		us.Mul(d.U.T(), c)
		for i, v := range sig {
			for j := 0; j < k; j++ {
				vs.Set(i, j, vs.At(i, j)*v)
				us.Set(i, j, us.At(i, j)*v)
			}
		}
		ws.Mul(d.U, &vs)
		wc.Mul(d.V, &us)
		if got := d.MulSpectra(s); !mat.Equal(got, &ws) {
			t.Errorf("k = %d: MulSpectra differs from U diag(Σ) Vᵀ S by Dense.Mul", k)
		}
		if got := d.MulProfiles(c); !mat.Equal(got, &wc) {
			t.Errorf("k = %d: MulProfiles differs from V diag(Σ) Uᵀ C by Dense.Mul", k)
		}
	}
}
