package mcr

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// narrowSubsystems is twoSubsystems with one separate band per species, so
// that each species has channels of its own and at every channel some
// species of each subsystem absorbs nothing: a + b + c − d − e = 0 then
// lets S + x·(1,1,1,−1,−1) fit equally well only where every species
// absorbs. That pins the spectra against that move, not against the pair
// resolution of TestClosedSubsystemsAdmitPairResolution, which stays exact
// and non-negative here too.
func narrowSubsystems(n, m int) (*mat.Dense, *mat.Dense, *mat.Dense) {
	_, c, _ := twoSubsystems(nil, n, m)
	s := mat.NewDense(m, 5, nil)
	centres := []float64{0.12, 0.3, 0.5, 0.68, 0.86}
	for j := 0; j < m; j++ {
		u := float64(j) / float64(m-1)
		for q := 0; q < 5; q++ {
			x := (u - centres[q]) / 0.035
			s.Set(j, q, 0.6*math.Exp(-0.5*x*x))
		}
	}
	var d mat.Dense
	d.Mul(c, s.T())
	return &d, c, s
}

func leftBasis(t *testing.T, d *mat.Dense, r int) *mat.Dense {
	t.Helper()
	var sv mat.SVD
	if !sv.Factorize(d, mat.SVDThin) {
		t.Fatal("SVD failed")
	}
	var u mat.Dense
	sv.UTo(&u)
	n, _ := u.Dims()
	return mat.DenseCopyOf(u.Slice(0, n, 0, r))
}

// worstMatch pairs each true spectrum with its best-matching resolved one
// (cosine, the usual similarity measure, common practice) and returns the
// worst of those.
func worstMatch(truth, got *mat.Dense) float64 {
	_, k := truth.Dims()
	worst := 1.0
	for j := 0; j < k; j++ {
		best := -1.0
		for q := 0; q < k; q++ {
			// A vanished (zero) spectrum has no cosine: it matches nothing.
			if c := cosine(mat.Col(nil, j, truth), mat.Col(nil, q, got)); c > best {
				best = c
			}
		}
		worst = math.Min(worst, best)
	}
	return worst
}

// Two independent subsystems, A → B → C and D → E (Bateman 1910 profiles),
// five species in rank-4 data with noise constant in counts, from a poor
// start: the search over starts must end at a fit at least as good as ALS
// started from the true profiles (the definition of a better least-squares
// solution), whatever the start found. At this size and noise the spectra
// are not unique within the noise (zero absorbance pinned by
// non-negativity costs about σ² per value, so rotations that lift those
// zeros fit slightly better), so the test asks for the fit, not for the
// true spectra.
func TestSearchStartsLeavesLocalMinimum(t *testing.T) {
	const n, m = 100, 200
	clean, ctrue, strue := narrowSubsystems(n, m)
	rng := rand.New(rand.NewPCG(14, 5))
	d := countsNoise(rng, clean, 1e4, 1)
	// Noise level: the residual with the true spectra and least-squares
	// profiles (a definition).
	var ct mat.Dense
	if err := ct.Solve(strue, d.T()); err != nil {
		t.Fatal(err)
	}
	noiseSS := residualSSDense(d, mat.DenseCopyOf(ct.T()), strue)
	fromTruth, err := Resolve(Dense{D: d}, ctrue, Options{})
	if err != nil {
		t.Fatal(err)
	}
	// A poor start: five single channels of the data, four of them in
	// the bands of two species.
	c0 := mat.NewDense(n, 5, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < 5; j++ {
			c0.Set(i, j, d.At(i, 20+j*3)+1e-3)
		}
	}
	first, err := Resolve(Dense{D: d}, c0, Options{})
	if err != nil {
		t.Fatal(err)
	}
	best, _, err := SearchStarts(Dense{D: d}, first, Options{}, StartSearch{Basis: leftBasis(t, d, 5), Starts: 8, Seed: 1, NoiseSS: noiseSS})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("from the truth %.6g, first %.6g, after the search %.6g (× noise SS)", fromTruth.ResidualSS/noiseSS, first.ResidualSS/noiseSS, best.ResidualSS/noiseSS)
	if best.ResidualSS > fromTruth.ResidualSS*(1+1e-6) {
		t.Errorf("search ends at %.6g × the noise, ALS from the truth at %.6g", best.ResidualSS/noiseSS, fromTruth.ResidualSS/noiseSS)
	}
	if vanished(best) > 0 {
		t.Errorf("%d components vanished", vanished(best))
	}
	// The data obey both non-negativity constraints: dropping one may
	// lower the residual by what noise gives (about σ² per pinned value,
	// common practice for nested least squares), not by more.
	checks, err := CheckConstraints(Dense{D: d}, best, Options{}, 300)
	if err != nil {
		t.Fatal(err)
	}
	pinned := float64(5 * max(n, m))
	for _, c := range checks {
		if rise := c.ResidualSSWith - c.ResidualSSWithout; rise > 4*pinned*noiseSS/float64(n*m) {
			t.Errorf("check without %s: with %.6g %%, without %.6g %% (rise %.3g σ² per pinned value)", c.Name, c.With, c.Without, rise/(noiseSS/float64(n*m))/pinned)
		}
	}
	// Deterministic: the same seed, the same answer to the bit.
	again, _, _ := SearchStarts(Dense{D: d}, first, Options{}, StartSearch{Basis: leftBasis(t, d, 5), Starts: 8, Seed: 1, NoiseSS: noiseSS})
	if again.ResidualSS != best.ResidualSS {
		t.Errorf("not deterministic: %v then %v", best.ResidualSS, again.ResidualSS)
	}
}

// A start's fit is better only when its residual is lower by more than
// MinGain: with noise weights the residual sum of squares is χ², and fits
// whose χ² differ by less than 1 (one noise variance) fit equally well
// (Δχ² = 1 bounds one standard error of one parameter; Bevington &
// Robinson 2003, from memory). Lower by 0.014 (what replaced the fit of a
// real urethane series) is a tie; lower by 2 is better; without MinGain
// only rounding (10⁻⁹ relative) separates them.
func TestStartBetterByMoreThanOneNoiseVariance(t *testing.T) {
	c := mat.NewDense(2, 1, []float64{1, 1})
	fit := func(rss float64) *Result { return &Result{C: c, S: c, ResidualSS: rss} }
	const best = 1638392.431
	for _, tc := range []struct {
		rss, gain float64
		want      bool
	}{
		{best - 0.014, 1, false},
		{best - 2, 1, true},
		{best - 0.014, 0, true},
		{best - 1e-4, 0, false},
	} {
		if got := better(fit(tc.rss), fit(best), 0, tc.gain); got != tc.want {
			t.Errorf("residual %.4f against %.4f, MinGain %g: better %v, want %v", tc.rss, best, tc.gain, got, tc.want)
		}
	}
}

// With one component the random starts are one profile at different
// scales (T is a number; the sign fix and the clipping leave |T| max(±u₁, 0)),
// and ALS, whose spectra step undoes a common scale of the profiles (least
// squares is equivariant under it; a definition), ends every start at the
// same fit up to rounding: SearchStarts runs only the first. Checked on a
// one-species decay with noise constant in counts, with closure and
// without, against ALS run from each of the eight starts.
func TestSearchStartsOneComponentStartsAreOneStart(t *testing.T) {
	const n, m = 40, 120
	clean := mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		c := math.Exp(-float64(i) / 15)
		for j := 0; j < m; j++ {
			u := (float64(j) - 60) / 12
			clean.Set(i, j, 0.5*c*math.Exp(-u*u))
		}
	}
	d := countsNoise(rand.New(rand.NewPCG(3, 9)), clean, 1e4, 1)
	basis := leftBasis(t, d, 3)
	c0 := randomStart(basis, 1, 1, 0)
	for _, opt := range []Options{{}, {Mode: Species, Closure: true, Total: []float64{1}}} {
		first, err := Resolve(Dense{D: d}, c0, opt)
		if err != nil {
			t.Fatal(err)
		}
		var fit0 mat.Dense
		fit0.Mul(first.C, first.S.T())
		for i := 1; i < 8; i++ {
			ci := randomStart(basis, 1, 1, i)
			a := ci.At(0, 0) / c0.At(0, 0)
			if !(a > 0) {
				t.Fatalf("start %d: scale %v against start 0, want a positive number", i, a)
			}
			for r := 0; r < n; r++ {
				if diff := math.Abs(ci.At(r, 0) - a*c0.At(r, 0)); diff > 1e-12*math.Abs(ci.At(r, 0)) {
					t.Fatalf("start %d, row %d: %v is not %v × start 0's %v", i, r, ci.At(r, 0), a, c0.At(r, 0))
				}
			}
			res, err := Resolve(Dense{D: d}, ci, opt)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(res.ResidualSS-first.ResidualSS) > 1e-9*first.ResidualSS {
				t.Errorf("closure %v, start %d: residual %v, start 0 %v", opt.Closure, i, res.ResidualSS, first.ResidualSS)
			}
			var fit mat.Dense
			fit.Mul(res.C, res.S.T())
			fit.Sub(&fit, &fit0)
			if rel := mat.Norm(&fit, 2) / mat.Norm(&fit0, 2); rel > 1e-9 {
				t.Errorf("closure %v, start %d: fit differs from start 0's by %.3g relative", opt.Closure, i, rel)
			}
		}
	}
}
