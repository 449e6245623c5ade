package pipeline

import (
	"bytes"
	"fmt"
	"math"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// shiftedAbsorbance returns, for spectrum i and point j, what a band shift of δ_i axis
// points adds to the absorbance of s: Σ_k c_k(t_i) [s_k(x_j − δ_i) − s_k(x_j)], with s_k
// between axis points by linear interpolation.
func shiftedAbsorbance(s *synth, delta func(i int) float64) func(i, j int) float64 {
	m := len(s.axis)
	at := func(k int, pos float64) float64 {
		pos = math.Min(math.Max(pos, 0), float64(m-1))
		lo := int(math.Floor(pos))
		hi := min(lo+1, m-1)
		f := pos - float64(lo)
		return (1-f)*s.spectra.At(lo, k) + f*s.spectra.At(hi, k)
	}
	_, ns := s.spectra.Dims()
	return func(i, j int) float64 {
		v := 0.0
		for k := 0; k < ns; k++ {
			v += s.profiles.At(i, k) * (at(k, float64(j)-delta(i)) - s.spectra.At(j, k))
		}
		return v
	}
}

// broadenedAbsorbance returns what widening every band of s by the factor 1 + g_i (the
// same area: height over 1 + g_i) adds to the absorbance of spectrum i, for s built from
// Gaussians of the given centres and widths (heights read from s at the centres).
func broadenedAbsorbance(s *synth, bands [][2]float64, g func(i int) float64) func(i, j int) float64 {
	_, ns := s.spectra.Dims()
	return func(i, j int) float64 {
		f := 1 + g(i)
		v := 0.0
		for k := 0; k < ns; k++ {
			for _, b := range bands {
				h := peakAt(s, k, b[0])
				d0, d1 := (s.axis[j]-b[0])/b[1], (s.axis[j]-b[0])/(b[1]*f)
				v += s.profiles.At(i, k) * h * (math.Exp(-0.5*d1*d1)/f - math.Exp(-0.5*d0*d0))
			}
		}
		return v
	}
}

// peakAt is the value of spectrum k of s at the axis point nearest x.
func peakAt(s *synth, k int, x float64) float64 {
	best := 0
	for j, a := range s.axis {
		if math.Abs(a-x) < math.Abs(s.axis[best]-x) {
			best = j
		}
	}
	return s.spectra.At(best, k)
}

// logMinor logs every factor the size test set aside, with what the refit said.
func logMinor(t *testing.T, r *Result) {
	t.Helper()
	for _, nf := range r.Chemical.Nuisance {
		t.Logf("factor %d %s %.3g %%: %s%s", nf.Factor, nf.Kind, nf.SharePercent, nf.Looks, minorAdvice(r, nf.Factor))
	}
	for _, nf := range r.MinorSpecies {
		t.Logf("factor %d counted %.3g %%:%s", nf.Factor, nf.SharePercent, minorAdvice(r, nf.Factor))
	}
}

// stayAtTwo checks the chemical count of A -> B and, when want is set, that the refit
// test looked at some factor (else the case does not exercise it) and counted none.
func stayAtTwo(t *testing.T, r *Result, tested bool) {
	t.Helper()
	logMinor(t, r)
	if r.Components != 2 || r.Rank.Estimate != 2 {
		t.Errorf("rank %d, components %d; want the two species of A -> B", r.Rank.Estimate, r.Components)
	}
	if tested && len(r.MinorTests) == 0 {
		t.Errorf("no factor refitted: the case does not reach the refit test")
	}
	for _, v := range r.MinorTests {
		if v.Test != nil && v.Test.Species {
			t.Errorf("factor %d: the refit counted it as a species: %s", v.Factor, v.Test.Verdict)
		}
	}
}

// A band shift growing to 1–2 axis points early in the run (a cell settling) on A -> B
// (first order, Bateman 1910), detector noise constant in counts: a factor above the
// noise, which the refit must not make a species (a shifted band is s(x − δ) − s(x) ≈
// −δ s′(x), Taylor's theorem: it changes the bands that are there and adds none).
func TestBandShiftIsNotASpecies(t *testing.T) {
	for _, shift := range []float64{1, 2} {
		s := makeBateman(t, 6e-3, 2e-3, 0, 1, 2)
		countsNoise(s, 20, 8, shiftedAbsorbance(s, func(i int) float64 {
			return shift * (1 - math.Exp(-float64(i)/6))
		}))
		r, _ := runNuisanceCase(t, s)
		t.Logf("shift %g points", shift)
		stayAtTwo(t, r, true)
	}
}

// Every band of A -> B widening by up to 6 % at constant area as the run goes on (a
// temperature rise: common practice, bands broaden as a liquid warms), noise constant in
// counts: a change of band shape under the bands that are there, not a species.
func TestBandBroadeningIsNotASpecies(t *testing.T) {
	s := makeBateman(t, 6e-3, 2e-3, 0, 1, 2)
	bands := [][2]float64{{1700, 14}, {1450, 20}, {1660, 14}, {1400, 18}}
	n := len(s.times)
	countsNoise(s, 20, 10, broadenedAbsorbance(s, bands, func(i int) float64 {
		return 0.06 * float64(i) / float64(n-1)
	}))
	r, _ := runNuisanceCase(t, s)
	stayAtTwo(t, r, true)
}

// A -> B with nothing but detector noise constant in counts: two species, and no refit
// may add a third (the refit's null law: Tracy–Widom, Johnstone 2001).
func TestNoiseOnlyStaysAtTwo(t *testing.T) {
	s := makeBateman(t, 6e-3, 2e-3, 0, 1, 2)
	countsNoise(s, 20, 11, nil)
	r, _ := runNuisanceCase(t, s)
	stayAtTwo(t, r, false)
}

// withMinorSpecies adds to A -> B (s, two species) a species C with a band of its own
// (1250 cm⁻¹, width 12, where A and B do not absorb) and the amount x_i = amount(a_i, i)
// taken out of B so that the amounts still add up to one (closure). It returns C's share
// of the signal, ‖x s_Cᵀ‖_F / ‖C Sᵀ‖_F.
func withMinorSpecies(s *synth, amount func(a float64, i int) float64) float64 {
	n, m := len(s.times), len(s.axis)
	spectra := mat.NewDense(m, 3, nil)
	profiles := mat.NewDense(n, 3, nil)
	own := gaussian(s.axis, 1250, 12, 0.5)
	for j := 0; j < m; j++ {
		spectra.SetRow(j, []float64{s.spectra.At(j, 0), s.spectra.At(j, 1), own[j]})
	}
	for i := 0; i < n; i++ {
		a := s.profiles.At(i, 0)
		x := amount(a, i)
		profiles.SetRow(i, []float64{a, s.profiles.At(i, 1) - x, x})
	}
	s.spectra, s.profiles = spectra, profiles
	var all mat.Dense
	all.Mul(profiles, spectra.T())
	c, sp := profiles.ColView(2), spectra.ColView(2)
	return mat.Norm(c, 2) * mat.Norm(sp, 2) / mat.Norm(&all, 2)
}

// minorSpeciesCases are the two ways the minor species' amount x runs over the 121 spectra
// of makeBateman's A -> B, given A's share a and the spectrum's index i.
var minorSpeciesCases = []struct {
	name   string
	amount func(a float64, i int) float64
}{
	{"transient", func(a float64, _ int) float64 { return 0.04 * 4 * a * (1 - a) }},
	{"slowly formed", func(a float64, i int) float64 { return 0.02 * (1 - a) * (1 - a) * float64(i) / 121 }},
}

// A genuine minor species, 0.8–1 % of the signal, with a band of its own, beside A -> B
// (Bateman 1910), noise constant in counts: the default run must count three species, the
// summary list it under minor_species with the refit's reasons, and the spectra and
// profiles follow the analytic truth: every profile at cosine ≥ 0.99 and C's spectrum at
// ≥ min(0.99, c₀ − 0.01), c₀ the cosine least squares on the true profiles gives (what the
// noise leaves of C's spectrum). Transient: formed and used up, x = 4·x₀·a(1 − a); slowly
// formed: x = x₀ (1 − a)² t/T, a product that lags behind B. (Closure and non-negativity
// alone let a component this small carry part of A's and B's bands at the same fit:
// without mcr.Options.LeastOthers C's spectrum came out at cosines 0.49 and 0.02.)
func TestMinorSpeciesIsCounted(t *testing.T) {
	for _, c := range minorSpeciesCases {
		s := makeBateman(t, 6e-3, 2e-3, 0, 1, 2)
		share := withMinorSpecies(s, c.amount)
		if share < 0.006 || share > 0.012 {
			t.Fatalf("%s: test data: the minor species is %.3g of the signal, want 0.8–1 %%", c.name, share)
		}
		countsNoise(s, 20, 9, nil)
		r, _ := runNuisanceCase(t, s)
		logMinor(t, r)
		t.Logf("%s: share %.3g; rank %d, components %d, minor species %d", c.name, share, r.Rank.Estimate, r.Components, len(r.MinorSpecies))
		if r.Components != 3 {
			t.Errorf("%s: %d components; want 3 (the minor species, %.2g %% of the signal, counted)", c.name, r.Components, 100*share)
			continue
		}
		sum := MakeSummary(r)
		if len(sum.MinorSpecies) != 1 || sum.MinorSpecies[0].Refit == nil || !sum.MinorSpecies[0].Refit.Species {
			t.Errorf("%s: summary minor_species %+v; want the counted factor with its refit", c.name, sum.MinorSpecies)
		}
		cs, cp := bestCosines(s.spectra, r.ALS.S), bestCosines(s.profiles, r.ALS.C)
		t.Logf("%s: cosines to the truth: spectra %.4f, profiles %.4f", c.name, cs, cp)
		// What the data hold of C's spectrum given the true profiles: least squares on
		// them (Gauss–Markov: the best linear unbiased estimate). Noise limits it for a
		// species this small; the resolution must come within 0.01 of it (non-negativity clips
		// its noise, and ALS with the lowering stirs within the noise: 0.987–0.990 after 30 to
		// 1000 iterations in the slow case, 0.993 from the true profiles).
		var g, gi, dc, oracle mat.Dense
		g.Mul(s.profiles.T(), s.profiles)
		if err := gi.Inverse(&g); err != nil {
			t.Fatal(err)
		}
		dc.Mul(r.D.T(), s.profiles)
		oracle.Mul(&dc, &gi)
		best := bestCosines(s.spectra, &oracle)[2]
		t.Logf("%s: C's spectrum from the true profiles at cosine %.4f", c.name, best)
		if want := min(0.99, best-0.01); cs[2] < want {
			t.Errorf("%s: C's spectrum at cosine %.4f to the truth, want ≥ %.4f", c.name, cs[2], want)
		}
		for j := range cp {
			if cp[j] < 0.99 {
				t.Errorf("%s: profile %d at cosine %.4f to the truth, want ≥ 0.99", c.name, j+1, cp[j])
			}
		}
	}
}

// runDifferenceCase writes s as single beams without a blank, so that the run is in
// reactions mode on differences from the first spectra (three before the reaction).
func runDifferenceCase(t *testing.T, s *synth) *Result {
	t.Helper()
	series, _ := s.write(t)
	st := NewSettings()
	st.Data, st.Kind, st.Pre = []string{series}, "single-beam", 3
	st.Bands, st.Checks = "off", "off"
	r, err := Run(st, nil)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// The minor species of TestMinorSpeciesIsCounted seen through differences: ΔA(t) = (1 −
// a)(s_B − s_A) + x (s_C − s_B) (mass balance, from A = a s_A + (1 − a − x) s_B + x s_C), so
// two reactions. The default run must count them, and its reaction spectra must lie in the
// span of the true ones (outside it by at most 2 %, or 1.5 % more than least squares on the
// true extents leaves: the noise on a 1 % reaction's spectrum; extents alone are
// rotationally ambiguous in reactions mode, and over noise seeds 1–9 of the transient case
// the resolution lay 0.004–0.011 beyond that least-squares figure, measured). A
// band shift of 2 points on A -> B alone stays one reaction.
func TestMinorSpeciesInDifferences(t *testing.T) {
	for _, c := range minorSpeciesCases {
		s := makeBateman(t, 6e-3, 2e-3, 0, 1, 2)
		withMinorSpecies(s, c.amount)
		countsNoise(s, 20, 9, nil)
		r := runDifferenceCase(t, s)
		logMinor(t, r)
		if r.Mode != mcr.Reactions || r.Components != 2 {
			t.Errorf("%s: mode %s, %d components; want 2 reactions", c.name, r.Mode, r.Components)
			continue
		}
		// The advice states the count resolved (the rank of difference data
		// is the number of independent reactions, by definition), also when
		// the refit raised it: it said rank 1 beside 2 reactions.
		if adv := strings.Join(r.Advice, "\n"); !strings.Contains(adv, "difference data has rank 2 =") || strings.Contains(adv, "difference data has rank 1 =") {
			t.Errorf("%s: 2 reactions resolved, but the advice says:\n%s", c.name, adv)
		}
		m, _ := s.spectra.Dims()
		basis := mat.NewDense(m, 2, nil)
		for j := 0; j < m; j++ {
			basis.Set(j, 0, s.spectra.At(j, 1)-s.spectra.At(j, 0))
			basis.Set(j, 1, s.spectra.At(j, 2)-s.spectra.At(j, 1))
		}
		// What noise leaves: the reaction spectra by least squares on the true extents
		// (1 − a and x; Gauss–Markov), and how far outside the span they lie.
		ns, _ := s.profiles.Dims()
		xi := mat.NewDense(ns, 2, nil)
		for i := 0; i < ns; i++ {
			xi.Set(i, 0, 1-s.profiles.At(i, 0))
			xi.Set(i, 1, s.profiles.At(i, 2))
		}
		var g, gi, dx, oracle mat.Dense
		g.Mul(xi.T(), xi)
		if err := gi.Inverse(&g); err != nil {
			t.Fatal(err)
		}
		dx.Mul(r.D.T(), xi)
		oracle.Mul(&dx, &gi)
		// Matched smallest to smallest (the order of reactions is the run's own).
		var rels, limits []float64
		for j := 0; j < 2; j++ {
			rels = append(rels, outsideSpan(basis, mat.Col(nil, j, r.ALS.S)))
			limits = append(limits, outsideSpan(basis, mat.Col(nil, j, &oracle)))
		}
		slices.Sort(rels)
		slices.Sort(limits)
		t.Logf("%s: reaction spectra %.3f outside the span of the true ones; from the true extents %.3f", c.name, rels, limits)
		for j := range rels {
			if rels[j] > max(0.02, limits[j]+0.015) {
				t.Errorf("%s: a reaction spectrum lies %.3f outside the span of the true ones, want ≤ %.3f (noise leaves %.3f)", c.name, rels[j], max(0.02, limits[j]+0.015), limits[j])
			}
		}
	}
	s := makeBateman(t, 6e-3, 2e-3, 0, 1, 2)
	countsNoise(s, 20, 8, shiftedAbsorbance(s, func(i int) float64 {
		return 2 * (1 - math.Exp(-float64(i)/6))
	}))
	r := runDifferenceCase(t, s)
	logMinor(t, r)
	if r.Components != 1 {
		t.Errorf("band shift of 2 points in differences: %d components, want the one reaction", r.Components)
	}
}

// outsideSpan is ‖(I − P) v‖/‖v‖ for P the projector onto the columns of basis (QR).
func outsideSpan(basis *mat.Dense, v []float64) float64 {
	var qr mat.QR
	qr.Factorize(basis)
	col := mat.NewVecDense(len(v), v)
	var coef, proj mat.VecDense
	if err := qr.SolveVecTo(&coef, false, col); err != nil {
		return math.Inf(1)
	}
	proj.MulVec(basis, &coef)
	proj.SubVec(col, &proj)
	return mat.Norm(&proj, 2) / mat.Norm(col, 2)
}

// The refit test of minor factors runs its candidates' refits on workers; a run that
// counts a minor species must still write the same bytes at GOMAXPROCS 1 and 2 (the
// project's determinism rule). The transient case of TestMinorSpeciesIsCounted, every
// output file compared except the manifest, whose start time differs.
func TestMinorSpeciesSameAtAnyGOMAXPROCS(t *testing.T) {
	s := makeBateman(t, 6e-3, 2e-3, 0, 1, 2)
	withMinorSpecies(s, minorSpeciesCases[0].amount)
	countsNoise(s, 20, 9, nil)
	series, blank := s.write(t)
	dir := t.TempDir()
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	var ref map[string][]byte
	for i, procs := range []int{2, 1} {
		runtime.GOMAXPROCS(procs)
		st := NewSettings()
		st.Data, st.Kind, st.Blanks, st.Pre = []string{series}, "single-beam", []string{blank}, 3
		st.Bands, st.Quiet = "off", true
		st.Out = filepath.Join(dir, fmt.Sprintf("out%d", i))
		r, err := Execute(st, Streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}})
		if err != nil {
			t.Fatal(err)
		}
		if len(r.MinorSpecies) != 1 || r.Components != 3 {
			t.Fatalf("GOMAXPROCS %d: %d components, %d minor species; want the minor species counted", procs, r.Components, len(r.MinorSpecies))
		}
		got := folderFiles(t, st.Out)
		delete(got, ManifestName)
		if ref == nil {
			ref = got
			continue
		}
		if len(got) != len(ref) {
			t.Errorf("GOMAXPROCS 1 wrote %d files, 2 wrote %d", len(got), len(ref))
		}
		for name, want := range ref {
			if d := firstDifference(name, want, got[name]); d != nil {
				t.Errorf("GOMAXPROCS 1 against 2: %s", d)
			}
		}
	}
}

// A resolution that counts a minor species runs again with one more component on the data
// as they were before the first (promoteMinor), but keeps only the rows the first fills
// (minorState), not a copy of the data. The transient case of TestMinorSpeciesIsCounted
// with a drifting baseline (as in TestBaselineDriftIsNotASpecies) and sharp gas lines in
// two spectra (as in TestGasLinesSetAside), so that the first resolution both fills rows
// set aside and fits a baseline. The kept rows of the final data must then be, to the
// last bit, the data before any resolution less the final baseline: the same data read
// with --baseline off, --keep-outliers and --components 2 (which nothing changes in
// place), less B Pᵀ as subtractBaselineInPlace forms it. A row left filled by the first
// resolution, or its baseline left in, breaks the equality; so does a row the first
// resolution set aside that the second no longer finds.
func TestMinorPromotionRestoresData(t *testing.T) {
	s := makeBateman(t, 6e-3, 2e-3, 0, 1, 2)
	withMinorSpecies(s, minorSpeciesCases[0].amount)
	n := len(s.times)
	lo, hi := s.axis[len(s.axis)-1], s.axis[0]
	bad := map[int]bool{40: true, 85: true}
	lines := []float64{1790, 1750, 1698, 1652, 1558, 1540, 1508, 1472, 1436, 1396}
	countsNoise(s, 20, 9, func(i, j int) float64 {
		x := 2*(s.axis[j]-lo)/(hi-lo) - 1
		f := float64(i) / float64(n-1)
		v := 0.01*f + 0.005*math.Sin(3*f)*x
		if bad[i] {
			for q, c := range lines {
				d := (s.axis[j] - c) / 1.5
				v += (0.02 + 0.004*float64(q)) * math.Exp(-0.5*d*d)
			}
		}
		return v
	})
	series, blank := s.write(t)
	st := NewSettings()
	st.Data, st.Kind, st.Blanks, st.Pre = []string{series}, "single-beam", []string{blank}, 3
	st.Bands, st.Checks = "off", "off"
	var log bytes.Buffer
	r, err := Run(st, &log)
	if err != nil {
		t.Fatal(err)
	}
	logMinor(t, r)
	t.Logf("components %d, baseline %s, %d spectra set aside; log:\n%s", r.Components, baselineName(r.BaselineOrder), len(r.SetAside), log.String())
	before, _, _ := strings.Cut(log.String(), "testing")
	if len(r.MinorSpecies) != 1 || !strings.Contains(before, "aside") || r.BaselineShapes == nil {
		t.Fatalf("%d minor species counted, baseline %s: the case must count one, set spectra aside before the refit and fit a baseline to test the restored data",
			len(r.MinorSpecies), baselineName(r.BaselineOrder))
	}
	// The rows the first resolution filled (the gas-line spectra 40 and 85
	// among them) are either set aside again or compared below, point by
	// point, with the data before any resolution: a row left filled fails
	// there. (The second resolution need not set them aside: its third
	// component may take the two spectra's lines.)
	st.Baseline, st.KeepOutliers, st.Components = "off", true, "2"
	plain, err := Run(st, nil)
	if err != nil {
		t.Fatal(err)
	}
	want := mat.DenseCopyOf(plain.D)
	subtractBaselineInPlace(want, r.BaselineProfiles, r.BaselineShapes)
	_, m := want.Dims()
	for i := 0; i < n; i++ {
		if setAside(r.SetAside, i) {
			continue
		}
		got, w := r.D.RawRowView(i)[:m], want.RawRowView(i)[:m]
		for j := range w {
			if math.Float64bits(got[j]) != math.Float64bits(w[j]) {
				t.Fatalf("spectrum %d, point %d: %v after the second resolution, want %v (the data before any resolution less the final baseline)", i, j, got[j], w[j])
			}
		}
	}
}

// checkSharedVerdicts checks the advice on the refitted minor factors: reasoning of a
// verdict (mcr.MinorTest.Rule) that several factors share is said in exactly one line,
// which names them all, and each factor's own line keeps its own figures (Finding)
// without that reasoning or the full verdict; a verdict of one factor alone stays whole
// on its line. It returns how many reasonings were shared.
func checkSharedVerdicts(t *testing.T, r *Result) int {
	t.Helper()
	lineOf := func(f int) string {
		for _, a := range r.Advice {
			if strings.HasPrefix(a, fmt.Sprintf("factor %d (", f)) {
				return a
			}
		}
		t.Errorf("no advice line for factor %d: %q", f, r.Advice)
		return ""
	}
	groups := map[string][]int{}
	for _, v := range r.MinorTests {
		if v.Test != nil && v.Err == nil {
			groups[v.Test.Rule] = append(groups[v.Test.Rule], v.Factor)
		}
	}
	shared := 0
	for rule, fs := range groups {
		slices.Sort(fs)
		if len(fs) == 1 {
			if v := minorOf(r, fs[0]); !strings.Contains(lineOf(fs[0]), v.Test.Verdict) {
				t.Errorf("factor %d, refitted alone to its verdict: its line lacks the verdict %q", fs[0], v.Test.Verdict)
			}
			continue
		}
		shared++
		var lines []string
		for _, a := range r.Advice {
			if strings.Contains(a, rule) {
				lines = append(lines, a)
			}
		}
		if len(lines) != 1 || !strings.HasPrefix(lines[0], "factors "+factorList(fs)+",") {
			t.Errorf("the verdict of factors %v is said in %d lines (want 1, naming them): %q", fs, len(lines), lines)
		}
		for _, f := range fs {
			v, line := minorOf(r, f), lineOf(f)
			if !strings.Contains(line, v.Test.Finding) || strings.Contains(line, rule) || strings.Contains(line, v.Test.Verdict) {
				t.Errorf("factor %d: want its own figures %q without the common verdict; line %q", f, v.Test.Finding, line)
			}
		}
	}
	return shared
}

// The advice says a verdict that several refits share once: three minor factors and an
// outlier, two of the refits with the same reasoning and one with another (the strings
// stand for mcr.MinorTest's; TestMinorVerdictRuleAndFinding checks how it forms them).
func TestMinorAdviceSaysSharedVerdictOnce(t *testing.T) {
	r := &Result{Times: []float64{0, 60, 120, 180, 240}, MinorTested: true}
	r.Chemical = &svd.ChemicalRank{Estimate: 2, Nuisance: []svd.NuisanceFactor{
		{Factor: 3, Kind: svd.NuisanceMinor, Looks: "smooth, small", SharePercent: 0.0087},
		{Factor: 4, Kind: svd.NuisanceOutlier, Looks: "one spectrum", SharePercent: 0.0012, Spectra: []int{2}},
		{Factor: 5, Kind: svd.NuisanceMinor, Looks: "smooth, smaller", SharePercent: 0.0009},
		{Factor: 6, Kind: svd.NuisanceBandShift, Looks: "a derivative", SharePercent: 0.0005},
	}}
	test := func(rule, finding string) *mcr.MinorTest {
		return &mcr.MinorTest{Rule: rule, Finding: finding, Verdict: finding + "; " + rule, ShiftShare: 0.04, InBandShare: 0.7}
	}
	r.MinorTests = []MinorVerdict{
		{Factor: 3, Test: test("no band of its own, so not counted", "18 % outside the bands")},
		{Factor: 5, Test: test("no band of its own, so not counted", "19 % outside the bands")},
		{Factor: 6, Test: test("mostly a derivative, so not a species", "85 % derivative")},
	}
	nuisanceAdvice(r)
	for _, a := range r.Advice {
		t.Log(a)
	}
	if n := checkSharedVerdicts(t, r); n != 1 {
		t.Errorf("%d verdicts said once for several factors, want 1 (factors 3 and 5)", n)
	}
	if len(r.Advice) != 5 {
		t.Errorf("%d advice lines, want 5 (the common verdict and one per factor)", len(r.Advice))
	}
}

// Two refits whose extra components have the same shape (cosine ≥ 0.99 of spectra and of
// profiles, the definition of alike used here) are said to be one finding; a third that
// ends elsewhere is not, and neither is the first refit, which has nothing before it.
func TestMinorAdviceSaysWhenRefitsMeet(t *testing.T) {
	refit := func(extraS, extraC []float64) *mcr.Result {
		s := mat.NewDense(len(extraS), 2, nil)
		c := mat.NewDense(len(extraC), 2, nil)
		for j, v := range extraS {
			s.Set(j, 0, 1)
			s.Set(j, 1, v)
		}
		for i, v := range extraC {
			c.Set(i, 0, 1)
			c.Set(i, 1, v)
		}
		return &mcr.Result{S: s, C: c}
	}
	band := []float64{0, 1, 3, 1, 0}
	grow := []float64{0, 0.2, 0.5, 0.9}
	test := func(s, c []float64) *mcr.MinorTest {
		return &mcr.MinorTest{Refit: refit(s, c), Finding: "its own figures", Rule: "one rule"}
	}
	r := &Result{Times: []float64{0, 1, 2, 3}, MinorTested: true, MinorTests: []MinorVerdict{
		{Factor: 3, Test: test(band, grow)},
		{Factor: 5, Test: test([]float64{0, 1.02, 3.05, 0.98, 0.01}, []float64{0, 0.21, 0.5, 0.88})},
		{Factor: 6, Test: test([]float64{3, 1, 0, 0, 0}, []float64{0.9, 0.5, 0.2, 0})},
	}}
	for _, c := range []struct {
		factor int
		want   string
	}{{3, ""}, {5, "same extra component as factor 3's refit"}, {6, ""}} {
		got := minorAdvice(r, c.factor)
		if c.want == "" && strings.Contains(got, "same extra component") {
			t.Errorf("factor %d: %q says it met another refit", c.factor, got)
		}
		if c.want != "" && !strings.Contains(got, c.want) {
			t.Errorf("factor %d: %q, want it to say %q", c.factor, got, c.want)
		}
	}
}

// withReagentStep makes s (makeBateman's A → B, first order from t = 60 s: Bateman 1910)
// the run of a stirred cell into which a reagent R is added as the reaction starts
// (construction of the test): every amount after t = 60 s is diluted by f = 1/1.15 and R
// is present at 0.4 f, a step that stays. In differences from the first spectra, ΔA(t)
// = [(f − 1) s_A + 0.4 f s_R] + f (1 − a)(s_B − s_A): the step and the reaction, two
// independent changes. It returns their spectra (m × 2) and amounts (n × 2).
func withReagentStep(s *synth) (spectra, amounts *mat.Dense) {
	const f = 1 / 1.15
	n, m := len(s.times), len(s.axis)
	r := add(gaussian(s.axis, 1550, 12, 0.35), gaussian(s.axis, 1250, 16, 0.25))
	sp := mat.NewDense(m, 3, nil)
	spectra = mat.NewDense(m, 2, nil)
	for j := 0; j < m; j++ {
		a, b := s.spectra.At(j, 0), s.spectra.At(j, 1)
		sp.SetRow(j, []float64{a, b, r[j]})
		spectra.SetRow(j, []float64{(f-1)*a + 0.4*f*r[j], b - a})
	}
	pr := mat.NewDense(n, 3, nil)
	amounts = mat.NewDense(n, 2, nil)
	for i, tm := range s.times {
		a := s.profiles.At(i, 0)
		if tm <= 60 {
			pr.SetRow(i, []float64{a, 1 - a, 0})
			continue
		}
		pr.SetRow(i, []float64{f * a, f * (1 - a), 0.4 * f})
		amounts.SetRow(i, []float64{1, f * (1 - a)})
	}
	s.spectra, s.profiles = sp, pr
	return spectra, amounts
}

// clearButSmall checks that the second factor of rep's table stands at least 100 times
// above the noise edge with less than 2 % of the first's signal: the case of a second
// change whose profile runs nearly parallel to the first's, which the size rule set
// aside (svd.MinorEnergy).
func clearButSmall(t *testing.T, what string, rep *svd.RankReport) {
	t.Helper()
	if rep == nil || len(rep.Table) < 2 {
		t.Fatalf("%s: no rank table", what)
	}
	s1, s2 := rep.Table[0].SingularValue, rep.Table[1].SingularValue
	t.Logf("%s: factor 2 at %.0f × the noise edge, %.2g %% of factor 1's signal", what, s2/rep.NoiseEdge, 100*s2*s2/(s1*s1))
	if s2 < 100*rep.NoiseEdge || s2*s2 >= svd.MinorEnergy*s1*s1 {
		t.Fatalf("%s: test data: factor 2 is not the case (clear of the noise, under 2 %% of factor 1)", what)
	}
}

// A reagent added with dilution as A → B starts (withReagentStep), noise constant in
// counts (I = I₀·10^(−A) + N(0, σ²)): the differences hold two independent changes, the step and the reaction, far
// above the noise though the step carries under 2 % of the reaction's signal. Reactions
// mode must resolve two, whose spectra lie in the span of the true step's and
// reaction's (as TestMinorSpeciesInDifferences measures it), and set no spectrum aside;
// species mode must give the differences rank 2 and say why in summary.json.
func TestReagentStepIsASecondChange(t *testing.T) {
	s := makeBateman(t, 6e-3, 2e-3, 0, 1, 2)
	truth, amounts := withReagentStep(s)
	// 4 counts of noise on 2·10⁴ (the trial's single beams had 4 on 5·10⁴): with 20,
	// as the other cases here, the step's factor stands 31 times above the edge,
	// where its size beside the reaction still sets it aside.
	countsNoise(s, 4, 9, nil)
	r := runDifferenceCase(t, s)
	logMinor(t, r)
	clearButSmall(t, "differences", r.Rank)
	if r.Mode != mcr.Reactions || r.Rank.Estimate != 2 || r.Components != 2 {
		t.Errorf("mode %s, rank %d, %d components; want 2 reactions (the step and A → B)", r.Mode, r.Rank.Estimate, r.Components)
	}
	if len(r.SetAside) != 0 {
		t.Errorf("%d spectra set aside, want none (every spectrum follows the two changes)", len(r.SetAside))
	}
	if r.Components == 2 {
		var g, gi, dx, oracle mat.Dense
		g.Mul(amounts.T(), amounts)
		if err := gi.Inverse(&g); err != nil {
			t.Fatal(err)
		}
		dx.Mul(r.D.T(), amounts)
		oracle.Mul(&dx, &gi)
		var rels, limits []float64
		for j := 0; j < 2; j++ {
			rels = append(rels, outsideSpan(truth, mat.Col(nil, j, r.ALS.S)))
			limits = append(limits, outsideSpan(truth, mat.Col(nil, j, &oracle)))
		}
		slices.Sort(rels)
		slices.Sort(limits)
		t.Logf("reaction spectra %.4f outside the span of the true ones; from the true amounts %.4f", rels, limits)
		for j := range rels {
			if rels[j] > max(0.02, limits[j]+0.015) {
				t.Errorf("a reaction spectrum lies %.3f outside the span of the true ones, want ≤ %.3f", rels[j], max(0.02, limits[j]+0.015))
			}
		}
	}
	rs, _ := runNuisanceCase(t, s)
	clearButSmall(t, "species mode's differences", rs.DiffRank)
	if rs.DiffRank.Estimate != 2 {
		t.Errorf("species mode: rank of the differences %d, want 2", rs.DiffRank.Estimate)
	}
	if sum := MakeSummary(rs); sum.DifferenceRank == nil || !strings.Contains(sum.DifferenceRankReason, "estimate 2") {
		t.Errorf("summary: difference_rank_reason %q, want the count's reason", sum.DifferenceRankReason)
	}
}

// A species the refit counts in absolute absorbance raises the differences'
// count of independent reactions to at least k − 1: rank(D) ≤
// rank(D − 1d₀ᵀ) + 1, the subadditivity of rank (Horn & Johnson, Matrix
// Analysis, 2nd ed., 0.4.5, from memory). Reactions mode has no second
// count, and a count already consistent stays.
func TestPromotedSpeciesRaisesTheDifferencesCount(t *testing.T) {
	cases := []struct {
		mode       mcr.Mode
		rank, diff int
		want       int
	}{
		{mcr.Species, 3, 1, 2},
		{mcr.Species, 3, 2, 2},
		{mcr.Species, 4, 1, 3},
		{mcr.Reactions, 3, 1, 1},
		{mcr.Species, 3, 0, 0}, // nothing reacted: said by its own advice
	}
	for _, c := range cases {
		r := &Result{Mode: c.mode, Rank: &svd.RankReport{Estimate: c.rank}, DiffRank: &svd.RankReport{Estimate: c.diff}}
		raiseDiffRank(r, 3)
		if r.DiffRank.Estimate != c.want {
			t.Errorf("%v, rank %d, differences %d: differences now %d; want %d", c.mode, c.rank, c.diff, r.DiffRank.Estimate, c.want)
		}
		if said := len(r.Notes) > 0; said != (c.want != c.diff) {
			t.Errorf("%v, rank %d, differences %d: notes %q", c.mode, c.rank, c.diff, r.Notes)
		}
	}
}
