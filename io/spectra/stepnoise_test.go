package spectra

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestStepOwnNoise: spectra whose noise level differs from one to the next (σ_i = 1, or 4
// for spectra 4 and 5, as when an instrument co-adds fewer scans between spectra taken
// fast) and whose noise is smoothed along the axis (a 5-point moving average of white
// noise: variance 1/5 per point, neighbours correlated, so a fourth difference keeps far
// less of it than of white noise), under a band 40 channels wide that, from spectrum 8 on,
// is 25 σ higher and grows by 3 σ a spectrum (a change, then one linear in time). Weights all 1, so a step's z is
// step/√2 and its noise, by the variance of a sum of independent values (definition),
// has standard deviation √((σ²_{i−1} + σ²_i)/5/2): 0.447 between two quiet spectra, 1.30
// from a quiet to a noisy one, 1.79 between the noisy two. κ must be that within 15 % (three standard errors of a median scale of this many correlated points; common practice),
// the band's jump leaving it alone (a Gaussian of standard deviation s channels keeps at
// most 3h/s⁴ of its height h under a fourth difference: 2e-7 h here, analytic), and the
// step measured against it (StepToNoise's ρ over κ) about 1 for repeats, noisy or not, and
// for the jump what its band adds (within 15 %: the smooth drift StepToNoise takes out
// first takes a little of it).
func TestStepOwnNoise(t *testing.T) {
	n, m := 10, 7000
	sd := []float64{1, 1, 1, 4, 4, 1, 1, 1, 1, 1}
	rng := rand.New(rand.NewPCG(5, 19))
	d := mat.NewDense(n, m, nil)
	white := make([]float64, m+4)
	for i := range n {
		for j := range white {
			white[j] = rng.NormFloat64()
		}
		for j := range m {
			x := float64(j-3500) / 40
			band := 15 * math.Exp(-x*x/2)
			if i >= 7 {
				band += (25 + 3*float64(i-7)) * math.Exp(-x*x/2)
			}
			noise := (white[j] + white[j+1] + white[j+2] + white[j+3] + white[j+4]) / 5
			d.Set(i, j, band+sd[i]*noise)
		}
	}
	w := &Weights{Row: make([]float64, n), Col: make([]float64, m)}
	for i := range w.Row {
		w.Row[i] = 1
	}
	for j := range w.Col {
		w.Col[j] = 1
	}
	kappa := StepOwnNoise(d, 0, n, 0, n, w, nil)
	rho := StepToNoise(d, 0, n, w, nil)
	if len(kappa) != n-1 {
		t.Fatalf("%d steps, want %d", len(kappa), n-1)
	}
	// The jump's step: ρ² = noise + Σ_j (25 g_j)²/2 / m, g a unit Gaussian 40 channels
	// wide (Σ g² = 40√π), over the quiet steps' κ² = 1/5.
	jump := math.Sqrt((1.0/5 + 625*40*math.Sqrt(math.Pi)/2/float64(m)) * 5)
	for a := range kappa {
		want := math.Sqrt((sd[a]*sd[a] + sd[a+1]*sd[a+1]) / 5 / 2)
		if math.Abs(kappa[a]/want-1) > 0.15 {
			t.Errorf("step %d–%d: κ = %.3f, want %.3f (its noise's standard deviation)", a+1, a+2, kappa[a], want)
		}
		r := rho[a] / kappa[a]
		t.Logf("step %d–%d: κ %.3f (want %.3f), ρ %.3f, ρ/κ %.3f", a+1, a+2, kappa[a], want, rho[a], r)
		switch {
		case a == 6 && (r < 3 || math.Abs(r/jump-1) > 0.15):
			t.Errorf("step 7–8, a band's jump of 25 σ: ρ/κ = %.3g, want %.3g", r, jump)
		case a < 6 && math.Abs(r-1) > 0.2:
			t.Errorf("step %d–%d between repeats: ρ/κ = %.3g, want 1 ± 0.2 (ρ = %.3g alone)", a+1, a+2, r, rho[a])
		}
	}
}
