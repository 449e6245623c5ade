package spectra

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Spectra taken at unequal intervals, as in-situ runs are (every 21 s at
// first, every 40 minutes later: the real urethane series), whose values
// change linearly in time plus white noise of σ = 1e-3. Each spectrum less
// the straight line through its neighbours, x_i − a x_{i−1} − (1 − a)
// x_{i+1} with a = (t_{i+1} − t_i)/(t_{i+1} − t_{i−1}), is that noise alone
// (linear interpolation is exact for a linear function), of variance
// (1 + a² + (1 − a)²)σ² (Bienaymé's formula for independent terms): the
// noise model must find σ. The plain second difference does not cancel the
// change at unequal intervals: it finds several times σ here, the 18 % of
// the real series' catalyst-0.01 run at its slower change. Equal intervals
// keep the plain second difference, bit for bit.
func TestUnequalIntervalsCancelALinearChange(t *testing.T) {
	const n, m, sigma = 50, 2000, 1e-3
	times := make([]float64, n)
	for i := 1; i < n; i++ {
		times[i] = times[i-1] + 21*math.Pow(1.12, float64(i))
	}
	rng := rand.New(rand.NewPCG(19, 4))
	v := mat.NewDense(n, m, nil)
	for j := range m {
		slope := 2e-5 * (1 + float64(j%7))
		for i, tm := range times {
			v.Set(i, j, slope*tm+sigma*rng.NormFloat64())
		}
	}
	sig, _, src, _ := channelNoiseSpaced(v, lineWeights(times), 0, nil)
	if got := median(sig) / sigma; math.Abs(got-1) > 0.03 {
		t.Errorf("σ found %.4g times the σ put in (%s); want 1 within 3 %% (about 400 differences per channel)", got, src)
	}
	plain, _, _ := channelNoise(v, 0, nil)
	if got := median(plain) / sigma; got < 1.5 {
		t.Errorf("plain second differences found %.3g times σ; the case must be one they fail (> 1.5)", got)
	}
	_, absSig, _, _, _ := absorbanceNoise(v, times, 0)
	if got := median(absSig) / sigma; math.Abs(got-1) > 0.03 {
		t.Errorf("absorbance noise model found %.4g times σ; want 1 within 3 %%", got)
	}
	even := make([]float64, n)
	for i := range even {
		even[i] = 30 * float64(i)
	}
	if lineWeights(even) != nil {
		t.Errorf("equal intervals got interpolation weights; they keep the plain second difference")
	}
}
