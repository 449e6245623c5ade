package mcr

import (
	"math"
	"math/rand/v2"
	"runtime"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// dilutedPair is A -> B (first order, c_A = e^{−3u}) over n spectra of m points, both
// concentrations scaled by 1 − dilute·u as the run goes on (u from 0 to 1): Beer–Lambert
// with the amounts diluted, D = C Sᵀ.
func dilutedPair(n, m int, dilute float64) *mat.Dense {
	c := mat.NewDense(n, 2, nil)
	for i := 0; i < n; i++ {
		u := float64(i) / float64(n-1)
		a := math.Exp(-3 * u)
		f := 1 - dilute*u
		c.SetRow(i, []float64{f * a, f * (1 - a)})
	}
	s := mat.NewDense(m, 2, nil)
	for i := 0; i < m; i++ {
		x := float64(i) / float64(m-1)
		s.SetRow(i, []float64{bump(x, -0.1, 0.55), bump(x, 0.4, 1.1)})
	}
	var d mat.Dense
	d.Mul(c, s.T())
	return &d
}

// Dilution: the sample is diluted by 30 % over the run, so c_A + c_B falls
// from 1 to 0.7 and closure to a constant total is false for these data. The
// refit without closure must fit to the noise-free level, the closed fit
// must not (a model that cannot represent the data cannot fit it; Beer–
// Lambert with c scaled by the dilution factor). Closure that holds costs
// nothing.
func TestClosureCheckSeesDilution(t *testing.T) {
	n, m := 40, 50
	build := func(dilute float64) *mat.Dense { return dilutedPair(n, m, dilute) }
	c0 := linearPairStart(n)
	opt := Options{Mode: Species, Closure: true, Total: []float64{1}}
	for _, dil := range []float64{0, 0.3} {
		d := build(dil)
		fit, err := Resolve(Dense{d}, c0, opt)
		if err != nil {
			t.Fatal(err)
		}
		checks, err := CheckConstraints(Dense{d}, fit, opt, 500)
		if err != nil {
			t.Fatal(err)
		}
		if len(checks) != 3 || checks[0].Name != "closure" {
			t.Fatalf("checks %+v: want closure, non-negative spectra, non-negative profiles", checks)
		}
		cl := checks[0]
		t.Logf("dilution %.1f: lack of fit %.4g %% with closure, %.4g %% without", dil, cl.With, cl.Without)
		switch {
		case dil == 0 && cl.With > 1e-3:
			t.Errorf("closure holds but the closed fit has lack of fit %.3g %%", cl.With)
		case dil > 0 && (cl.With < 1 || cl.Without > 0.1):
			t.Errorf("diluted: closure %.3g %% vs free %.3g %%; closure should be visibly worse", cl.With, cl.Without)
		}
	}
}

// A residual that is one fixed white pattern p in every row: the term a
// constant-in-time spectrum removes is, by the least-squares solution of
// min Σ a_i b_j (e_ij − q_j)² (q_j = weighted row mean, here p_j itself),
// Σ_i a_i · Σ_j b_j p_j²; without weights n·‖p‖². Computed by hand.
func TestTimeConstantPatternWeighted(t *testing.T) {
	n, m := 4, 6
	p := []float64{1, -1, 2, -2, 0.5, -0.5} // alternating: lag-1 correlation < 0
	d := mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		d.SetRow(i, p)
	}
	c := mat.NewDense(n, 1, nil) // zero fit: the residual is d itself
	s := mat.NewDense(m, 1, nil)
	row := []float64{1, 2, 3, 4}
	col := []float64{1, 1, 2, 2, 4, 4}
	ss, white := TimeConstantPattern(d, c, s, row, col)
	want := 10.0 * (1 + 1 + 8 + 8 + 1 + 1) // Σa = 10, Σ b p² = 20
	if math.Abs(ss-want) > 1e-12*want || !white {
		t.Errorf("weighted: ss %g white %v, want %g true", ss, white, want)
	}
	ss, white = TimeConstantPattern(d, c, s, nil, nil)
	want = 4.0 * (1 + 1 + 4 + 4 + 0.25 + 0.25)
	if math.Abs(ss-want) > 1e-12*want || !white {
		t.Errorf("unweighted: ss %g white %v, want %g true", ss, white, want)
	}
	// With a model C Sᵀ of two components on top, the residual and so the
	// answer are the same (the fit is subtracted, by definition of E).
	c2 := mat.NewDense(n, 2, []float64{1, 0, 0.5, 0.5, 0, 1, 2, 3})
	s2 := mat.NewDense(m, 2, []float64{1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12})
	var d2 mat.Dense
	d2.Mul(c2, s2.T())
	d2.Add(&d2, d)
	ss, white = TimeConstantPattern(&d2, c2, s2, row, col)
	if want := 200.0; math.Abs(ss-want) > 1e-12*want || !white {
		t.Errorf("weighted, with a model: ss %g white %v, want %g true", ss, white, want)
	}
}

// The restart under a constraint is the caller's choice: asked only after a
// refit that got below the constrained fit, and when declined the check
// keeps the resolution's own fit as "with" (the definition of the check:
// the fit with the constraint is the resolution's unless a restart under it
// found a lower one). Asked every time, the checks are CheckConstraints'
// bit for bit. Data: the diluted two-species series above (closure false,
// so its refit drops the residual far) with noise constant in counts
// (absorbance noise ∝ 1/I, I = 10^−A; the demo's model, common practice).
func TestCheckRestartChosenByCaller(t *testing.T) {
	n, m := 40, 50
	d := dilutedPair(n, m, 0.3)
	rng := rand.New(rand.NewPCG(3, 15))
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			v := d.At(i, j)
			d.Set(i, j, v+1e-3*math.Pow(10, v)*rng.NormFloat64())
		}
	}
	c0 := linearPairStart(n)
	opt := Options{Mode: Species, Closure: true, Total: []float64{1}}
	fit, err := Resolve(Dense{d}, c0, opt)
	if err != nil {
		t.Fatal(err)
	}
	all, err := CheckConstraints(Dense{d}, fit, opt, 500)
	if err != nil {
		t.Fatal(err)
	}
	asked := 0
	always, err := CheckConstraintsWith(Dense{d}, fit, opt, CheckOptions{MaxIter: 500, Restart: func(cc ConstraintCheck) bool {
		asked++
		if cc.With != fit.LackOfFitPercent || cc.ResidualSSWithout > cc.ResidualSSWith {
			t.Errorf("asked about %s with %+v: want the resolution's fit and a refit below it", cc.Name, cc)
		}
		return true
	}})
	if err != nil {
		t.Fatal(err)
	}
	for i := range all {
		if all[i].With != always[i].With || all[i].Without != always[i].Without || all[i].Restarted != always[i].Restarted {
			t.Errorf("%s: restart always asked for gives %+v, CheckConstraints %+v", all[i].Name, always[i], all[i])
		}
	}
	never, err := CheckConstraintsWith(Dense{d}, fit, opt, CheckOptions{MaxIter: 500, Restart: func(ConstraintCheck) bool { return false }})
	if err != nil {
		t.Fatal(err)
	}
	below := 0
	for i, cc := range never {
		if cc.Restarted || cc.With != fit.LackOfFitPercent || cc.ResidualSSWith != fit.ResidualSS {
			t.Errorf("%s without restarts: %+v, want the resolution's fit %.6g %% as with", cc.Name, cc, fit.LackOfFitPercent)
		}
		if cc.Without != all[i].Without && !all[i].Restarted {
			t.Errorf("%s: the refit changed with the restart declined: %.6g %%, was %.6g %%", cc.Name, cc.Without, all[i].Without)
		}
		if cc.ResidualSSWithout <= cc.ResidualSSWith {
			below++
		}
	}
	if asked == 0 || asked != below {
		t.Errorf("asked %d times, %d refits got below the constrained fit", asked, below)
	}
	if cl := never[0]; cl.Name != "closure" || !(cl.Without < 0.9*cl.With) {
		t.Errorf("closure check %+v: dilution should cost visibly", cl)
	}
}

// The refits run side by side must be the refits run one after another:
// each check is the definition of CheckConstraints (Resolve without the
// group, from the constrained solution) formed alone, bit for bit, at
// GOMAXPROCS 1 and 2, in the groups' order. Data: the diluted two-species
// series above with noise (closure, non-negative spectra and profiles:
// three groups, closure's refit far below the fit).
func TestChecksSideBySideSameAsAlone(t *testing.T) {
	n, m := 40, 50
	d := dilutedPair(n, m, 0.3)
	rng := rand.New(rand.NewPCG(5, 16))
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, d.At(i, j)+1e-3*rng.NormFloat64())
		}
	}
	c0 := linearPairStart(n)
	opt := Options{Mode: Species, Closure: true, Total: []float64{1}}
	fit, err := Resolve(Dense{d}, c0, opt)
	if err != nil {
		t.Fatal(err)
	}
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		checks, err := CheckConstraintsWith(Dense{d}, fit, opt, CheckOptions{MaxIter: 300, Restart: func(ConstraintCheck) bool { return false }})
		if err != nil {
			t.Fatal(err)
		}
		o := opt
		o.MaxIter, o.stopAtRoundingFloor = 300, true
		groups := constraintGroups(o, 2)
		if len(checks) != 3 || len(groups) != 3 {
			t.Fatalf("%d checks of %d groups, want 3", len(checks), len(groups))
		}
		for i, g := range groups {
			alone := o
			g.drop(&alone)
			res, err := Resolve(Dense{d}, fit.C, alone)
			if err != nil {
				t.Fatal(err)
			}
			want := math.Min(res.ResidualSS, fit.ResidualSS)
			if c := checks[i]; c.Name != g.name || math.Float64bits(c.ResidualSSWithout) != math.Float64bits(want) || c.Iterations != res.Iterations {
				t.Errorf("GOMAXPROCS %d: check %d %s: %.17g after %d iterations, alone %s %.17g after %d", procs, i, c.Name, c.ResidualSSWithout, c.Iterations, g.name, want, res.Iterations)
			}
		}
	}
}

// linearPairStart is a start for two species, the first falling linearly
// from 1 to 0 over n rows and the second rising (closure holds).
func linearPairStart(n int) *mat.Dense {
	c0 := mat.NewDense(n, 2, nil)
	for i := 0; i < n; i++ {
		u := float64(i) / float64(n-1)
		c0.SetRow(i, []float64{1 - u, u})
	}
	return c0
}

// A zero region over the whole axis forces a component's spectrum, and so
// its profile, to zero: the constrained fit is then a fit with one
// component fewer. The check without the region must refit with that
// component free, and so reach what a free fit of two reactions reaches:
// the data are two reactions plus detector noise constant in counts, so
// the true extents and spectra leave exactly the noise, and the free
// refit's lack of fit can be no worse than the truth's by more than the
// convergence tolerance (least squares: the minimum is at most the value
// at any candidate, here the truth; the noise is known, being added here).
// With the region the fit can be no better than the best rank-one
// approximation of D (Eckart–Young, common practice). The check used to
// refit from the constrained profiles, where the dead component cannot
// come back, and reported the two lacks of fit equal.
func TestCheckWithoutWholeAxisZeroRegion(t *testing.T) {
	n, m := 40, 60
	rng := rand.New(rand.NewPCG(21, 5))
	c := mat.NewDense(n, 2, nil)
	for i := 0; i < n; i++ {
		u := float64(i) / float64(n-1)
		c.SetRow(i, []float64{1 - math.Exp(-4*u), u * u})
	}
	s := mat.NewDense(m, 2, nil)
	for j := 0; j < m; j++ {
		x := float64(j) / float64(m-1)
		s.SetRow(j, []float64{0.4*bump(x, 0.05, 0.5) - 0.2*bump(x, 0.55, 0.9), 0.3 * bump(x, 0.35, 0.8)})
	}
	var a mat.Dense
	a.Mul(c, s.T())
	base := 0.3 // a film's own absorbance under the change
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			a.Set(i, j, a.At(i, j)+base)
		}
	}
	meas := countsNoise(rng, &a, 1e4, 10)
	d := mat.NewDense(n, m, nil)
	truth := mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.Set(i, j, meas.At(i, j)-meas.At(0, j))
			truth.Set(i, j, a.At(i, j)-a.At(0, j))
		}
	}
	var e mat.Dense
	e.Sub(d, truth)
	truthLOF := 100 * math.Sqrt(frobSq(&e)/frobSq(d))
	var svd mat.SVD
	if !svd.Factorize(d, mat.SVDNone) {
		t.Fatal("svd failed")
	}
	sv := svd.Values(nil)
	tail := 0.0
	for _, v := range sv[1:] {
		tail += v * v
	}
	rankOneLOF := 100 * math.Sqrt(tail/frobSq(d))

	zeroRow := make([]bool, n)
	zeroRow[0] = true
	all := make([]bool, m)
	for j := range all {
		all[j] = true
	}
	opt := Options{Mode: Reactions, Ridge: 1e-6, ZeroProfiles: [][]bool{zeroRow, zeroRow}, ZeroSpectra: [][]bool{all, nil}}
	fit, err := Resolve(Dense{d}, linearPairStart(n), opt)
	if err != nil {
		t.Fatal(err)
	}
	checks, err := CheckConstraints(Dense{d}, fit, opt, 300)
	if err != nil {
		t.Fatal(err)
	}
	var zc *ConstraintCheck
	for i := range checks {
		if checks[i].Name == "zero windows of spectra" {
			zc = &checks[i]
		}
	}
	if zc == nil {
		t.Fatalf("no check of the zero region among %+v", checks)
	}
	t.Logf("with %.4g %%, without %.4g %%; truth %.4g %%, best rank one %.4g %%", zc.With, zc.Without, truthLOF, rankOneLOF)
	if zc.With < rankOneLOF*(1-1e-6) {
		t.Errorf("with the region the fit is %.4g %%, better than the best rank-one fit %.4g %% (Eckart–Young)", zc.With, rankOneLOF)
	}
	if zc.Without > 1.01*truthLOF {
		t.Errorf("without the region the refit is %.4g %%, worse than the true reactions' %.4g %% (the noise): the dead component did not come back", zc.Without, truthLOF)
	}
}
