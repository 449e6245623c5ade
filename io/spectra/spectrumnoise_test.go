package spectra

import (
	"math"
	"math/rand/v2"
	"reflect"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// urethaneLike is an invented absorbance series A → B (first order, rate k
// per second) with two overlapping Gaussian bands on m channels, sampled at
// the times given, and normal noise σ_ij = level[i]·shape_j with shape_j =
// 1 + ½ sin(2πj/m) (noise that varies along the axis, as a detector's does).
func urethaneLike(seed uint64, times, level []float64, m int, k float64) (*Series, []float64) {
	rng := rand.New(rand.NewPCG(seed, 7))
	n := len(times)
	sa, sb, shape := make([]float64, m), make([]float64, m), make([]float64, m)
	for j := range m {
		x := float64(j) / float64(m)
		sa[j] = 0.8*math.Exp(-sq((x-0.40)/0.05)) + 0.1
		sb[j] = 0.6*math.Exp(-sq((x-0.47)/0.06)) + 0.1
		shape[j] = 1 + 0.5*math.Sin(2*math.Pi*float64(j)/float64(m))
	}
	v := mat.NewDense(n, m, nil)
	for i, t := range times {
		ca := math.Exp(-k * t)
		for j := range m {
			v.Set(i, j, ca*sa[j]+(1-ca)*sb[j]+level[i]*shape[j]*rng.NormFloat64())
		}
	}
	axis := make([]float64, m)
	for j := range axis {
		axis[j] = 4000 - float64(j)
	}
	return &Series{AxisName: "wavenumber", Axis: axis, Times: times, Values: v}, shape
}

// unevenTimes are n times 20 s apart for the first third, then 60 s apart:
// unequal intervals, as a series that slows its sampling.
func unevenTimes(n int) []float64 {
	t, out := 0.0, make([]float64, n)
	for i := range out {
		out[i] = t
		if i < n/3 {
			t += 20
		} else {
			t += 60
		}
	}
	return out
}

// Invented data whose first 10 spectra have 3× the noise of the rest (an
// analytic truth): the test finds the difference and each spectrum's level
// is recovered within the sampling error of a robust scale. The median
// absolute deviation has 37 % of the standard deviation's Gaussian
// efficiency (Rousseeuw & Croux, JASA 1993), so its relative standard error
// on m points is 1/√(0.37·2m) = 1.17/√m; the median over 8 blocks of m/8
// points has at least 2/π of the mean's efficiency (the sample median's
// asymptotic efficiency; common statistics), 1.47/√m; the second
// difference along the axis taken first makes neighbouring values
// correlated, which raises that by at most √1.94 = 1.39 (alongAxis); and
// unmixing the neighbours' share (the inverse of the [a², 1, (1−a)²]
// smoothing, at a = ½ eigenvalues 1/3 … 1) by at most √(mean 1/λ²) = 1.86
// (the integral ∫dθ/(2 + cos θ)² = 2π·2/3^{3/2}; from memory): 6 % at
// m = 4000.
// Beside the step a spectrum's residual carries its noisier neighbour's
// variance too, u_i = (a²v_{i−1} + v_i + (1−a)²v_{i+1})/(1 + a² + (1−a)²),
// and the error of what is unmixed from it is that much larger: every
// spectrum within 4·(u_i/v_i) standard errors and their mean within 4 %
// (the channel noise the levels are taken against is the median absolute
// difference of 38 values per channel, which runs about 2 % low at that
// size: the finite-sample factor n/(n − 0.8), Croux & Rousseeuw 1992; from
// memory). The reaction
// is slow beside the sampling (k·Δt ≤ 0.02), so that its curvature in time
// stays far below the noise.
func TestSpectrumNoiseRecoversKnownLevels(t *testing.T) {
	const n, m = 40, 4000
	level := make([]float64, n)
	for i := range level {
		level[i] = 1e-3
		if i < 10 {
			level[i] = 3e-3
		}
	}
	times := unevenTimes(n)
	s, shape := urethaneLike(1, times, level, m, 1.0/3000)
	as, err := Assemble(s, AssembleOptions{Kind: Absorbance})
	if err != nil {
		t.Fatal(err)
	}
	sn := as.Noise.Spectra
	if sn == nil || !sn.Varies {
		t.Fatalf("spectra with 3× the noise of the others not found to differ: %+v", sn)
	}
	if sn.P > 1e-10 {
		t.Errorf("p = %g for a 3× step in noise over %d channels; want far below the level %g", sn.P, m, spectrumAlpha)
	}
	typical := median(as.Noise.Channel)
	mshape := median(shape)
	se := 1.86 * 1.39 * 1.47 / math.Sqrt(m)
	mean := 0.0
	for i, f := range sn.Factor {
		ratio := f * typical / (level[i] * mshape)
		mean += ratio / n
		if tol := 4 * se * mixedOverOwn(times, level, i); math.Abs(ratio-1) > tol {
			t.Errorf("spectrum %d: level %.4g, truth %.4g (ratio %.3f; 4 standard errors %.3f)", i, f*typical, level[i]*mshape, ratio, tol)
		}
	}
	if math.Abs(mean-1) > 0.04 {
		t.Errorf("mean ratio of found to true level %.4f, want within 4 %% of 1", mean)
	}
	// The weights are the model's 1/σ²: a noisy spectrum's row weight is
	// 1/9 of a quiet one's (w = 1/σ²; Wentzell et al., J. Chemometrics 1997).
	w := as.AbsoluteWeights.Row
	if r := w[5] / w[30]; math.Abs(r-1.0/9) > 8*se/9 {
		t.Errorf("row weight of a noisy spectrum over a quiet one %.4f, want 1/9 = %.4f", r, 1.0/9)
	}
}

// mixedOverOwn is u_i/v_i of spectrum i at noise levels σ (v = σ²), u_i the
// variance its time difference carries (its own and its neighbours'; the
// end spectra take their neighbour's).
func mixedOverOwn(times, sigma []float64, i int) float64 {
	n := len(times)
	i = min(max(i, 1), n-2)
	a := (times[i+1] - times[i]) / (times[i+1] - times[i-1])
	u := (a*a*sq(sigma[i-1]) + sq(sigma[i]) + sq(1-a)*sq(sigma[i+1])) / (1 + a*a + sq(1-a))
	return u / sq(sigma[i])
}

// Spectra equally noisy keep the weights of one σ per channel to the bit:
// the test of equal levels does not reject at its level, so nothing changes.
func TestSpectrumNoiseEqualKeepsWeights(t *testing.T) {
	const n, m = 40, 2000
	level := make([]float64, n)
	for i := range level {
		level[i] = 1e-3
	}
	for _, times := range [][]float64{unevenTimes(n), nil} {
		if times == nil {
			times = make([]float64, n)
			for i := range times {
				times[i] = 30 * float64(i)
			}
		}
		s, _ := urethaneLike(2, times, level, m, 1.0/3000)
		as, err := Assemble(s, AssembleOptions{Kind: Absorbance})
		if err != nil {
			t.Fatal(err)
		}
		sn := as.Noise.Spectra
		if sn == nil || sn.Varies {
			t.Fatalf("equally noisy spectra judged to differ: %+v", sn)
		}
		want := channelWeights(n, as.Noise.Channel, as.Blind)
		if !reflect.DeepEqual(as.AbsoluteWeights, want) {
			t.Errorf("weights of equally noisy spectra changed")
		}
	}
}

// The test of equal levels holds its level: on equally noisy invented
// series, p < 0.05 in at most 5 % of them (the definition of a level-α
// test), counted over 200 series with a margin of 3 binomial standard
// errors (√(200·0.05·0.95) = 3.1). Its p is Bonferroni's over three
// subsets, so it should reject less often still.
func TestSpectrumNoiseTestLevel(t *testing.T) {
	const n, m, runs = 20, 500, 200
	level := make([]float64, n)
	for i := range level {
		level[i] = 1e-3
	}
	times := unevenTimes(n)
	below := 0
	for seed := range uint64(runs) {
		s, _ := urethaneLike(100+seed, times, level, m, 1.0/6000)
		as, err := Assemble(s, AssembleOptions{Kind: Absorbance})
		if err != nil {
			t.Fatal(err)
		}
		if as.Noise.Spectra.P < 0.05 {
			below++
		}
	}
	if limit := 0.05*runs + 3*math.Sqrt(runs*0.05*0.95); float64(below) > limit {
		t.Errorf("p < 0.05 in %d of %d equally noisy series; a level-0.05 test allows about %.0f", below, runs, limit)
	}
}

// With 4× the noise in the first spectra, the rate constant fitted with the
// per-spectrum weights lies closer to the truth than with one weight for
// all, over 30 invented series (Aitken: least squares weighted by the
// inverse variances has the smallest variance of the linear unbiased
// estimates, so its mean squared error is the smaller one).
func TestSpectrumNoiseWeightsImproveRate(t *testing.T) {
	const n, m, k, runs = 30, 600, 1.0 / 1500, 30
	times, level := make([]float64, n), make([]float64, n)
	for i := range times {
		times[i] = 30 * float64(i)
		level[i] = 2e-3
		if i < 8 {
			level[i] = 8e-3
		}
	}
	var seOwn, seOne float64
	for seed := range uint64(runs) {
		s, _ := urethaneLike(500+seed, times, level, m, k)
		as, err := Assemble(s, AssembleOptions{Kind: Absorbance})
		if err != nil {
			t.Fatal(err)
		}
		if !as.Noise.Spectra.Varies {
			t.Fatalf("series %d: 4× the noise in the first spectra not found", seed)
		}
		one := channelWeights(n, as.Noise.Channel, as.Blind)
		seOwn += sq(math.Log(fitRate(as.Absolute, times, as.AbsoluteWeights.Row)/k)) / runs
		seOne += sq(math.Log(fitRate(as.Absolute, times, one.Row)/k)) / runs
	}
	if !(seOwn < seOne) {
		t.Errorf("mean squared log error of k: %.3g with the per-spectrum weights, %.3g with one weight for all; want the first smaller", seOwn, seOne)
	}
	t.Logf("rms relative error of k: %.3g%% per-spectrum weights, %.3g%% one weight", 100*math.Sqrt(seOwn), 100*math.Sqrt(seOne))
}

// fitRate fits d ≈ c(t)·Sᵀ with c = (e^{−kt}, 1 − e^{−kt}) by least
// squares weighted by row (w) over k, the spectra S solved for each k
// (variable projection; Golub & Pereyra 1973), by golden-section search
// on log k over 1e-5 … 1 per second.
func fitRate(d *mat.Dense, times, w []float64) float64 {
	cost := func(lk float64) float64 {
		k := math.Exp(lk)
		n, _ := d.Dims()
		c := mat.NewDense(n, 2, nil)
		for i, t := range times {
			e := math.Exp(-k * t)
			sw := math.Sqrt(w[i])
			c.Set(i, 0, sw*e)
			c.Set(i, 1, sw*(1-e))
		}
		var dw mat.Dense
		dw.Apply(func(i, _ int, x float64) float64 { return math.Sqrt(w[i]) * x }, d)
		var s, r mat.Dense
		if err := s.Solve(c, &dw); err != nil {
			return math.Inf(1)
		}
		r.Mul(c, &s)
		r.Sub(&dw, &r)
		return mat.Norm(&r, 2)
	}
	lo, hi := math.Log(1e-5), 0.0
	g := (math.Sqrt(5) - 1) / 2
	a, b := hi-g*(hi-lo), lo+g*(hi-lo)
	fa, fb := cost(a), cost(b)
	for range 80 {
		if fa < fb {
			hi, b, fb = b, a, fa
			a = hi - g*(hi-lo)
			fa = cost(a)
		} else {
			lo, a, fa = a, b, fb
			b = lo + g*(hi-lo)
			fb = cost(b)
		}
	}
	return math.Exp((lo + hi) / 2)
}

// The running median of five keeps a step of the noise level (the scans
// co-added doubled) where it is and takes out one spectrum unlike its
// neighbours, on both sides of the step: median smoothing keeps edges and
// removes isolated values (Tukey, Exploratory Data Analysis, 1977; from
// memory).
func TestNoiseLevelsKeepStepsNotSingleSpectra(t *testing.T) {
	v := []float64{4, 4, 4, 9, 4, 4, 4, 1, 1, 1, 0.3, 1, 1}
	want := []float64{4, 4, 4, 4, 4, 4, 4, 1, 1, 1, 1, 1, 1}
	got := medianInTime(v, 2)
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("levels %v became %v, want %v", v, got, want)
		}
	}
}
