package svd

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// gaussKernel is a Gaussian smoothing kernel of sigma points, cut at ±3σ and scaled
// to unit sum of squares, so that smoothed white noise keeps its variance per point.
func gaussKernel(sigma float64) []float64 {
	half := int(math.Ceil(3 * sigma))
	w := make([]float64, 2*half+1)
	var ss float64
	for i := range w {
		u := float64(i-half) / sigma
		w[i] = math.Exp(-0.5 * u * u)
		ss += w[i] * w[i]
	}
	for i := range w {
		w[i] /= math.Sqrt(ss)
	}
	return w
}

// longRun is the long-run variance over the variance per point of white noise
// filtered by w, (Σ w)²/Σ w²: a moving average's autocovariances are Σ_i w_i w_{i+h},
// which sum over all h to (Σ w)² (Brockwell & Davis, Time Series: Theory and Methods,
// 2nd ed. 1991, §3.1 and §7.1; from memory).
func longRun(w []float64) float64 {
	var s, ss float64
	for _, v := range w {
		s += v
		ss += v * v
	}
	return s * s / ss
}

// smoothedNoise returns n rows of m points of unit-variance noise: white when w is
// nil, else white noise filtered by w (each row drawn wider and cut, so that every
// point has the full kernel).
func smoothedNoise(rng *rand.Rand, n, m int, w []float64) *mat.Dense {
	out := mat.NewDense(n, m, nil)
	half := len(w) / 2
	raw := make([]float64, m+len(w))
	for i := 0; i < n; i++ {
		for j := range raw {
			raw[j] = rng.NormFloat64()
		}
		row := out.RawRowView(i)
		for j := range row {
			if w == nil {
				row[j] = raw[j+half]
				continue
			}
			var s float64
			for l, v := range w {
				s += v * raw[j+l]
			}
			row[j] = s
		}
	}
	return out
}

// bandBasis returns the orthonormal basis of the Legendre polynomials up to order and
// Gaussian bands of width sd (axis units) at the given centres: the directions a
// baseline and a few species' spectra take out of each residual row.
func bandBasis(axis []float64, order int, centres []float64, sd float64) *mat.Dense {
	m := len(axis)
	leg := Legendre(axis, order)
	g := mat.NewDense(m, order+1+len(centres), nil)
	g.Slice(0, m, 0, order+1).(*mat.Dense).Copy(leg)
	for c, x0 := range centres {
		for j, x := range axis {
			u := (x - x0) / sd
			g.Set(j, order+1+c, math.Exp(-0.5*u*u))
		}
	}
	orthonormalize(g)
	return g
}

// project returns e (I − G Gᵀ).
func project(e, g *mat.Dense) *mat.Dense {
	var eg, out mat.Dense
	eg.Mul(e, g)
	out.Mul(&eg, g.T())
	out.Sub(e, &out)
	return &out
}

// The traces behind the bias correction, against their definition computed with
// dense m × m matrices: A_hg = tr(Π S_h Π T_g), Π = I − G Gᵀ, (S_h)_{j,j+h} = 1,
// T_0 = I, T_g = S_g + S_gᵀ (definition of the trace and of the shift operators).
func TestShiftTracesAsDefined(t *testing.T) {
	const m, h = 23, 5
	rng := rand.New(rand.NewPCG(3, 1))
	g := mat.NewDense(m, 3, nil)
	for j := 0; j < m; j++ {
		for c := 0; c < 3; c++ {
			g.Set(j, c, rng.NormFloat64())
		}
	}
	orthonormalize(g)
	pi := mat.NewDense(m, m, nil)
	pi.Mul(g, g.T())
	pi.Scale(-1, pi)
	for j := 0; j < m; j++ {
		pi.Set(j, j, pi.At(j, j)+1)
	}
	shift := func(l int) *mat.Dense {
		s := mat.NewDense(m, m, nil)
		for j := 0; j+l < m; j++ {
			s.Set(j, j+l, 1)
		}
		return s
	}
	got := shiftTraces(g, m, h)
	for l := 0; l <= h; l++ {
		for k := 0; k <= h; k++ {
			tg := shift(0)
			if k > 0 {
				tg.Add(shift(k), shift(k).T())
			}
			var x mat.Dense
			x.Mul(pi, shift(l))
			x.Mul(&x, pi)
			x.Mul(&x, tg)
			want := mat.Trace(&x)
			if math.Abs(got.At(l, k)-want) > 1e-10*float64(m) {
				t.Errorf("A[%d][%d] = %.12g, want %.12g", l, k, got.At(l, k), want)
			}
		}
	}
}

// Noise smoothed along the axis with Gaussian kernels of 1, 2 and 3 points has the
// long-run variance ratio (Σw)²/Σw² (longRun: 3.5, 7.1, 10.6); measured on rows that
// lost a cubic and three band shapes (as the residual of a fit does), the corrected
// estimate is within 8 % of it where the plain lag sums of the same rows fall short
// by 10–19 %, more than twice as far (the bias the correction exists for; 301 points,
// as the pipeline's tests use). White noise gets τ = 1 exactly.
func TestAxisCorrelationMeasuresSmoothedNoise(t *testing.T) {
	const n, m = 150, 301
	axis := make([]float64, m)
	for j := range axis {
		axis[j] = 1800 - 2*float64(j)
	}
	g := bandBasis(axis, 3, []float64{1700, 1500, 1300}, 15)
	rng := rand.New(rand.NewPCG(11, 3))
	for _, sk := range []float64{1, 2, 3} {
		w := gaussKernel(sk)
		want := longRun(w)
		e := project(smoothedNoise(rng, n, m, w), g)
		got := AxisCorrelation(e, g)
		plain := AxisCorrelation(e, nil)
		t.Logf("σ_k = %g: τ %.3f, corrected %.3f (lag-1 %.3f, window %d), plain lag sums %.3f", sk, want, got.Inflation, got.Lag1, got.Lags, plain.Inflation)
		if !got.Correlated || math.Abs(got.Inflation/want-1) > 0.08 {
			t.Errorf("σ_k = %g: τ = %.3f, want %.3f within 8 %%", sk, got.Inflation, want)
		}
		if math.Abs(got.Effective-m/got.Inflation) > 1e-9 {
			t.Errorf("effective points %v, want m/τ = %v", got.Effective, m/got.Inflation)
		}
		if math.Abs(plain.Inflation-want) < 2*math.Abs(got.Inflation-want) {
			t.Errorf("σ_k = %g: the plain lag sums give %.3f, as close to %.3f as the corrected %.3f: the case does not show the projection's bias", sk, plain.Inflation, want, got.Inflation)
		}
	}
	white := AxisCorrelation(project(smoothedNoise(rng, n, m, nil), g), g)
	if white.Correlated || white.Inflation != 1 || white.Effective != m {
		t.Errorf("white noise: %+v, want τ = 1 and %d effective points", white, m)
	}
}

// Geyer's initial monotone sequence on a known autocorrelation: AR(1) with ρ_h = φ^h
// sums to (1+φ)/(1−φ) (Bayley & Hammersley 1946; from memory), 3 at φ = 0.5; the
// pairs stop at the first that is not positive.
func TestGeyerSumOfAR1(t *testing.T) {
	rho := make([]float64, 60)
	for h := range rho {
		rho[h] = math.Pow(0.5, float64(h))
	}
	if got := geyerSum(rho); math.Abs(got-3) > 1e-12 {
		t.Errorf("AR(1), φ = 0.5: %v, want 3", got)
	}
	// ρ = 1, 0.5, then a negative pair: only the first pair counts, 2·1.5 − 1 = 2.
	if got := geyerSum([]float64{1, 0.5, 0.1, -0.3, 0.4, 0.4}); math.Abs(got-2) > 1e-12 {
		t.Errorf("stops at the first non-positive pair: %v, want 2", got)
	}
}

// The baseline order test on noise smoothed along the axis (Gaussian kernel of 2
// points, the per-point variance kept) with three species and no baseline: the
// extra-sum-of-squares F-test (Draper & Smith 1998 §6) must hold its level, so no
// order is chosen; counting the 600 points as independent chose one. With a real
// quadratic drift on top (offset, slope and curvature per spectrum, each of the size of
// the noise per point), order 2 is found.
func TestBaselineOrderHoldsItsLevelOnSmoothedNoise(t *testing.T) {
	const n, m, k = 60, 600, 3
	axis := make([]float64, m)
	for j := range axis {
		axis[j] = 1800 - float64(j)
	}
	chem := mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		f := float64(i) / (n - 1)
		conc := []float64{math.Exp(-3 * f), 3 * f * math.Exp(-3*f), 1 - math.Exp(-3*f) - 3*f*math.Exp(-3*f)}
		for j, x := range axis {
			var v float64
			for c, x0 := range []float64{1650, 1500, 1350} {
				u := (x - x0) / 20
				v += conc[c] * math.Exp(-0.5*u*u)
			}
			chem.Set(i, j, v)
		}
	}
	const sigma = 2e-3
	rng := rand.New(rand.NewPCG(5, 8))
	for draw := 0; draw < 3; draw++ {
		noise := smoothedNoise(rng, n, m, gaussKernel(2))
		var d mat.Dense
		d.Scale(sigma, noise)
		d.Add(&d, chem)
		ch, err := ChooseBaselineOrder(&d, nil, axis, k, 3, 0.05/4)
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("draw %d: order %d, τ %.3f (lag-1 %.3f), steps %+v", draw, ch.Order, ch.Noise.Inflation, ch.Noise.Lag1, ch.Steps)
		if ch.Order != -1 {
			t.Errorf("draw %d: order %d on data without a baseline", draw, ch.Order)
		}
		if want := longRun(gaussKernel(2)); math.Abs(ch.Noise.Inflation/want-1) > 0.08 {
			t.Errorf("draw %d: τ %.3f, want %.3f within 8 %%", draw, ch.Noise.Inflation, want)
		}
		// Drift coefficients drawn per spectrum: a drift whose course in time
		// lay in the span of the concentrations would be taken up by the
		// species' spectra, whatever the test.
		drift := mat.DenseCopyOf(&d)
		leg := Legendre(axis, 2)
		for i := 0; i < n; i++ {
			b := []float64{rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()}
			for j := 0; j < m; j++ {
				drift.Set(i, j, drift.At(i, j)+sigma*(b[0]*leg.At(j, 0)+b[1]*leg.At(j, 1)+b[2]*leg.At(j, 2)))
			}
		}
		ch, err = ChooseBaselineOrder(drift, nil, axis, k, 3, 0.05/4)
		if err != nil {
			t.Fatal(err)
		}
		if ch.Order != 2 {
			t.Errorf("draw %d: order %d with a quadratic drift, want 2 (steps %+v)", draw, ch.Order, ch.Steps)
		}
	}
}

// lagProducts and lagDots4 sum four lags (or four columns) in one pass; each value must
// still be the definition's sum, Σ_j x_j y_{j+l} over the j inside both, added in the
// order of j, to the last bit (the outputs' bytes depend on it: docs/reproducibility.md).
// Lengths 0–13 cover every tail of the four-lag pass and lags beyond the axis.
func TestLagSumsInOnePassAreTheDefinitionsBits(t *testing.T) {
	plain := func(x, y []float64, l int) float64 { // the definition, term by term
		var s float64
		for j := 0; j < len(x) && j+l < len(y); j++ {
			s += x[j] * y[j+l]
		}
		return s
	}
	rng := rand.New(rand.NewPCG(5, 8))
	draw := func(m int) []float64 {
		x := make([]float64, m)
		for j := range x {
			x[j] = rng.NormFloat64() * math.Exp(4*rng.NormFloat64())
		}
		return x
	}
	for _, m := range []int{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 301, 3001} {
		x := draw(m)
		for _, lags := range []int{1, 3, 4, 5, 8, 9, 17} {
			out := make([]float64, lags)
			lagProducts(out, x)
			for l, got := range out {
				if want := plain(x, x, l); math.Float64bits(got) != math.Float64bits(want) {
					t.Errorf("m = %d: lag %d of %d: %x, the definition %x", m, l, lags, got, want)
				}
			}
		}
		vs := [][]float64{draw(m), draw(m), draw(m), draw(m)}
		for l := 0; l <= m+1; l += 1 + m/7 {
			got := make([]float64, 4)
			got[0], got[1], got[2], got[3] = lagDots4(x, vs, l)
			for i, v := range vs {
				if want := plain(x, v, l); math.Float64bits(got[i]) != math.Float64bits(want) {
					t.Errorf("m = %d: column %d at lag %d: %x, the definition %x", m, i, l, got[i], want)
				}
			}
		}
	}
}
