package pipeline

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// stackedRun simulates one of two runs of A + B -> C with B in excess (first order in
// A, rate constant k), started from amounts a0, b0, c0, as single beams with detector
// noise constant in counts (σ = 20 counts on a 2·10⁴ peak, Beer–Lambert I = I0·10^−A,
// definition) against one blank, and a slow drift of its own: a broad band growing
// linearly over the run (a crystal's contact or temperature, different each day). The
// amounts of A, B and C are affine in the extent, so one run has 2 components; two
// runs whose B differs in proportion to A have 3 (the scenario of the two urethane
// series of ../shared/real-data, invented here to be known).
func stackedRun(t *testing.T, a0, b0, c0, k float64, drift []float64, seed uint64, axis []float64, sp *mat.Dense, env []float64) *synth {
	t.Helper()
	s := &synth{axis: axis, spectra: sp}
	for tm := 0.0; tm <= 3600; tm += 30 {
		s.times = append(s.times, tm)
	}
	n, m := len(s.times), len(axis)
	s.profiles = mat.NewDense(n, 3, nil)
	for i, tm := range s.times {
		x := a0 * (1 - math.Exp(-k*tm))
		s.profiles.SetRow(i, []float64{a0 - x, b0 - x, c0 + x})
	}
	var a mat.Dense
	a.Mul(s.profiles, sp.T())
	rng := rand.New(rand.NewPCG(seed, 7))
	s.beams = mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		f := s.times[i] / s.times[n-1]
		for j := 0; j < m; j++ {
			s.beams.Set(i, j, env[j]*math.Pow(10, -(a.At(i, j)+f*drift[j]))+20*rng.NormFloat64())
		}
	}
	s.blank = make([]float64, m)
	brng := rand.New(rand.NewPCG(99, 7))
	for j := range env {
		s.blank[j] = env[j] + 20.0/8*brng.NormFloat64()
	}
	return s
}

// Two runs stacked are counted by what each shows, not by the smallest factor the
// stack adds: each run alone has 2 components (its drift, under 1 % of its second
// factor, is set aside as minor), the stack has 3 (B's proportion differs between the
// runs), and the two drifts, each more than 2 % of that third factor but below 2 % of
// either run's own smallest component, are not counted. Without the per-experiment test
// (svd.NuisanceOptions.Blocks) the stack counted them: 5 (measured while it was written).
func TestStackedRunsCountWhatEachShows(t *testing.T) {
	var axis []float64
	for x := 1800.0; x >= 1200; x -= 2 {
		axis = append(axis, x)
	}
	m := len(axis)
	sp := mat.NewDense(m, 3, nil)
	sp.SetCol(0, add(gaussian(axis, 1700, 14, 0.5), gaussian(axis, 1450, 20, 0.25)))
	sp.SetCol(1, add(gaussian(axis, 1560, 30, 0.3), gaussian(axis, 1350, 25, 0.2)))
	sp.SetCol(2, add(gaussian(axis, 1660, 14, 0.45), gaussian(axis, 1400, 18, 0.3)))
	env := make([]float64, m)
	for j, x := range axis {
		u := (x - 1500) / 500
		env[j] = 2e4 * math.Exp(-u*u)
	}
	r1 := stackedRun(t, 0.3, 0.7, 0, 1.5e-3, gaussian(axis, 1350, 60, 0.03), 1, axis, sp, env)
	r2 := stackedRun(t, 0.3, 0.62, 0.08, 4e-4, gaussian(axis, 1750, 40, 0.03), 2, axis, sp, env)
	s1, blank := r1.write(t)
	s2, _ := r2.write(t)
	run := func(data ...string) *Result {
		s := NewSettings()
		s.Data, s.Kind, s.Blanks = data, "single-beam", []string{blank}
		s.Bands, s.Checks = "off", "off"
		r, err := Run(s, nil)
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	for i, data := range []string{s1, s2} {
		if r := run(data); r.Components != 2 {
			t.Errorf("run %d alone: %d components (%s), want 2", i+1, r.Components, r.Rank.Reason)
		}
	}
	r := run(s1, s2)
	if r.Components != 3 {
		t.Errorf("stacked: %d components (%s), want 3", r.Components, r.Rank.Reason)
	}
	if !anyContains(r.Advice, "of each experiment's own smallest component it carries") {
		t.Errorf("no advice names a factor minor in every run; advice %q", r.Advice)
	}
}
