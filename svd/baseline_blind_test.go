package svd

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// blindSeries is a rank-2 series (two Gaussian bands, profiles e^{−t} and
// 1 − e^{−t}) with white noise of σ = 1 and no baseline, n × m, with
// channels [lo, hi) blind in every spectrum (their values 0, as the fill
// leaves a channel no spectrum measured) and, when late > 0, channels
// [hi, hi+20) blind in the spectra from row late on (a band clipped once it
// has grown), filled by the rank-2 model of the measured points
// (ImputeMissing, as the pipeline fills them). It returns the data, the
// axis and the blind points row by row.
func blindSeries(t *testing.T, rng *rand.Rand, n, m, lo, hi, late int) (*mat.Dense, []float64, [][]int) {
	t.Helper()
	axis := make([]float64, m)
	for j := range axis {
		axis[j] = float64(j)
	}
	d := mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		c := math.Exp(-3 * float64(i) / float64(n))
		for j := 0; j < m; j++ {
			s1 := 40 * math.Exp(-0.5*math.Pow((float64(j)-0.3*float64(m))/8, 2))
			s2 := 40 * math.Exp(-0.5*math.Pow((float64(j)-0.7*float64(m))/10, 2))
			d.Set(i, j, c*s1+(1-c)*s2+rng.NormFloat64())
		}
	}
	missing := make([][]int, n)
	for i := range missing {
		for j := lo; j < hi; j++ {
			missing[i] = append(missing[i], j)
			d.Set(i, j, 0)
		}
		if late > 0 && i >= late {
			for j := hi; j < hi+20; j++ {
				missing[i] = append(missing[i], j)
			}
		}
	}
	if late > 0 {
		if _, _, err := ImputeMissing(d, missing, 2, DecomposeOptions{}, 1e-3, 200); err != nil {
			t.Fatal(err)
		}
	}
	return d, axis, missing
}

// Channels blind in every spectrum say nothing of a baseline: the test with
// them left out must be, step for step, the test on the measured channels
// alone (Draper & Smith 1998, §6: an F-test's sums and degrees of freedom
// count observations; definition of ChooseBaselineOrderObserved).
func TestBaselineOrderLeavesOutBlindChannels(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 7))
	d, axis, missing := blindSeries(t, rng, 30, 200, 80, 120, 0)
	got, err := ChooseBaselineOrderObserved(d, nil, nil, nil, axis, nil, missing, 2, 3, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	var lit []int
	for j := range axis {
		if j < 80 || j >= 120 {
			lit = append(lit, j)
		}
	}
	dl, al, _ := litColumns(d, axis, nil, lit)
	want, err := ChooseBaselineOrderBasis(dl, nil, nil, nil, al, nil, 2, 3, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	if got.Order != want.Order || len(got.Steps) != len(want.Steps) {
		t.Fatalf("order %d in %d steps; the test on the measured channels: %d in %d", got.Order, len(got.Steps), want.Order, len(want.Steps))
	}
	for q := range got.Steps {
		g, w := got.Steps[q], want.Steps[q]
		if math.Abs(g.ResidualSS-w.ResidualSS) > 1e-9*w.ResidualSS || math.Abs(g.Significance-w.Significance) > 1e-9 {
			t.Errorf("step %d: RSS %.10g p %.6g; on the measured channels RSS %.10g p %.6g", q, g.ResidualSS, g.Significance, w.ResidualSS, w.Significance)
		}
	}
	// Without blind points the result is ChooseBaselineOrderBasis's, bit for
	// bit (the data without blind channels keep their outputs).
	a, err := ChooseBaselineOrderObserved(dl, nil, nil, nil, al, nil, nil, 2, 3, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	for q := range a.Steps {
		if a.Steps[q] != want.Steps[q] {
			t.Errorf("step %d without blind points: %+v, want %+v", q, a.Steps[q], want.Steps[q])
		}
	}
}

// On data without a baseline the forward selection, which stops at the first
// order that is not significant, chooses one exactly when the offset's test
// rejects, so at most at that test's level (the size of a level-α test,
// Draper & Smith 1998, §6). Run at level 0.2 on 300 invented series (rank 2,
// white noise, no drift), each with 40 of 200 channels blind in every
// spectrum and 20 more blind in the last third of the spectra (filled by the
// rank-2 model), the rate of baselines chosen must stay under 0.2 plus 4
// binomial standard deviations (60 + 28 of 300). The same series without
// blind points are logged beside: the test is conservative there too (13 of
// 300 at 0.2, its F averaging 0.79 where an exact F averages 1: a rank-k fit
// of noise takes more than its k(n+m−k) parameters' share of it).
func TestBaselineFalseAlarmsAtTheLevelWithBlindPoints(t *testing.T) {
	const trials, level = 300, 0.2
	rng := rand.New(rand.NewPCG(2026, 12))
	plain := rand.New(rand.NewPCG(2026, 12))
	chosen, without := 0, 0
	for range trials {
		d, axis, missing := blindSeries(t, rng, 30, 200, 80, 120, 20)
		ch, err := ChooseBaselineOrderObserved(d, nil, nil, nil, axis, nil, missing, 2, 3, level)
		if err != nil {
			t.Fatal(err)
		}
		if ch.Order >= 0 {
			chosen++
		}
		d, axis, _ = blindSeries(t, plain, 30, 200, 100, 100, 0)
		if ch, err = ChooseBaselineOrder(d, nil, axis, 2, 3, level); err != nil {
			t.Fatal(err)
		}
		if ch.Order >= 0 {
			without++
		}
	}
	sd := math.Sqrt(trials * level * (1 - level))
	t.Logf("baselines chosen on %d drift-free series at level %g: %d with blind points left out, %d on the same series without blind points", trials, level, chosen, without)
	if float64(chosen) > trials*level+4*sd {
		t.Errorf("%d of %d drift-free series got a baseline at level %g; want at most %.0f", chosen, trials, level, trials*level+4*sd)
	}
}

// A drift that is a slope about the axis's middle has no mean (the
// Legendre polynomial P₁ is orthogonal to P₀ over an evenly spaced,
// symmetric axis: definition), so an offset alone explains none of it and
// its F-test is under its null hypothesis, while the slope's is far from
// it. The search tests the offset again jointly with the slope, both
// against no baseline (Draper & Smith 1998, §6: the extra-sum-of-squares
// F-test of two coefficients per spectrum), and finds the linear baseline
// the search that stopped at the offset missed.
func TestBaselineSlopeAboutTheMiddleIsFound(t *testing.T) {
	const n, m, level = 30, 200, 0.0125
	rng := rand.New(rand.NewPCG(41, 3))
	d, axis, _ := blindSeries(t, rng, n, m, 0, 0, 0)
	for i := 0; i < n; i++ {
		b := 0.5 * rng.NormFloat64()
		for j := 0; j < m; j++ {
			d.Set(i, j, d.At(i, j)+b*(float64(j)-float64(m-1)/2)/(float64(m-1)/2))
		}
	}
	ch, err := ChooseBaselineOrder(d, nil, axis, 2, 3, level)
	if err != nil {
		t.Fatal(err)
	}
	for _, st := range ch.Steps {
		t.Logf("order %d (%d at once): F = %.3g, p = %.3g", st.Order, st.Orders, st.F, st.Significance)
	}
	if off := ch.Steps[1]; off.Order != 0 || off.Significance < level {
		t.Fatalf("the offset alone is significant here (p = %.3g): the case does not test the joint step", off.Significance)
	}
	if ch.Order != 1 {
		t.Errorf("order %d chosen for a slope about the middle; want 1 (linear)", ch.Order)
	}
}
