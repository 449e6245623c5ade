package kinetics

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// abcData builds D = C Sᵀ + white noise of sd for A -> B -> C from the
// analytic first-order solution (Bateman 1910; Atkins' Physical Chemistry,
// consecutive reactions, from memory), [A]0 = 1, with non-negative
// Gaussian spectra: A a band of its own at 0.2, B at 0.5, C at 0.8, and a
// baseline stretch at the ends where every spectrum is zero.
func abcData(n, m int, k1, k2, sd float64, rng *rand.Rand) (times []float64, d *mat.Dense) {
	times = make([]float64, n)
	c := mat.NewDense(n, 3, nil)
	for i := range times {
		t := 4000 * float64(i) / float64(n-1)
		times[i] = t
		a := math.Exp(-k1 * t)
		b := k1 / (k2 - k1) * (math.Exp(-k1*t) - math.Exp(-k2*t))
		c.SetRow(i, []float64{a, b, 1 - a - b})
	}
	s := mat.NewDense(m, 3, nil)
	for j := 0; j < m; j++ {
		x := float64(j) / float64(m-1)
		for sp, centre := range []float64{0.2, 0.5, 0.8} {
			u := (x - centre) / 0.04
			s.Set(j, sp, math.Exp(-0.5*u*u))
		}
	}
	d = mat.NewDense(n, m, nil)
	d.Mul(c, s.T())
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, d.At(i, j)+sd*rng.NormFloat64())
		}
	}
	return times, d
}

// TestNonNegativeCheckSlowFast: the slow–fast ambiguity of A -> B -> C
// (Vajda & Rabitz, Chem. Eng. Sci. 1994): the model columns at (k1, k2) and
// at (k2, k1) span the same space, and from the Bateman solution the swapped
// order's spectra are s_A' = s_A, s_C' = s_C and
// s_B' = (1 − k1/k2) s_A + (k1/k2) s_B (derived here from the two
// solutions' coefficients of 1, e^{−k1 t}, e^{−k2 t}). With k1 < k2 both
// weights are positive: the fast-first order has non-negative spectra too,
// and non-negativity cannot choose; with k1 > k2 the slow-first order's
// s_B' has s_A's band with weight 1 − k1/k2 < 0 and must go negative.
//
// Without noise: the swapped order of a slow-first truth costs nothing
// (to rounding), the swapped order of a fast-first truth costs a band's
// worth. With white noise, truth slow-first (B small, peaking at 0.077 for
// k1/k2 = 0.1): neither order may count as needing a negative band,
// although clipping the noisy B spectrum's zeros costs the true order more
// (the fault fixed: a fixed threshold of 4 noise variances chose the wrong
// order); truth fast-first: the slow-first order must.
func TestNonNegativeCheckSlowFast(t *testing.T) {
	s := mustParse(t, "A -> B -> C")
	opt := FitOptions{C0: []float64{1, 0, 0}}
	const slow, fast = 1e-3, 1e-2
	rng := rand.New(rand.NewPCG(11, 3))
	times, d := abcData(80, 150, slow, fast, 0, rng)
	for _, k := range [][]float64{{slow, fast}, {fast, slow}} {
		c, err := NonNegativeCheck(s, times, d, k, opt)
		if err != nil || c.Cost > 1e-20*sumSquares(d) {
			t.Errorf("truth slow-first, k = %v without noise: cost %.3g (%v), want 0", k, c.Cost, err)
		}
		// A cost of rounding is no negative band.
		if neg, ok := c.NeedsNegative(1); neg || !ok {
			t.Errorf("truth slow-first, k = %v without noise: %+v counted as needing a negative band", k, c)
		}
	}
	times, d = abcData(80, 150, fast, slow, 0, rng)
	if c, err := NonNegativeCheck(s, times, d, []float64{slow, fast}, opt); err != nil || !(c.Cost > 1e-3*sumSquares(d)) {
		t.Errorf("truth fast-first, swapped order without noise: cost %.3g of ‖D‖² %.3g (%v), want a band's worth", c.Cost, sumSquares(d), err)
	}
	var falseNeg, missed, wrongCheaper int
	const draws = 40
	for range draws {
		times, d := abcData(80, 150, slow, fast, 0.01, rng)
		right, err1 := NonNegativeCheck(s, times, d, []float64{slow, fast}, opt)
		swapped, err2 := NonNegativeCheck(s, times, d, []float64{fast, slow}, opt)
		if err1 != nil || err2 != nil {
			t.Fatal(err1, err2)
		}
		if right.Scaled > swapped.Scaled {
			wrongCheaper++
		}
		for _, c := range []NonNegCost{right, swapped} {
			if neg, ok := c.NeedsNegative(1); !ok || neg {
				falseNeg++
				t.Logf("truth slow-first: %+v, limit %.4g", c, c.NoiseLimit(1))
			}
		}
		times, d = abcData(80, 150, fast, slow, 0.01, rng)
		wrong, err := NonNegativeCheck(s, times, d, []float64{slow, fast}, opt)
		if err != nil {
			t.Fatal(err)
		}
		if neg, ok := wrong.NeedsNegative(1); !ok || !neg {
			missed++
			t.Logf("truth fast-first, slow-first order: %+v, limit %.4g", wrong, wrong.NoiseLimit(1))
		}
	}
	t.Logf("%d draws: the true (slow-first) order dearer than the swapped in %d; orders of a slow-first truth counted as needing a negative band %d of %d; slow-first order of a fast-first truth not counted %d", draws, wrongCheaper, falseNeg, 2*draws, missed)
	// At 10⁻³ per order, 80 tries: more than 2 is a fault (binomial
	// chance below 10⁻³).
	if falseNeg > 2 {
		t.Errorf("orders whose spectra are non-negative counted as needing a negative band %d times in %d", falseNeg, 2*draws)
	}
	if missed > 0 {
		t.Errorf("the slow-first order of a fast-first truth not counted as needing a negative band %d times in %d", missed, draws)
	}
}

// TestNonNegativeCheckChiBarSquared: on pure white noise (every true
// spectrum zero: the cone's vertex) the cost of non-negativity per channel,
// over the noise variance, is chi-bar-squared, χ² with as many degrees of
// freedom as coefficients are held at zero (Shapiro, Int. Stat. Rev. 1988,
// from memory): Scaled, with the noise estimated per channel, has mean
// Active (within 4 standard errors of the mean over the draws) and exceeds
// NoiseLimit(1) (its 1 − 10⁻³ bound) rarely.
func TestNonNegativeCheckChiBarSquared(t *testing.T) {
	s := mustParse(t, "A -> B -> C")
	opt := FitOptions{C0: []float64{1, 0, 0}}
	rng := rand.New(rand.NewPCG(4, 9))
	times := make([]float64, 60)
	for i := range times {
		times[i] = 4000 * float64(i) / 59
	}
	const draws, m = 200, 100
	var diffs []float64
	over := 0
	for range draws {
		d := mat.NewDense(len(times), m, nil)
		for i := range times {
			for j := 0; j < m; j++ {
				d.Set(i, j, rng.NormFloat64())
			}
		}
		c, err := NonNegativeCheck(s, times, d, []float64{1e-3, 3e-3}, opt)
		if err != nil {
			t.Fatal(err)
		}
		diffs = append(diffs, c.Scaled-float64(c.Active))
		if neg, ok := c.NeedsNegative(1); !ok || neg {
			over++
		}
	}
	var mean, v float64
	for _, x := range diffs {
		mean += x / draws
	}
	for _, x := range diffs {
		v += (x - mean) * (x - mean) / (draws - 1)
	}
	se := math.Sqrt(v / draws)
	t.Logf("Scaled − Active: mean %.3g ± %.2g over %d draws; over the bound %d", mean, se, draws, over)
	if math.Abs(mean) > 4*se {
		t.Errorf("Scaled − Active has mean %.3g ± %.2g, want 0 (chi-bar-squared)", mean, se)
	}
	if over > 2 {
		t.Errorf("pure noise over the 10⁻³ bound in %d of %d draws", over, draws)
	}
}
