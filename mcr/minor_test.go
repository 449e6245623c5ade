package mcr

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// minorCase builds absorbance of A → B (first order, a = e^{−t/τ}: Bateman 1910), Gaussian
// bands of A at 60 and B at 130 (width 12 points) on 200 points, read through a detector
// whose noise is constant in counts (countsNoise: I₀ = 10⁴, σ_I = 5 counts). shift moves
// every band by δ(t) = shift·(1 − e^{−t/5}) points (a cell settling); minor adds a third
// species X with its own band at 175 (width 6) and profile x(t) = minor·4a(1 − a), taken
// from B so that the amounts still add up to one (closure holds). It returns the data, the
// column weights 1/σ_A(x)² of the noise model, and X's share ‖c_X s_Xᵀ‖_F/‖C Sᵀ‖_F.
func minorCase(seed uint64, shift, minor float64) (d *mat.Dense, col []float64, share float64) {
	const n, m = 40, 200
	const i0, sdCounts = 1e4, 5.0
	rng := rand.New(rand.NewPCG(seed, 5))
	clean := mat.NewDense(n, m, nil)
	var xs, all float64
	for i := 0; i < n; i++ {
		t := float64(i)
		a := math.Exp(-t / 8)
		x := minor * 4 * a * (1 - a)
		dl := shift * (1 - math.Exp(-t/5))
		for j := 0; j < m; j++ {
			p := float64(j) - dl
			sx := x * 0.6 * gauss(float64(j), 175, 6)
			v := a*0.5*gauss(p, 60, 12) + (1-a-x)*0.4*gauss(p, 130, 12) + sx
			clean.Set(i, j, v)
			xs += sx * sx
			all += v * v
		}
	}
	d = countsNoise(rng, clean, i0, sdCounts)
	// σ_A(x) = σ_I/(I ln 10) at the mean intensity of the column (first-order error
	// propagation, common practice).
	col = make([]float64, m)
	for j := 0; j < m; j++ {
		mean := 0.0
		for i := 0; i < n; i++ {
			mean += clean.At(i, j) / n
		}
		sa := sdCounts / (i0 * math.Pow(10, -mean) * math.Ln10)
		col[j] = 1 / (sa * sa)
	}
	return d, col, math.Sqrt(xs / all)
}

// minorFitAndFactors resolves two components with closure on the weighted data and
// returns the fit, its options and the leading q time vectors of the weighted residual
// (the minor factors as the fit leaves them).
func minorFitAndFactors(t *testing.T, data WeightedDense, q int) (*Result, Options, [][]float64) {
	t.Helper()
	n, m := data.D.Dims()
	c0 := mat.NewDense(n, 2, nil)
	for i := 0; i < n; i++ {
		c0.Set(i, 0, 1-float64(i)/float64(n))
		c0.Set(i, 1, float64(i)/float64(n))
	}
	opt := Options{Mode: Species, Closure: true, Total: []float64{1}}
	fit, err := Resolve(data, c0, opt)
	if err != nil {
		t.Fatal(err)
	}
	e, _ := Residuals(data.D, fit.C, fit.S)
	for j := 0; j < m; j++ {
		w := math.Sqrt(data.Col[j])
		for i := 0; i < n; i++ {
			e.Set(i, j, e.At(i, j)*w)
		}
	}
	var sv mat.SVD
	if !sv.Factorize(e, mat.SVDThin) {
		t.Fatal("SVD of the residual failed")
	}
	var u mat.Dense
	sv.UTo(&u)
	var us [][]float64
	for a := 0; a < q; a++ {
		us = append(us, mat.Col(nil, a, &u))
	}
	return fit, opt, us
}

// unitRows is d weighted by channel only: every spectrum's row weight 1.
func unitRows(d *mat.Dense, col []float64) WeightedDense {
	n, _ := d.Dims()
	row := make([]float64, n)
	for i := range row {
		row[i] = 1
	}
	return WeightedDense{D: d, Row: row, Col: col}
}

// minorRefit tests the leading factor of the weighted residual of a two-component fit.
func minorRefit(t *testing.T, d *mat.Dense, col []float64) *MinorTest {
	t.Helper()
	data := unitRows(d, col)
	fit, opt, us := minorFitAndFactors(t, data, 1)
	mt, err := TestMinorFactor(data, fit, opt, us[0], 0.05, 0)
	if err != nil {
		t.Fatal(err)
	}
	return mt
}

// A band shift of 1–2 points is fitted by the unshifted and the shifted band, two
// non-negative spectra: the extra component lowers the fit significantly (the F-test by its
// definition, Draper & Smith 1998 §6, and against the noise edge), so significance alone would count a third species.
// The verdict must not: what the third spectrum adds to the others is their derivative,
// s(x − δ) − s(x) ≈ −δ s′(x) (Taylor's theorem), which a species cannot be.
func TestMinorBandShiftIsNotASpecies(t *testing.T) {
	for _, shift := range []float64{1, 2} {
		d, col, _ := minorCase(3, shift, 0)
		mt := minorRefit(t, d, col)
		t.Logf("shift %g: F %.3g p %.2g shift share %.3f in band %.3f out drop %.3g (%.2f) peak %.2f edge %.3g p %.2g q %d novel %.3g fit share %.3g: %s", shift, mt.F, mt.Significance, mt.ShiftShare, mt.InBandShare, mt.OutBandDrop, mt.OutBandShare(), mt.OutBandPeak, mt.OutBandEdge, mt.OutBandSignificance, mt.OutBandChannels, mt.Novel, mt.FitShare, mt.Verdict)
		if mt.Species {
			t.Errorf("shift of %g points: counted as a species: %s", shift, mt.Verdict)
		}
		if mt.Significant && mt.ShiftShare < minorShiftShare {
			t.Errorf("shift of %g points: significant but its spectrum's news is only %.2f derivative", shift, mt.ShiftShare)
		}
		// The own-band rule holds it too, by itself: a shift changes the bands that are
		// there, and only the wings of s′ lie beyond the tenth-height points (2.7 % of a
		// Gaussian's s′² energy: ∫ x² e^{−x²} over |x| > 2.146 over the whole, analytic).
		if mt.ownBand(0.05) {
			t.Errorf("shift of %g points: %s", shift, mt.ownBandWords())
		}
	}
}

// A genuine minor species, about 1 % of the signal, non-negative, with a band of its own
// and a profile unlike the others, must be kept: it lowers the fit far beyond F's critical
// value and its spectrum adds a band, not a derivative.
func TestMinorSpeciesIsKept(t *testing.T) {
	d, col, share := minorCase(4, 0, 0.017)
	if share < 0.007 || share > 0.013 {
		t.Fatalf("test data: minor species is %.3g of the signal, want about 0.01", share)
	}
	mt := minorRefit(t, d, col)
	t.Logf("share %.3g: F %.3g p %.2g shift share %.3f in band %.3f out drop %.3g (%.2f) peak %.2f edge %.3g p %.2g q %d novel %.3g fit share %.3g: %s", share, mt.F, mt.Significance, mt.ShiftShare, mt.InBandShare, mt.OutBandDrop, mt.OutBandShare(), mt.OutBandPeak, mt.OutBandEdge, mt.OutBandSignificance, mt.OutBandChannels, mt.Novel, mt.FitShare, mt.Verdict)
	if !mt.Species {
		t.Errorf("minor species (%.2g %% of the signal) not kept: %s", 100*share, mt.Verdict)
	}
	// Its band at 175 lies where B's (130, width 12) is below a tenth of its height (from
	// 155.8 on: 130 + 12·√(2 ln 10)), so the drop there is its own (analytic).
	if !mt.ownBand(0.05) || mt.OutBandPeak < 0.99 {
		t.Errorf("minor species: no band of its own found: %s", mt.ownBandWords())
	}
}

// Without any third factor, one more component only fits noise: its drop must not be
// significant at 5 % (under the null hypothesis it is not, by definition of the level, in
// 95 % of draws; constrained components take less than the free one, so fewer still). The
// linear F-test with the extra component's n + m − 2k − 1 parameters called these same
// draws significant at p = 10⁻⁶ to 0.004 (its statistic 1.26–1.51 is logged).
func TestMinorNoiseOnlyIsNotSignificant(t *testing.T) {
	for seed := uint64(5); seed < 8; seed++ {
		d, col, _ := minorCase(seed, 0, 0)
		mt := minorRefit(t, d, col)
		t.Logf("seed %d: F %.3g p %.2g: %s", seed, mt.F, mt.Significance, mt.Verdict)
		if mt.Species {
			t.Errorf("noise only: counted as a species: %s", mt.Verdict)
		}
	}
}

// The null law of the drop: for a matrix of white noise, the best rank-one term takes the
// largest eigenvalue of WᵀW, whose upper 5 % point is where edgeSignificance gives 0.05
// (Tracy–Widom law, Johnstone, Ann. Stat. 2001, with Chiani's gamma approximation, J.
// Multivariate Anal. 2014). Over 300 noise matrices of 30 × 80 the share with p < 0.05
// must be 5 % within the binomial spread (3 standard deviations: 0.013–0.087), and the
// mean of the largest eigenvalue within 2 % of the centre (√(p−½)+√(q−½))² plus σ·E[TW₁]
// (E[TW₁] = −1.2065, from memory).
func TestEdgeSignificanceCalibrated(t *testing.T) {
	const p, q, draws = 30, 80, 300
	rng := rand.New(rand.NewPCG(21, 2))
	w := mat.NewDense(p, q, nil)
	hits, mean := 0, 0.0
	for r := 0; r < draws; r++ {
		for i := 0; i < p; i++ {
			for j := 0; j < q; j++ {
				w.Set(i, j, rng.NormFloat64())
			}
		}
		var sv mat.SVD
		if !sv.Factorize(w, mat.SVDNone) {
			t.Fatal("SVD failed")
		}
		l := sv.Values(nil)[0]
		l *= l
		mean += l / draws
		if edgeSignificance(l, p, q) < 0.05 {
			hits++
		}
	}
	a, b := math.Sqrt(p-0.5), math.Sqrt(q-0.5)
	want := largestNoiseEigen(p, q) - 1.2065*(a+b)*math.Cbrt(1/a+1/b)
	t.Logf("%d of %d below 0.05; mean largest eigenvalue %.2f, Tracy–Widom %.2f", hits, draws, mean, want)
	if f := float64(hits) / draws; f < 0.013 || f > 0.087 {
		t.Errorf("%.3f of noise draws significant at 5 %%", f)
	}
	if math.Abs(mean/want-1) > 0.02 {
		t.Errorf("mean largest eigenvalue %.2f, Tracy–Widom mean %.2f", mean, want)
	}
}

// fitTerms: the difference of two fits' terms at a channel is the difference of their
// weighted residual sums there, Σ_i a_i b_j [(d_ij − (C₁S₁ᵀ)_ij)² − (d_ij − (C₂S₂ᵀ)_ij)²],
// computed directly (the definition), for full, weighted and compressed data.
func TestFitTermsAreChannelResiduals(t *testing.T) {
	d, col, _ := minorCase(4, 0, 0.04)
	n, m := d.Dims()
	rng := rand.New(rand.NewPCG(2, 3))
	rnd := func(r, c int) *mat.Dense {
		x := mat.NewDense(r, c, nil)
		for i := 0; i < r; i++ {
			for j := 0; j < c; j++ {
				x.Set(i, j, rng.Float64())
			}
		}
		return x
	}
	c1, s1, c2, s2 := rnd(n, 2), rnd(m, 2), rnd(n, 3), rnd(m, 3)
	row := make([]float64, n)
	for i := range row {
		row[i] = 0.5 + rng.Float64()
	}
	var sv mat.SVD
	sv.Factorize(d, mat.SVDThin)
	var u, v mat.Dense
	sv.UTo(&u)
	sv.VTo(&v)
	for _, c := range []struct {
		name     string
		data     Data
		row, col []float64
	}{
		{"dense", Dense{D: d}, nil, nil},
		{"weighted", WeightedDense{D: d, Row: row, Col: col}, row, col},
		{"compressed (all factors)", Compressed{U: &u, Sigma: sv.Values(nil), V: &v, FrobSq: frobSq(d)}, nil, nil},
	} {
		f1, f2 := fitTerms(c.data, c1, s1), fitTerms(c.data, c2, s2)
		e1, _ := Residuals(d, c1, s1)
		e2, _ := Residuals(d, c2, s2)
		for j := 0; j < m; j += 17 {
			want := 0.0
			for i := 0; i < n; i++ {
				w := 1.0
				if c.row != nil {
					w = c.row[i] * c.col[j]
				}
				want += w * (e1.At(i, j)*e1.At(i, j) - e2.At(i, j)*e2.At(i, j))
			}
			if got := f1[j] - f2[j]; math.Abs(got-want) > 1e-8*math.Max(1, math.Abs(want)) {
				t.Errorf("%s, channel %d: %g, direct %g", c.name, j, got, want)
			}
		}
	}
}

// takeOthers on the family a closed resolution cannot tell apart: from s_C' = (s_C +
// α s_A + β s_B)/(1 + α + β), with s_C zero at A's and B's band cores, it must return s_C
// (up to scale), and leave s_C itself as it is (the definitions in lowest.go; Gaussian
// bands, analytic).
func TestTakeOthersFindsTheLowerEdge(t *testing.T) {
	const m = 200
	s := mat.NewDense(m, 3, nil)
	for j := 0; j < m; j++ {
		x := float64(j)
		sc := 0.6 * gauss(x, 175, 6)
		s.SetRow(j, []float64{0.5 * gauss(x, 60, 12), 0.4 * gauss(x, 130, 12), sc})
	}
	truth := mat.Col(nil, 2, s)
	for _, ab := range [][2]float64{{0, 0}, {0.3, 0.2}, {5, 40}} {
		mix := mat.DenseCopyOf(s)
		for j := 0; j < m; j++ {
			v := (truth[j] + ab[0]*s.At(j, 0) + ab[1]*s.At(j, 1)) / (1 + ab[0] + ab[1])
			mix.Set(j, 2, v)
		}
		takeOthers(mix, []bool{false, false, true}, 3)
		got := mat.Col(nil, 2, mix)
		if c := dot(got, truth) / math.Sqrt(dot(got, got)*dot(truth, truth)); c < 1-1e-9 {
			t.Errorf("α, β = %v: cosine %.12f to s_C", ab, c)
		}
		if f := floatsMax(got) / floatsMax(truth); math.Abs(f-1) > 1e-6 {
			t.Errorf("α, β = %v: scale %g of s_C, want 1 (closure keeps it)", ab, f)
		}
	}
}

// TestMinorFactors on two time vectors: the first verdict is the one TestMinorFactor gives
// alone (same refits, bit for bit), and the second reaches the decision its own refit
// reaches, stopping no later than one noise edge above the first fit (the stop rule).
func TestMinorFactorsShareTheRefit(t *testing.T) {
	d, col, _ := minorCase(3, 0, 0.04)
	data := unitRows(d, col)
	fit, opt, us := minorFitAndFactors(t, data, 2)
	ts, errs := TestMinorFactors(data, fit, opt, us, 0.05, 0)
	for i, u := range us {
		alone, err := TestMinorFactor(data, fit, opt, u, 0.05, 0)
		if err != nil || errs[i] != nil {
			t.Fatal(err, errs[i])
		}
		t.Logf("factor %d: together %v RSS %.6g, alone %v RSS %.6g", i+1, ts[i].Species, ts[i].ResidualSSWith, alone.Species, alone.ResidualSSWith)
		if ts[i].Species != alone.Species {
			t.Errorf("factor %d: species %v together, %v alone", i+1, ts[i].Species, alone.Species)
		}
		if i == 0 && ts[i].ResidualSSWith != alone.ResidualSSWith {
			t.Errorf("first factor: RSS %v together, %v alone", ts[i].ResidualSSWith, alone.ResidualSSWith)
		}
	}
	if lim := ts[0].ResidualSSWith * (1 + ts[0].NoiseEdge/ts[0].DF2); ts[1].ResidualSSWith > lim*(1+1e-12) && ts[1].Refit.Iterations < 500 {
		t.Errorf("second refit stopped at RSS %g above the first fit's %g plus one noise edge", ts[1].ResidualSSWith, ts[0].ResidualSSWith)
	}
}

// The verdict splits into Rule, the reasoning with the test's limits (the package
// comment's definition: p < alpha, ≥ 80 % derivative for a band shift, ≥ 25 % of the drop
// and ≥ 50 % of its peak outside the other spectra's bands) and the noise edges every refit
// from one fit shares, and Finding, the factor's own figures. Two factors with the same
// outcome and edges but different figures must get the same Rule, which states none of
// their figures, and each a Finding with its own drop; Verdict keeps them all.
func TestMinorVerdictRuleAndFinding(t *testing.T) {
	type own struct {
		drop, p, fitShare, shift, outShare, outP, outPeak float64
		spectra                                           []int
	}
	cases := []struct {
		name    string
		species bool
		limits  []string // the definition's limits the Rule must state
		a, b    own
	}{
		{"not significant", false, []string{"p ≥ 0.05"},
			own{drop: 500, p: 0.3, fitShare: 0.01}, own{drop: 650, p: 0.2, fitShare: 0.02}},
		{"vanishes", false, nil,
			own{drop: 4480, fitShare: 1e-9}, own{drop: 5120, fitShare: 1e-8}},
		{"few spectra", false, nil,
			own{drop: 4480, fitShare: 0.01, spectra: []int{3, 4}}, own{drop: 5120, fitShare: 0.02, spectra: []int{7}}},
		{"band shift", false, []string{"≥ 80 %"},
			own{drop: 4480, fitShare: 0.01, shift: 0.9}, own{drop: 5120, fitShare: 0.02, shift: 0.85}},
		{"no band of its own", false, []string{"≥ 25 %", "≥ 50 %", "p < 0.05"},
			own{drop: 4480, fitShare: 0.01, shift: 0.01, outShare: 0.18, outPeak: 0.26}, own{drop: 5120, fitShare: 0.02, shift: 0.04, outShare: 0.19, outPeak: 0.33}},
		{"species", true, []string{"≥ 25 %", "≥ 50 %", "p < 0.05", "less than 80 %"},
			own{drop: 4480, fitShare: 0.01, shift: 0.01, outShare: 0.6, outPeak: 1}, own{drop: 5120, fitShare: 0.02, shift: 0.04, outShare: 0.7, outPeak: 0.8}},
	}
	refit := func(o own) *MinorTest {
		// σ̂² = RSS_{k+1}/DF2 = 1, so the drop in σ² is RSS_k − RSS_{k+1} (Drop's definition).
		mt := &MinorTest{ResidualSSWith: 1000, DF2: 1000, ResidualSSWithout: 1000 + o.drop,
			NoiseEdge: 788, OutBandEdge: 603, OutBandChannels: 190,
			Significance: o.p, Significant: o.p < 0.05, FitShare: o.fitShare, Spectra: o.spectra,
			ShiftShare: o.shift, OutBandDrop: o.outShare * o.drop, OutBandSignificance: o.outP, OutBandPeak: o.outPeak}
		mt.verdict(0.05)
		return mt
	}
	for _, c := range cases {
		a, b := refit(c.a), refit(c.b)
		if a.Species != c.species || b.Species != c.species {
			t.Errorf("%s: species %v and %v, want %v: %s", c.name, a.Species, b.Species, c.species, a.Verdict)
		}
		if a.Rule != b.Rule {
			t.Errorf("%s: the rules differ:\n%s\n%s", c.name, a.Rule, b.Rule)
		}
		// A vanished component has no figure of its own to state.
		if (a.Finding == b.Finding) != (c.name == "vanishes") {
			t.Errorf("%s: findings %q and %q for different figures", c.name, a.Finding, b.Finding)
		}
		for _, l := range c.limits {
			if !strings.Contains(a.Rule, l) {
				t.Errorf("%s: rule %q does not state the limit %q", c.name, a.Rule, l)
			}
		}
		for _, mt := range []*MinorTest{a, b} {
			drop := fmt.Sprintf("%.3g σ²", mt.Drop())
			if strings.Contains(mt.Rule, drop) {
				t.Errorf("%s: the rule states the factor's drop %s: %s", c.name, drop, mt.Rule)
			}
			if strings.Contains(mt.Verdict, drop) && !strings.Contains(mt.Finding, drop) {
				t.Errorf("%s: the verdict states the drop %s, the finding does not:\n%s\n%s", c.name, drop, mt.Verdict, mt.Finding)
			}
		}
	}
}

// tracyWidomUpper is the upper tail of the shifted gamma it names (shape 46.446,
// scale 0.186054, shift 9.84801): against mpmath's regularized upper incomplete
// gamma function at 50 digits (testdata/pvalue/tails.json), within 1e-9
// relatively down to 7.6e-167, where 1 − CDF gave 0 below 1e-16.
func TestTracyWidomUpperAsMpmath(t *testing.T) {
	raw, err := os.ReadFile("../testdata/pvalue/tails.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Gamma []struct{ Z, P float64 } `json:"gamma_sf"`
	}
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	tiny := 0
	for _, c := range ref.Gamma {
		got := tracyWidomUpper(c.Z - 9.84801)
		switch {
		case c.P == 0:
			if got >= 1e-300 {
				t.Errorf("z = %g: %g, the tail is below 1e-300", c.Z, got)
			}
		case math.Abs(got-c.P) > 1e-9*c.P:
			t.Errorf("z = %g: %.12g, mpmath %.12g", c.Z, got, c.P)
		case c.P < 1e-16:
			tiny++
		}
	}
	if tiny < 3 {
		t.Fatalf("only %d reference tails below 1e-16", tiny)
	}
}

// endLevel is its definition: the mean of the last tenth of the rows over the value at
// the peak. A first-order approach to 1 (1 − e^{−t/τ}, 50 rows, τ = 5 rows) ends within
// e^{−9} of its peak; a pulse t e^{−t/τ} (largest at t = τ, value τ/e) ends near 0.
func TestEndLevelIsItsDefinition(t *testing.T) {
	step, pulse := make([]float64, 50), make([]float64, 50)
	for i := range step {
		x := float64(i)
		step[i] = 1 - math.Exp(-x/5)
		pulse[i] = x * math.Exp(-x/5)
	}
	if got := endLevel(step, 49); math.Abs(got-1) > math.Exp(-9) {
		t.Errorf("step: end level %.6f, want 1 within e^-9", got)
	}
	var want float64
	for _, v := range pulse[45:] {
		want += v / 5
	}
	want /= pulse[5]
	if got := endLevel(pulse, 5); math.Abs(got-want) > 1e-12 || got > 0.02 {
		t.Errorf("pulse: end level %.6g, want %.6g (about 0.01)", got, want)
	}
	if got := endLevel([]float64{0, 0, 0}, 0); got != 0 {
		t.Errorf("all zero: %g, want 0", got)
	}
}
