package mcr

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// twoSpecies builds D = C Sᵀ + B Pᵀ + E from the model: A → B first order (a = e^{−t/τ},
// Bateman 1910), Gaussian bands on zero, an offset b0_i and slope b1_i per spectrum on
// P = [1, x], and white noise σ.
func twoSpecies(seed uint64, sigma float64, withBaseline bool) (d, c, s, b, p *mat.Dense) {
	const n, m = 30, 200
	rng := rand.New(rand.NewPCG(seed, 11))
	c, s = mat.NewDense(n, 2, nil), mat.NewDense(m, 2, nil)
	b, p = mat.NewDense(n, 2, nil), mat.NewDense(m, 2, nil)
	for j := 0; j < m; j++ {
		x := float64(j)
		s.Set(j, 0, math.Exp(-0.5*math.Pow((x-60)/8, 2)))
		s.Set(j, 1, math.Exp(-0.5*math.Pow((x-130)/10, 2)))
		p.Set(j, 0, 1)
		p.Set(j, 1, 2*x/float64(m-1)-1)
	}
	for i := 0; i < n; i++ {
		a := math.Exp(-float64(i) / 8)
		c.Set(i, 0, a)
		c.Set(i, 1, 1-a)
		if withBaseline {
			b.Set(i, 0, 0.02*math.Sin(float64(i)/4))
			b.Set(i, 1, 0.01*math.Cos(float64(i)/5))
		}
	}
	d = mat.NewDense(n, m, nil)
	d.Mul(c, s.T())
	var bp mat.Dense
	bp.Mul(b, p.T())
	d.Add(d, &bp)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, d.At(i, j)+sigma*rng.NormFloat64())
		}
	}
	return d, c, s, b, p
}

// With the baseline shapes given, ALS recovers the species from data built from the
// model D = C Sᵀ + B Pᵀ + E: spectra and profiles at cosine ≥ 0.999, and the fitted
// C Sᵀ + B Pᵀ equals the noise-free data to within the noise (RMS ≤ σ). The split of an
// offset between a spectrum and the baseline is a convention (spectra lowered onto
// zero), biased by the noise on the spectrum's lower envelope, so the coefficients
// themselves are only checked to 0.02 (2 % of the band height).
func TestResolveWithBaseline(t *testing.T) {
	d, c, s, b, p := twoSpecies(1, 1e-3, true)
	clean, _, _, _, _ := twoSpecies(1, 0, true)
	c0 := mat.NewDense(30, 2, nil)
	for i := 0; i < 30; i++ {
		c0.Set(i, 0, 1-float64(i)/30)
		c0.Set(i, 1, float64(i)/30)
	}
	res, err := Resolve(Dense{D: d}, c0, Options{Mode: Species, Closure: true, Total: []float64{1}, Baseline: p})
	if err != nil {
		t.Fatal(err)
	}
	if _, k := res.C.Dims(); k != 2 || res.Baseline == nil {
		t.Fatalf("result has %d components and baseline %v; want 2 and the coefficients", k, res.Baseline != nil)
	}
	for j := 0; j < 2; j++ {
		if cs := cosine(mat.Col(nil, j, s), mat.Col(nil, j, res.S)); cs < 0.999 {
			t.Errorf("spectrum %d cosine %.5f", j+1, cs)
		}
		if cc := cosine(mat.Col(nil, j, c), mat.Col(nil, j, res.C)); cc < 0.999 {
			t.Errorf("profile %d cosine %.5f", j+1, cc)
		}
	}
	var fit, bp mat.Dense
	fit.Mul(res.C, res.S.T())
	bp.Mul(res.Baseline, p.T())
	fit.Add(&fit, &bp)
	fit.Sub(&fit, clean)
	if rms := mat.Norm(&fit, 2) / math.Sqrt(30*200); rms > 1e-3 {
		t.Errorf("fitted model differs from the noise-free data by RMS %.3g, above the noise 1e-3", rms)
	}
	const tol = 0.02
	for i := 0; i < 30; i++ {
		for q := 0; q < 2; q++ {
			if diff := math.Abs(res.Baseline.At(i, q) - b.At(i, q)); diff > tol {
				t.Errorf("spectrum %d baseline term %d: %.5f, truth %.5f", i, q, res.Baseline.At(i, q), b.At(i, q))
			}
		}
	}
}

// A spectrum with sharp lines is found; the others are not (Hampel identifier with the
// sharp-line test, see FindOutliers; data from the model).
func TestFindOutliersSharpLines(t *testing.T) {
	d, c, s, _, _ := twoSpecies(2, 1e-3, false)
	for j := 7; j < 200; j += 23 {
		d.Set(12, j, d.At(12, j)+0.03)
	}
	out := FindOutliers(d, c, s, nil, nil, nil, 1e-3, nil)
	if len(out) != 1 || out[0].Row != 12 || !strings.Contains(out[0].Reason, "sharp lines") {
		t.Fatalf("outliers %+v; want spectrum 12 with sharp lines", out)
	}
	clean, c2, s2, _, _ := twoSpecies(3, 1e-3, false)
	if out := FindOutliers(clean, c2, s2, nil, nil, nil, 1e-3, nil); len(out) != 0 {
		t.Errorf("clean data: outliers %+v, want none", out)
	}
}

// SplitSpread: a spectrum of q equal values among zeros has ‖s‖₁/‖s‖₂ = q/√q = √q
// whatever its height (definition of the norms); lifting it by an offset raises the
// measure, a scale does not.
func TestSplitSpread(t *testing.T) {
	s := mat.NewDense(16, 2, nil)
	for i := 0; i < 4; i++ {
		s.Set(i, 0, 3)
	}
	for i := 0; i < 9; i++ {
		s.Set(i, 1, -0.5)
	}
	if got, want := SplitSpread(s), 2.0+3.0; math.Abs(got-want) > 1e-12 {
		t.Errorf("spread %g, want √4 + √9 = %g", got, want)
	}
	lifted := mat.DenseCopyOf(s)
	for i := 0; i < 16; i++ {
		lifted.Set(i, 0, lifted.At(i, 0)+0.3)
	}
	if SplitSpread(lifted) <= SplitSpread(s) {
		t.Errorf("an offset did not widen the spread: %g ≤ %g", SplitSpread(lifted), SplitSpread(s))
	}
}

// LessBaseline over weighted data gives the weighted products of D − B Pᵀ itself: the
// same as WeightedDense of the subtracted matrix (definition of the products, checked
// to rounding), and carries the weights.
func TestLessBaselineWeighted(t *testing.T) {
	n, m, k, b := 7, 11, 2, 2
	rng := rand.New(rand.NewPCG(4, 4))
	fill := func(r, c int) *mat.Dense {
		x := mat.NewDense(r, c, nil)
		for i := 0; i < r; i++ {
			for j := 0; j < c; j++ {
				x.Set(i, j, rng.NormFloat64())
			}
		}
		return x
	}
	d, bb, p, c, s := fill(n, m), fill(n, b), fill(m, b), fill(n, k), fill(m, k)
	row, col := make([]float64, n), make([]float64, m)
	for i := range row {
		row[i] = 0.5 + rng.Float64()
	}
	for j := range col {
		col[j] = 0.5 + 3*rng.Float64()
	}
	lb := LessBaseline{Data: WeightedDense{D: d, Row: row, Col: col}, B: bb, P: p}
	ref := WeightedDense{D: SubtractBaseline(d, bb, p), Row: row, Col: col}
	if r, cw := lb.Weights(); r == nil || cw == nil {
		t.Fatal("LessBaseline of weighted data lost its weights")
	}
	for _, pair := range [][2]*mat.Dense{{lb.MulSpectra(s), ref.MulSpectra(s)}, {lb.MulProfiles(c), ref.MulProfiles(c)}} {
		if !mat.EqualApprox(pair[0], pair[1], 1e-10) {
			t.Errorf("products differ:\n%v\n%v", mat.Formatted(pair[0]), mat.Formatted(pair[1]))
		}
	}
	if a, want := lb.FrobeniusSq(), ref.FrobeniusSq(); math.Abs(a-want) > 1e-10*want {
		t.Errorf("FrobeniusSq %g, want %g", a, want)
	}
	if r, cw := (LessBaseline{Data: Dense{D: d}, B: bb, P: p}).Weights(); r != nil || cw != nil {
		t.Error("LessBaseline of plain data reports weights")
	}
}
