package kinetics

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// axisKernel is a Gaussian smoothing kernel of sd points, scaled so that
// smoothed white noise keeps unit variance (Σ w² = 1).
func axisKernel(sd float64) []float64 {
	h := int(math.Ceil(4 * sd))
	k := make([]float64, 2*h+1)
	s := 0.0
	for i := range k {
		k[i] = math.Exp(-0.5 * sq(float64(i-h)/sd))
		s += k[i] * k[i]
	}
	for i := range k {
		k[i] /= math.Sqrt(s)
	}
	return k
}

// smoothAlongAxis convolves z with ker, wrapping at the ends (so every
// point has the same correlation with its neighbours).
func smoothAlongAxis(z, ker []float64) []float64 {
	m, h := len(z), len(ker)/2
	out := make([]float64, m)
	for j := range out {
		for l, w := range ker {
			out[j] += w * z[((j+l-h)%m+m)%m]
		}
	}
	return out
}

// axisCorrelation is the correlation of two points lag apart (circular)
// in noise smoothed by ker: Σ_a w_a w_(a+lag).
func axisCorrelation(ker []float64, m int) []float64 {
	rho := make([]float64, m)
	for lag := range rho {
		d := min(lag, m-lag)
		for a := 0; a+d < len(ker); a++ {
			rho[lag] += ker[a] * ker[a+d]
		}
	}
	return rho
}

// TestSandwichWithoutLagsForIndependentSpectra: noise correlated along the
// axis (white noise smoothed by a Gaussian of sd 1.5 points), independent
// from spectrum to spectrum, in an invented A → B → C series (101 spectra,
// 151 points, a solvent band 11 times noisier, noise weights). The
// reference is linear error propagation with the known covariance (the
// delta method: cov θ = B (Σ_i J_iᵀ K J_i) B, B = (JᵀJ)⁻¹, K the weighted
// noise covariance of one spectrum; Seber & Wild, Nonlinear Regression,
// 1989, §2.1, from memory), taken at the true constants. The reported
// standard errors (the sandwich, White 1980, clustered on spectra, Liang &
// Zeger 1986) must average, root mean square over 120 draws, within 7 % of
// it. With the Newey–West window over 4 neighbours in time that the
// spectra's independence does not call for they were 0.86 and 0.89 of it.
func TestSandwichWithoutLagsForIndependentSpectra(t *testing.T) {
	s := mustParse(t, "A -> B -> C")
	const n, m, draws = 101, 151, 120
	times := linspace(0, 3000, n)
	kTrue, c0 := []float64{4e-3, 1.2e-3}, []float64{1, 0, 0}
	sim, err := s.Simulate(kTrue, c0, times, 60)
	if err != nil {
		t.Fatal(err)
	}
	spec := mat.NewDense(m, 3, nil)
	sd, colW := make([]float64, m), make([]float64, m)
	band := func(u, c, w float64) float64 { return math.Exp(-0.5 * sq((u-c)/w)) }
	for j := 0; j < m; j++ {
		u := float64(j) / (m - 1)
		spec.Set(j, 0, 0.3*band(u, 0.2, 0.02)+0.2*band(u, 0.7, 0.02))
		spec.Set(j, 1, 0.26*band(u, 0.25, 0.025)+0.14*band(u, 0.8, 0.02))
		spec.Set(j, 2, 0.22*band(u, 0.3, 0.02)+0.25*band(u, 0.55, 0.02))
		sd[j] = 1e-3 * (1 + 10*band(u, 0.6, 0.05))
		colW[j] = 1 / sq(sd[j])
	}
	var truth mat.Dense
	truth.Mul(sim.C, spec.T())
	ker := axisKernel(1.5)
	opt := FitOptions{T0: 60, InitialK: kTrue, C0: c0, ColWeights: colW}

	// The exact covariance at the truth; weighted, the noise of one spectrum
	// has covariance K_jl = ρ(j − l).
	p, err := newFitProblem(s, times, opt, n)
	if err != nil {
		t.Fatal(err)
	}
	p.dred = p.noiseScaled(&truth)
	theta := p.pack(kTrue, c0)
	jac := mat.NewDense(n*m, 2, nil)
	if err := p.jacobian(theta, jac); err != nil {
		t.Fatal(err)
	}
	rho := axisCorrelation(ker, m)
	mid := mat.NewDense(2, 2, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			ja := jac.RawRowView(i*m + j)
			for l := 0; l < m; l++ {
				if r := rho[(j-l+m)%m]; r != 0 {
					jb := jac.RawRowView(i*m + l)
					for a := 0; a < 2; a++ {
						for b := 0; b < 2; b++ {
							mid.Set(a, b, mid.At(a, b)+ja[a]*r*jb[b])
						}
					}
				}
			}
		}
	}
	bread, _, err := Covariance(jac, 1)
	if err != nil {
		t.Fatal(err)
	}
	var bm, exact mat.Dense
	bm.Mul(bread, mid)
	exact.Mul(&bm, bread)

	rng := rand.New(rand.NewPCG(5, 7))
	var ss [2]float64
	for r := 0; r < draws; r++ {
		d := mat.NewDense(n, m, nil)
		for i := 0; i < n; i++ {
			z := make([]float64, m)
			for j := range z {
				z[j] = rng.NormFloat64()
			}
			e := smoothAlongAxis(z, ker)
			for j := 0; j < m; j++ {
				d.Set(i, j, truth.At(i, j)+sd[j]*e[j])
			}
		}
		fit, _, err := FitData(s, times, d, opt)
		if err != nil {
			t.Fatal(err)
		}
		for a := range ss {
			ss[a] += sq(fit.KStdErr[a]/kTrue[a]) / draws
		}
	}
	for a := range ss {
		want := math.Sqrt(exact.At(a, a))
		ratio := math.Sqrt(ss[a]) / want
		t.Logf("k%d: relative standard error reported %.4g (rms), by propagation %.4g, ratio %.3f", a+1, math.Sqrt(ss[a]), want, ratio)
		if ratio < 0.93 || ratio > 1.07 {
			t.Errorf("k%d: reported standard error %.3f of the propagated one, want 0.93–1.07", a+1, ratio)
		}
	}
}
