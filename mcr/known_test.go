package mcr

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func cosine(a, b []float64) float64 {
	return dot(a, b) / math.Sqrt(dot(a, a)*dot(b, b))
}

// rankDeficient is A → B (first order, a = e^{−6t}) in a background Z of
// constant concentration (solvent, cell film): c_A + c_B = c_Z = 1 at every
// time, so the three profiles are linearly dependent and D = C Sᵀ has rank
// 2 for three species (closure-induced rank deficiency; definition of linear
// dependence). Z absorbs only above 0.55 on the axis, where A and B do not;
// A and B overlap everywhere.
func rankDeficient() (c, s *mat.Dense) {
	n, m := 40, 90
	c = mat.NewDense(n, 3, nil)
	for i := 0; i < n; i++ {
		a := math.Exp(-6 * float64(i) / float64(n-1))
		c.SetRow(i, []float64{a, 1 - a, 1})
	}
	s = mat.NewDense(m, 3, nil)
	for i := 0; i < m; i++ {
		x := float64(i) / float64(m-1)
		// A and B share one band envelope (no channel selective for
		// either), each with a peak of its own.
		env := bump(x, 0, 0.55)
		s.SetRow(i, []float64{env + 0.8*bump(x, 0.05, 0.25), env + 0.8*bump(x, 0.3, 0.5), 0.5 * bump(x, 0.55, 1.05)})
	}
	return c, s
}

// With the measured spectra of A and B given, the rank-deficient data
// resolves: a rotation keeping s_A, s_B fixed can only add α c_Z to c_A and
// β c_Z to c_B (rows of T fixed, T e_Z free), and s_Z − α s_A − β s_B ≥ 0
// where Z does not absorb bounds α, β ≤ 0 while c_B(0) = 0 gives β ≥ 0 and
// c_A ≥ 0 gives α ≥ −min c_A = −e^{−6}: the feasible bands shrink to a
// sliver around the truth (Tauler 2001 bands; algebra above). Without the
// known spectra the same data leaves wide bands.
func TestKnownSpectraResolveRankDeficientCase(t *testing.T) {
	c, s := rankDeficient()
	var d mat.Dense
	d.Mul(c, s.T())
	var sv mat.SVD
	sv.Factorize(&d, mat.SVDNone)
	if vals := sv.Values(nil); vals[2] > 1e-10*vals[0] {
		t.Fatalf("test data should have rank 2, σ3/σ1 = %g", vals[2]/vals[0])
	}
	n, _ := c.Dims()
	c0 := mat.NewDense(n, 3, nil)
	for i := 0; i < n; i++ {
		u := float64(i) / float64(n-1)
		c0.SetRow(i, []float64{1 - u, u, 0.5})
	}
	known := Options{Mode: Species, KnownSpectra: [][]float64{mat.Col(nil, 0, s), mat.Col(nil, 1, s), nil}, MaxIter: 3000}
	res, err := Resolve(Dense{&d}, c0, known)
	if err != nil {
		t.Fatal(err)
	}
	if res.LackOfFitPercent > 0.05 {
		t.Errorf("lack of fit %.3g %% with the known spectra", res.LackOfFitPercent)
	}
	for j := 0; j < 3; j++ {
		if cs := cosine(mat.Col(nil, j, res.S), mat.Col(nil, j, s)); cs < 0.999 {
			t.Errorf("spectrum %d: cosine %.5f with the truth", j+1, cs)
		}
		if cc := cosine(mat.Col(nil, j, res.C), mat.Col(nil, j, c)); cc < 0.999 {
			t.Errorf("profile %d: cosine %.5f with the truth", j+1, cc)
		}
	}
	narrow, err := FeasibleBands(res.C, res.S, BandOptions{Mode: Species, Known: []bool{true, true, false}})
	if err != nil {
		t.Fatal(err)
	}
	free, err := FeasibleBands(res.C, res.S, BandOptions{Mode: Species})
	if err != nil {
		t.Fatal(err)
	}
	for j := 0; j < 3; j++ {
		nb, fb := narrow.Bands[j], free.Bands[j]
		t.Logf("component %d: known [%.4f, %.4f], free [%.4f, %.4f], truth %.4f", j+1, nb.Min, nb.Max, fb.Min, fb.Max, contribution(c, s, j))
		if nb.Max-nb.Min > 0.02 {
			t.Errorf("component %d: band with known spectra [%.4f, %.4f] is not narrow", j+1, nb.Min, nb.Max)
		}
	}
	wide := 0.0
	for _, b := range free.Bands {
		wide = math.Max(wide, b.Max-b.Min)
	}
	if wide < 0.1 {
		t.Errorf("without the known spectra the rank-deficient case should stay ambiguous; widest band %.4f", wide)
	}
}
