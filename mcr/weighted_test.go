package mcr

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// rowColWeights gives every row and channel its own weight, spread over
// two decades as a strong solvent band or a weak lamp would.
func rowColWeights(rng *rand.Rand, n, m int) (a, b []float64) {
	a, b = make([]float64, n), make([]float64, m)
	for i := range a {
		a[i] = math.Pow(10, rng.Float64()-0.5)
	}
	for j := range b {
		b[j] = math.Pow(10, 2*rng.Float64()-1)
	}
	return a, b
}

// Weighted least squares with w_ij = a_i b_j is ordinary least squares on
// the scaled matrix √A D √B with unknowns √A C and √B S, because
// Σ a_i b_j (d_ij − c_i·s_j)² = ‖√A (D − C Sᵀ) √B‖²_F (definition of
// weighted least squares; row × column scaling as in Wentzell et al.,
// J. Chemometrics 1997). Closure Σ_k c_ik = 1 becomes Σ_k c̃_ik = √a_i, a
// per-row total. So weighted ALS must walk the same iterates as plain ALS
// on the scaled problem, to rounding.
func TestWeightedEqualsScaled(t *testing.T) {
	rng := rand.New(rand.NewPCG(1997, 12))
	n, m := 60, 90
	d, _, _ := windowData(rng, n, m, 1e-3)
	a, b := rowColWeights(rng, n, m)
	c0 := mat.NewDense(n, 3, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < 3; j++ {
			c0.Set(i, j, d.At(i, 15+30*j)+0.05)
		}
	}
	opt := Options{Mode: Species, Closure: true, Total: []float64{1}, Tolerance: 1e-13, MaxIter: 400}
	w, err := Resolve(WeightedDense{D: d, Row: a, Col: b}, c0, opt)
	if err != nil {
		t.Fatal(err)
	}
	ds := scaleRows(d, a, 0.5)
	ds = transpose(scaleRows(transpose(ds), b, 0.5))
	tot := make([]float64, n)
	for i := range tot {
		tot[i] = math.Sqrt(a[i])
	}
	sopt := opt
	sopt.Total = tot
	p, err := Resolve(Dense{D: ds}, scaleRows(c0, a, 0.5), sopt)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(w.ResidualSS-p.ResidualSS) > 1e-9*p.ResidualSS {
		t.Errorf("weighted residual %.12g, scaled problem's %.12g", w.ResidualSS, p.ResidualSS)
	}
	pc := scaleRows(p.C, a, -0.5)
	ps := scaleRows(p.S, b, -0.5)
	for i := 0; i < n; i++ {
		for k := 0; k < 3; k++ {
			if math.Abs(pc.At(i, k)-w.C.At(i, k)) > 1e-8 {
				t.Fatalf("C[%d,%d]: weighted %.10g, scaled back %.10g", i, k, w.C.At(i, k), pc.At(i, k))
			}
		}
	}
	for j := 0; j < m; j++ {
		for k := 0; k < 3; k++ {
			if math.Abs(ps.At(j, k)-w.S.At(j, k)) > 1e-8*(1+math.Abs(ps.At(j, k))) {
				t.Fatalf("S[%d,%d]: weighted %.10g, scaled back %.10g", j, k, w.S.At(j, k), ps.At(j, k))
			}
		}
	}
	// The weighted residual from the trace identity equals the direct sum
	// Σ a_i b_j e_ij² (FitWeighted streams the definition).
	f := FitWeighted(d, w.C, w.S, a, b, nil)
	if math.Abs(f.WeightedSS-w.ResidualSS) > 1e-8*f.WeightedSS {
		t.Errorf("trace identity %.12g, direct weighted sum %.12g", w.ResidualSS, f.WeightedSS)
	}
}

// The compressed weighted form at full rank is the dense weighted form
// (the SVD of √A D √B is exact), so both give the same resolution.
func TestWeightedCompressedSameAsDense(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 1997))
	n, m := 50, 70
	d, _, _ := windowData(rng, n, m, 1e-3)
	a, b := rowColWeights(rng, n, m)
	ds := scaleRows(d, a, 0.5)
	ds = transpose(scaleRows(transpose(ds), b, 0.5))
	cp := compress(t, ds, n)
	wc := WeightedCompressed{U: cp.U, Sigma: cp.Sigma, V: cp.V, FrobSq: cp.FrobSq, Row: a, Col: b}
	wd := WeightedDense{D: d, Row: a, Col: b}
	if math.Abs(wc.FrobeniusSq()-wd.FrobeniusSq()) > 1e-10*wd.FrobeniusSq() {
		t.Errorf("weighted ‖D‖²: compressed %.12g, dense %.12g", wc.FrobeniusSq(), wd.FrobeniusSq())
	}
	c0 := mat.NewDense(n, 3, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < 3; j++ {
			c0.Set(i, j, d.At(i, 12+23*j)+0.05)
		}
	}
	opt := Options{Mode: Species, Closure: true, Total: []float64{1}, Tolerance: 1e-12, MaxIter: 400}
	r1, err := Resolve(wd, c0, opt)
	if err != nil {
		t.Fatal(err)
	}
	r2, err := Resolve(wc, c0, opt)
	if err != nil {
		t.Fatal(err)
	}
	for k := 0; k < 3; k++ {
		if c := cosine(mat.Col(nil, k, r1.S), mat.Col(nil, k, r2.S)); c < 1-1e-9 {
			t.Errorf("spectrum %d: cosine %.12f dense vs compressed", k+1, c)
		}
	}
}

// On data made exactly under the model, with noise of standard deviation
// σ_ij = 1/√(a_i b_j), the weighted residual over its degrees of freedom is
// a χ²_ν/ν variable: mean 1, standard deviation √(2/ν) ≈ 1.3 % here
// (definition of the chi-square distribution; ν = nm − k(n + m − k) for a
// rank-k bilinear fit, common practice). So residual-to-noise must be 1
// within 2.5 % (about 4 standard deviations of χ²_ν/ν here); a wrong ν or weight would move it.
func TestResidualToNoiseUnderTheModel(t *testing.T) {
	rng := rand.New(rand.NewPCG(77, 1997))
	n, m := 80, 150
	d, _, _ := windowData(rng, n, m, 0)
	a, b := rowColWeights(rng, n, m)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, d.At(i, j)+1e-3*rng.NormFloat64()/math.Sqrt(a[i]*b[j]))
		}
	}
	// Weights in the units of the noise: w = 1/σ² with σ = 1e-3/√(ab).
	wa := make([]float64, n)
	for i := range wa {
		wa[i] = a[i] * 1e6
	}
	c0 := mat.NewDense(n, 3, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < 3; j++ {
			c0.Set(i, j, d.At(i, 20+50*j)+0.05)
		}
	}
	opt := Options{Mode: Species, Closure: true, Total: []float64{1}, Tolerance: 1e-10, MaxIter: 2000}
	res, err := Resolve(WeightedDense{D: d, Row: wa, Col: b}, c0, opt)
	if err != nil {
		t.Fatal(err)
	}
	f := FitWeighted(d, res.C, res.S, wa, b, nil)
	if f.Observed != n*m {
		t.Fatalf("observed %d, want %d", f.Observed, n*m)
	}
	if r := f.ResidualToNoise(n, m, 3); r < 0.975 || r > 1.025 {
		t.Errorf("residual to noise %.4f, want 1 ± 0.025 (ν = nm would give 0.971)", r)
	}
	// Leaving points out removes them from both the sum and the count.
	g := FitWeighted(d, res.C, res.S, wa, b, func(i, j int) bool { return j < 10 })
	if g.Observed != n*(m-10) || !(g.WeightedSS < f.WeightedSS) {
		t.Errorf("with 10 channels missing: observed %d (want %d), weighted SS %.6g (all: %.6g)", g.Observed, n*(m-10), g.WeightedSS, f.WeightedSS)
	}
}
