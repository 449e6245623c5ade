package kinetics

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// closedProfiles is A -> B observed under closure: a_i = e^{−k t_i} + noise
// and b_i = 1 − a_i exactly, so the fit's residual of B is minus that of A
// in every row. With closed false, B gets noise of its own instead.
func closedProfiles(n int, k, sd float64, closed bool) ([]float64, *mat.Dense) {
	rng := rand.New(rand.NewPCG(19, 4))
	times := linspace(0, 3/k, n)
	obs := mat.NewDense(n, 2, nil)
	for i, t := range times {
		a := math.Exp(-k*t) + sd*rng.NormFloat64()
		b := 1 - a
		if !closed {
			b = 1 - math.Exp(-k*t) + sd*rng.NormFloat64()
		}
		obs.Set(i, 0, a)
		obs.Set(i, 1, b)
	}
	return times, obs
}

// Under closure the 2n residuals of A -> B are n independent ones: the fit
// of both columns is the fit of A alone, whose standard error is the
// textbook one of a one-parameter least-squares fit, se(k) =
// √(s² / Σ (∂a/∂k)²) with s² = RSS_A/(n − 1) and ∂a/∂k = −t e^{−kt}
// (linearised standard error, Bates & Watts 1988, from memory). Counting 2n
// independent residuals made s² = 2 RSS_A/(2n − 1) and the error √2 too
// small (the urethane series at catalyst 1.00: 4.62e-5 at 115 degrees of
// freedom for 58 spectra, 6.56e-5 at 57).
func TestProfileFitUnderClosureCountsIndependentResiduals(t *testing.T) {
	const n, k = 40, 0.02
	s := mustParse(t, "A -> B")
	times, obs := closedProfiles(n, k, 0.01, true)
	res, err := FitProfiles(s, times, obs, []int{0, 1}, FitOptions{C0: []float64{1, 0}})
	if err != nil {
		t.Fatal(err)
	}
	kh := res.K[0]
	var rss, jj, grad float64
	for i, tt := range times {
		e := math.Exp(-kh * tt)
		r := obs.At(i, 0) - e
		rss += r * r
		jj += sq(tt * e)
		grad += r * tt * e
	}
	// The minimiser of A's residual alone: its gradient vanishes there
	// (first-order condition of least squares).
	if g := math.Abs(grad) / math.Sqrt(rss*jj); g > 1e-6 {
		t.Fatalf("k = %g is not the least-squares fit of A alone: normalised gradient %g", kh, g)
	}
	if res.DegreesOfFreedom != n-1 {
		t.Errorf("degrees of freedom %d, want n − 1 = %d (r_B = −r_A: n independent residuals, one parameter)", res.DegreesOfFreedom, n-1)
	}
	want := math.Sqrt(rss / float64(n-1) / jj)
	if rel := math.Abs(res.KStdErr[0]-want) / want; rel > 1e-6 {
		t.Errorf("se(k) = %.6g, want %.6g from RSS_A/(n − 1) (relative difference %.2g)", res.KStdErr[0], want, rel)
	}
}

// Without closure (B's noise its own) the 2n residuals are independent and
// are all counted: degrees of freedom 2n − 1 (one parameter; common
// practice). The rank test must not see a constraint in ordinary noise.
func TestProfileFitWithoutClosureCountsEveryResidual(t *testing.T) {
	const n, k = 40, 0.02
	s := mustParse(t, "A -> B")
	times, obs := closedProfiles(n, k, 0.01, false)
	res, err := FitProfiles(s, times, obs, []int{0, 1}, FitOptions{C0: []float64{1, 0}})
	if err != nil {
		t.Fatal(err)
	}
	if res.DegreesOfFreedom != 2*n-1 {
		t.Errorf("degrees of freedom %d, want 2n − 1 = %d", res.DegreesOfFreedom, 2*n-1)
	}
}
