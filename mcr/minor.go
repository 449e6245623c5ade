package mcr

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"github.com/bandsolve/bandsolve/internal/pvalue"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Minor factors: a factor of the data just above the noise that is neither baseline nor
// outlier nor reference pattern may be a minor species, or a change of band shape (a band
// shift of 1–2 points as a cell settles or warms, a mixing transient). Its size alone cannot
// tell. The test asks what a species must do: become one more non-negative spectrum and
// profile, under the same constraints as the others, that lowers the fit significantly.
//
// The resolution with k components is refitted with k + 1, warm-started from the k-component
// solution plus the factor's time vector (its non-negative part) as the new profile, and
// with k from the same start and the same iteration budget, so a drop that is only further
// convergence does not count. The drop of the weighted χ² (the RSS ALS minimises) is judged
// in units of the noise variance σ̂² = RSS_{k+1}/(N − p_{k+1} − p_b), N the values with
// non-zero weight, p_{k+1} = (k+1)(n + m − k − 1) the parameters of a bilinear model of rank
// k + 1 (the count uniqueness ranges use too, docs/constraints.md), p_b the baseline
// coefficients. The extra-sum-of-squares F-test for nested models (Draper & Smith, Applied
// Regression Analysis, 3rd ed. 1998, §6) would compare the drop with Δp = n + m − 2k − 1
// times σ̂²; but the best rank-one term takes from white noise the largest eigenvalue of a
// Wishart matrix, about (√n + √m)² σ², nearly twice Δp σ² on a 40 × 200 matrix, and noise
// alone then passed that F-test at p = 10⁻⁶. The drop is therefore compared with the law of
// that eigenvalue (Tracy–Widom, Johnstone, Ann. Stat. 2001; see edgeSignificance), and F is
// reported beside it.
//
// A significant drop is not yet a species. The extra component is called one only when also
//   - its profile is not concentrated in a few spectra (≥ 80 % of its energy in at most
//     max(3, n/10) spectra with a time course that is not smooth): that is spectra unlike the
//     rest (a bubble, gas lines), the outlier test's criterion;
//   - its spectrum, less what the other components' spectra explain, is not mostly (≥ 80 %)
//     the derivative of those spectra: s(x − δ) ≈ s(x) − δ s′(x), so a band shift is fitted
//     by the unshifted and the shifted band, a second non-negative spectrum whose only news
//     is a derivative with lobes of both signs (the band-shift test of svd.ClassifyFactors,
//     applied to the refitted spectrum);
//   - it brings a band of its own, judged on where the fit drops, which no rotation of the
//     components changes (the refitted spectrum alone does: two starts on a real series
//     gave the same drop to seven digits and new spectra 15 % and 53 % outside the bands).
//     Outside the k-component spectra's bands (where none reaches a tenth of its maximum)
//     the drop must be significant (the same Tracy–Widom law on those channels), at least
//     a quarter of the whole drop, and reach there, per channel, at least half its largest
//     value anywhere. A change of band shape (broadening, hydrogen bonding of a carbonyl, a
//     temperature change) is fitted by one more non-negative spectrum as well and a
//     species hidden entirely under another's band cannot be told from it; only their
//     wings reach outside the bands. Drift spread thinly over a long axis can add up to a
//     share but has no peak;
//   - it does not vanish (its share of the fitted signal is above 10⁻⁶).

// MinorTest is the outcome of TestMinorFactor.
type MinorTest struct {
	ResidualSSWith, ResidualSSWithout float64 // weighted RSS with k + 1 and with k components
	// F = [(RSS_k − RSS_{k+1})/DF1] / [RSS_{k+1}/DF2], DF1 = n + m − 2k − 1 (the extra
	// component's parameters), DF2 = N − p_{k+1} − p_b; reported for reference.
	F, DF1, DF2 float64
	// NoiseEdge is what one more component takes from noise alone, in units of σ²
	// (largestNoiseEigen); the drop is judged against it.
	NoiseEdge    float64
	Significance float64 // probability that noise alone gives the drop (edgeSignificance)
	Significant  bool    // Significance < alpha
	// ShiftShare is the share of the smoothed new spectrum, less its projection on the
	// other spectra, that lies in the span of their derivatives (1 = a pure band shift).
	ShiftShare float64
	// Novel is ‖(I − P_S) s_new‖² / ‖s_new‖²: the part of the new spectrum the other
	// spectra do not explain.
	Novel float64
	// InBandShare is the share of that same news (the new spectrum less its projection on
	// the others) at points where another spectrum is at least a tenth of its maximum:
	// 1 = it only reshapes bands that are already there.
	InBandShare float64
	// OutBandDrop is the part of the drop at channels outside the k-component spectra's
	// bands (where none reaches a tenth of its maximum), in units of σ̂²; OutBandChannels
	// counts those channels (with weight), OutBandEdge is what one more component takes
	// from noise alone on them and OutBandSignificance the probability that noise gives
	// the drop there (the Tracy–Widom law as for the whole drop).
	OutBandDrop, OutBandEdge, OutBandSignificance float64
	OutBandChannels                               int
	// OutBandPeak is the largest drop per channel (5-point mean) outside the bands over
	// the largest anywhere: near 1 when what it explains peaks in a band of its own, small
	// when it peaks under the others' bands and only spreads thinly outside them.
	OutBandPeak float64
	// ChannelDrop is the drop at each channel in units of σ̂², InBand marks the channels
	// under the k-component spectra's bands.
	ChannelDrop []float64
	InBand      []bool
	// Spectra lists the rows holding most of the new profile when it is concentrated.
	Spectra []int
	// FitShare is ‖c_new s_newᵀ‖²_F / ‖C Sᵀ‖²_F of the refit (unweighted).
	FitShare float64
	// EarlyShare is the share of the new profile's energy in the first fifth of the
	// spectra; PeakRow the row of its maximum.
	EarlyShare float64
	PeakRow    int
	// EndLevel is the new profile's mean over the last tenth of the spectra in units
	// of its largest value: near 0 when it comes back (a transient), near 1 when what
	// changed stays (a step).
	EndLevel float64
	Species  bool
	Verdict  string // why, in words
	// Rule and Finding split Verdict for a report of several factors: Rule is the
	// reasoning of the outcome with the test's limits and the noise edges, which every
	// factor refitted from one fit shares, so that it can be said once for all with the
	// same outcome; Finding is what differs, this factor's own figures.
	Rule, Finding string
	reactions     bool // components are reactions (spectra of either sign)
	// col are the data's channel weights (nil: none) and freeRows the rows the
	// noise edge outside the bands is taken on, kept for OwnBandBeyond.
	col      []float64
	freeRows int
	Refit    *Result
}

// Limits of the verdict (see the package comment above).
const (
	minorConcentrated = 0.8
	minorShiftShare   = 0.8
	minorVanished     = 1e-6
	minorOutBand      = 0.25
	minorOutPeak      = 0.5
)

// TestMinorFactor refits fit (k components on d under opt) with one more component started
// from the time vector u (length n, either sign) and returns the verdict. opt must be the
// options of fit, with its baseline shapes when fit has a baseline; a hard model is not
// supported (the extra component has no place in it). maxIter bounds each refit (0 = 500).
func TestMinorFactor(d Data, fit *Result, opt Options, u []float64, alpha float64, maxIter int) (*MinorTest, error) {
	ts, errs := TestMinorFactors(d, fit, opt, [][]float64{u}, alpha, maxIter)
	return ts[0], errs[0]
}

// TestMinorFactors is TestMinorFactor for several time vectors, largest factor first. The
// refit with k components has the same start and options for all, so it runs once. A
// later refit with k + 1 stops as soon as it fits as well as an earlier one did, within
// what one more component takes from noise alone (NoiseEdge σ̂²): the refits of real series
// reach one and the same fit from every start (drops equal to 5–7 digits), and a start
// that crawls towards it (300 iterations where the others took 23–36) only turns the
// components inside it by then.
func TestMinorFactors(d Data, fit *Result, opt Options, us [][]float64, alpha float64, maxIter int) ([]*MinorTest, []error) {
	n, _ := d.Dims()
	_, k := fit.C.Dims()
	ts, errs := make([]*MinorTest, len(us)), make([]error, len(us))
	fail := func(err error) ([]*MinorTest, []error) {
		for i := range errs {
			errs[i] = err
		}
		return ts, errs
	}
	if err := minorUsable(d, fit, opt, alpha); err != nil {
		return fail(err)
	}
	if maxIter <= 0 {
		maxIter = 500
	}
	opt.Observe, opt.MaxIter = nil, maxIter
	// With baseline shapes, resolveWithBaseline starts their terms at zero; the
	// profiles step refits them at once, so only the components need a start.
	without, err := Resolve(d, mat.DenseCopyOf(fit.C), opt)
	if err != nil {
		return fail(fmt.Errorf("minor factor: refit with %d components: %w", k, err))
	}
	reached := 0.0 // the RSS a later refit may stop at (0: none yet)
	for i, u := range us {
		if len(u) != n {
			errs[i] = fmt.Errorf("minor factor: time vector has %d values, data %d rows", len(u), n)
			continue
		}
		o := extendOptions(opt, k, n)
		o.stopAt = reached
		with, err := Resolve(d, startWithFactor(fit, u), o)
		if err != nil {
			errs[i] = fmt.Errorf("minor factor: refit with %d components: %w", k+1, err)
			continue
		}
		ts[i] = judgeMinor(d, fit, without, with, opt, alpha)
		if t := ts[i]; t.DF2 >= 1 && with.Converged {
			if r := with.ResidualSS * (1 + t.NoiseEdge/t.DF2); reached == 0 || r < reached {
				reached = r
			}
		}
	}
	return ts, errs
}

// minorUsable says why fit cannot be tested with one more component (nil when it can).
func minorUsable(d Data, fit *Result, opt Options, alpha float64) error {
	n, m := d.Dims()
	_, k := fit.C.Dims()
	switch {
	case opt.HardModel != nil:
		return errors.New("minor factor: not tested under a hard model")
	case !(alpha > 0 && alpha < 1):
		return fmt.Errorf("minor factor: significance level %v out of (0, 1)", alpha)
	case k+1 > min(n, m):
		return fmt.Errorf("minor factor: %d components do not fit %d × %d data", k+1, n, m)
	}
	return nil
}

// judgeMinor compares the refits without (k components) and with (k + 1) the factor and
// returns the verdict.
func judgeMinor(d Data, fit, without, with *Result, opt Options, alpha float64) *MinorTest {
	_, k := fit.C.Dims()
	t := &MinorTest{ResidualSSWith: with.ResidualSS, ResidualSSWithout: math.Min(without.ResidualSS, fit.ResidualSS), Refit: with}
	t.reactions = opt.Mode == Reactions
	t.fTest(d, k, opt, alpha)
	if fit.ResidualSS < without.ResidualSS {
		without = fit
	}
	t.outOfBand(d, fit.S, without, with, opt, alpha)
	cNew, sNew := mat.Col(nil, k, with.C), mat.Col(nil, k, with.S)
	t.FitShare = componentShare(with.C, with.S, k)
	t.Novel, t.ShiftShare = shiftShare(sNew, with.S, k)
	t.InBandShare = inBandShare(sNew, with.S, k)
	t.Spectra, _ = concentratedRows(cNew)
	t.EarlyShare, t.PeakRow = earlyShare(cNew)
	t.EndLevel = endLevel(cNew, t.PeakRow)
	t.verdict(alpha)
	return t
}

// energySign is +1 or −1, the sign that carries most of u's energy (Σ u²
// over its positive values against its negative ones): the sign a
// direction from a decomposition, whose sign is arbitrary, takes as a
// profile.
func energySign(u []float64) float64 {
	var pos, neg float64
	for _, x := range u {
		if x > 0 {
			pos += x * x
		} else {
			neg += x * x
		}
	}
	if neg > pos {
		return -1
	}
	return 1
}

// startWithFactor returns [C | w]: w is u with the sign that makes its larger part
// positive, negative values set to zero, scaled to a tenth of C's largest value.
func startWithFactor(fit *Result, u []float64) *mat.Dense {
	n, k := fit.C.Dims()
	sign := energySign(u)
	w := make([]float64, n)
	wmax := 0.0
	for i, x := range u {
		w[i] = math.Max(sign*x, 0)
		wmax = math.Max(wmax, w[i])
	}
	cmax := mat.Max(fit.C)
	if !(cmax > 0) {
		cmax = 1
	}
	c0 := mat.NewDense(n, k+1, nil)
	c0.Slice(0, n, 0, k).(*mat.Dense).Copy(fit.C)
	for i := range w {
		if wmax > 0 {
			c0.Set(i, k, 0.1*cmax*w[i]/wmax)
		} else {
			c0.Set(i, k, 0.1*cmax)
		}
	}
	return c0
}

// extendOptions returns opt for k + 1 components: the new one has the mode's
// non-negativity, closure weight 1, no known spectrum or window of its own, and the zero
// rows every other component shares (the reference and pre-reaction rows of reactions
// mode, where no reaction has happened yet).
func extendOptions(opt Options, k, n int) Options {
	o := opt
	o.NonNegProfiles = append(append([]bool(nil), boolsOr(opt.NonNegProfiles, k, true)...), true)
	o.NonNegSpectra = append(append([]bool(nil), boolsOr(opt.NonNegSpectra, k, opt.Mode == Species)...), opt.Mode == Species)
	if opt.Closure {
		w := opt.ClosureWeights
		if w == nil {
			w = ones(k)
		}
		o.ClosureWeights = append(append([]float64(nil), w[:k]...), 1)
	}
	if opt.KnownSpectra != nil {
		o.KnownSpectra = append(append([][]float64(nil), opt.KnownSpectra...), make([][]float64, k+1-len(opt.KnownSpectra))...)
	}
	if opt.Unimodal != nil {
		o.Unimodal = append(append([]bool(nil), opt.Unimodal...), make([]bool, k+1-len(opt.Unimodal))...)
	}
	if opt.ZeroSpectra != nil {
		o.ZeroSpectra = append(append([][]bool(nil), opt.ZeroSpectra...), make([][]bool, k+1-len(opt.ZeroSpectra))...)
	}
	if opt.ZeroProfiles != nil {
		shared := make([]bool, n)
		for i := range shared {
			shared[i] = len(opt.ZeroProfiles) >= k
			for j := 0; j < k && shared[i]; j++ {
				shared[i] = opt.ZeroProfiles[j] != nil && opt.ZeroProfiles[j][i]
			}
		}
		zp := append([][]bool(nil), opt.ZeroProfiles...)
		zp = append(zp, make([][]bool, k-len(zp))...)
		o.ZeroProfiles = append(zp[:k], shared)
	}
	return o
}

// fTest fills F, its degrees of freedom and the significance of the drop (see the
// package comment).
func (t *MinorTest) fTest(d Data, k int, opt Options, alpha float64) {
	n, m := d.Dims()
	obs := float64(n * m)
	rows, cols := n, m
	if row, col := weightsOf(d); row != nil {
		rows, cols = countPositive(row), countPositive(col)
		obs = float64(rows * cols)
	}
	nb := 0
	if opt.Baseline != nil {
		_, nb = opt.Baseline.Dims()
	}
	pk1 := float64((k+1)*(n+m-k-1) + n*nb)
	t.DF1 = float64(n + m - 2*k - 1)
	t.DF2 = obs - pk1
	t.Significance = 1
	drop := t.ResidualSSWithout - t.ResidualSSWith
	switch {
	case t.DF1 < 1 || t.DF2 < 1 || !(drop > 0):
	case !(t.ResidualSSWith > 0):
		t.Significance = 0
	default:
		s2 := t.ResidualSSWith / t.DF2
		t.F = (drop / t.DF1) / s2
		t.NoiseEdge = largestNoiseEigen(rows-k-nb, cols-k)
		t.Significance = edgeSignificance(drop/s2, rows-k-nb, cols-k)
	}
	t.Significant = t.Significance < alpha
}

// largestNoiseEigen is the centre of the largest eigenvalue of WᵀW for a p × q matrix W of
// unit white noise, (√(p−½) + √(q−½))² (Johnstone, Ann. Stat. 2001, with the half-integer
// correction of his §1.3): what the best rank-one term takes from noise alone, in units of
// σ². For one bilinear component it is about (√n + √m)², larger than its n + m − 1
// parameters: the linear F-test's degrees of freedom understate what a bilinear component
// can fit in noise (three noise-only draws of TestMinorNoiseOnlyIsNotSignificant gave
// p = 10⁻⁶ to 0.004 with them).
func largestNoiseEigen(p, q int) float64 {
	if p < 1 || q < 1 {
		return 0
	}
	a, b := math.Sqrt(float64(p)-0.5), math.Sqrt(float64(q)-0.5)
	return (a + b) * (a + b)
}

// edgeSignificance is the probability that noise alone lets one more component lower the
// RSS by x σ² or more: the upper tail of the Tracy–Widom law of order 1 for the largest
// eigenvalue of a white Wishart matrix, centred and scaled as in Johnstone (Ann. Stat.
// 2001): μ = (√(p−½)+√(q−½))², σ = (√(p−½)+√(q−½))(1/√(p−½)+1/√(q−½))^{1/3}. The law is
// taken as Chiani's shifted gamma, TW₁ ≈ Γ(k = 46.446, θ = 0.186054) − 9.84801 (J.
// Multivariate Anal. 2014; it matches TW₁'s mean −1.2065 and variance 1.6078). A component
// under non-negativity takes less from noise than the unconstrained one, so the test is
// conservative there.
func edgeSignificance(x float64, p, q int) float64 {
	if p < 1 || q < 1 {
		return 1
	}
	a, b := math.Sqrt(float64(p)-0.5), math.Sqrt(float64(q)-0.5)
	mu := (a + b) * (a + b)
	sd := (a + b) * math.Cbrt(1/a+1/b)
	pv := tracyWidomUpper((x - mu) / sd)
	if math.IsNaN(pv) {
		return 1
	}
	return math.Min(math.Max(pv, 0), 1)
}

// tracyWidomUpper is P(TW₁ > s) by Chiani's shifted gamma (see edgeSignificance), taken
// as the gamma's upper tail itself (the regularized upper incomplete gamma function), not
// as 1 − CDF, which is 0 for every tail below 1e-16.
func tracyWidomUpper(s float64) float64 {
	z := s + 9.84801
	if z <= 0 {
		return 1
	}
	return distuv.Gamma{Alpha: 46.446, Beta: 1 / 0.186054}.Survival(z)
}

func (t *MinorTest) verdict(alpha float64) {
	switch {
	case !t.Significant:
		t.Verdict = fmt.Sprintf("one more component lowers the weighted fit by %.3g σ², where noise alone would let it take about %.3g σ² (%s ≥ %g): not significantly, so not a species", t.Drop(), t.NoiseEdge, pvalue.Text(t.Significance), alpha)
		t.Rule = fmt.Sprintf("noise alone would let one more component take about %.3g σ² from the weighted fit; a drop with p ≥ %g is not significant, so not a species", t.NoiseEdge, alpha)
		t.Finding = fmt.Sprintf("it lowers the weighted fit by %.3g σ² (%s)", t.Drop(), pvalue.Text(t.Significance))
	case t.FitShare < minorVanished:
		t.Verdict = "the extra component vanishes in the refit: not a species"
		t.Rule = "an extra component that vanishes in the refit is not a species"
		t.Finding = "the extra component vanishes in the refit"
	case len(t.Spectra) > 0:
		t.Verdict = fmt.Sprintf("its profile lives in %d spectrum(s): spectra unlike the rest, not a species", len(t.Spectra))
		t.Rule = "a profile that lives in a few spectra marks spectra unlike the rest, not a species"
		t.Finding = fmt.Sprintf("its profile lives in %d spectrum(s)", len(t.Spectra))
	case t.ShiftShare >= minorShiftShare:
		t.Verdict = fmt.Sprintf("it lowers the fit significantly (%s), but %.0f %% of what its spectrum adds to the others is their derivative: a band shift or change of band shape, which a species cannot be (it needs lobes of both signs), so not a species", pvalue.Text(t.Significance), 100*t.ShiftShare)
		t.Rule = fmt.Sprintf("a component that lowers the fit significantly but adds to the others' spectra mostly (≥ %.0f %%) their derivative is a band shift or change of band shape, which a species cannot be (it needs lobes of both signs), so not a species", 100*minorShiftShare)
		t.Finding = fmt.Sprintf("it lowers the fit by %.3g σ² (%s), and %.0f %% of what its spectrum adds to the others is their derivative", t.Drop(), pvalue.Text(t.Significance), 100*t.ShiftShare)
	case !t.ownBand(alpha):
		t.Verdict = fmt.Sprintf("it lowers the fit significantly (%s), but not with a band of its own: %s; a change of those bands' shape (a shift, broadening, hydrogen bonding) that no resolution can tell from a species hidden there, so not counted", pvalue.Text(t.Significance), t.ownBandWords())
		t.Rule = fmt.Sprintf("a component that lowers the fit significantly is a species only with a band of its own: %s; without one it is a change of those bands' shape (a shift, broadening, hydrogen bonding) that no resolution can tell from a species hidden there, so not counted", t.ownBandRule(alpha))
		t.Finding = fmt.Sprintf("it lowers the fit by %.3g σ² (%s); %s", t.Drop(), pvalue.Text(t.Significance), t.ownBandFigures())
	default:
		t.Species = true
		t.Verdict = fmt.Sprintf("%s the fit by %.3g σ² where noise alone would give about %.3g σ² (%s, below %g), with a band of its own (%s), and %.0f %% of what its spectrum adds is not a band shift: a species by this test", t.what(), t.Drop(), t.NoiseEdge, pvalue.Text(t.Significance), alpha, t.ownBandWords(), 100*(1-t.ShiftShare))
		t.Rule = fmt.Sprintf("%s the fit by more than noise alone would give (about %.3g σ², p < %g), with a band of its own (%s), and less than %.0f %% of it a band shift: a species by this test", t.what(), t.NoiseEdge, alpha, t.ownBandRule(alpha), 100*minorShiftShare)
		t.Finding = fmt.Sprintf("it lowers the fit by %.3g σ² (%s); %s; %.0f %% of what its spectrum adds is not a band shift", t.Drop(), pvalue.Text(t.Significance), t.ownBandFigures(), 100*(1-t.ShiftShare))
	}
}

// what names the extra component for the verdict.
func (t *MinorTest) what() string {
	if t.reactions {
		return "one more reaction (a non-negative extent) that lowers"
	}
	return "a non-negative spectrum and profile that lower"
}

// Drop is RSS_k − RSS_{k+1} in units of the noise variance RSS_{k+1}/DF2.
func (t *MinorTest) Drop() float64 {
	if !(t.ResidualSSWith > 0) || t.DF2 < 1 {
		return 0
	}
	return (t.ResidualSSWithout - t.ResidualSSWith) / (t.ResidualSSWith / t.DF2)
}

func countPositive(w []float64) int {
	c := 0
	for _, x := range w {
		if x > 0 {
			c++
		}
	}
	return c
}

// componentShare is ‖c_j s_jᵀ‖²_F / ‖C Sᵀ‖²_F = ‖c_j‖²‖s_j‖² / tr(CᵀC SᵀS).
func componentShare(c, s *mat.Dense, j int) float64 {
	tot := traceProd(gram(c), gram(s))
	if !(tot > 0) {
		return 0
	}
	cn, sn := mat.Norm(c.ColView(j), 2), mat.Norm(s.ColView(j), 2)
	return cn * cn * sn * sn / tot
}

// shiftShare returns the share of s_new (5-point smoothed) outside the span of the other
// spectra (columns ≠ j of s), and of that remainder the share in the span of the other
// spectra's central differences, themselves less their projection on the spectra.
func shiftShare(sNew []float64, s *mat.Dense, j int) (novel, shift float64) {
	m, k := s.Dims()
	if m < 5 || k < 2 {
		return 1, 0
	}
	v := smooth5(sNew)
	base := mat.NewDense(m, k-1, nil)
	der := mat.NewDense(m, k-1, nil)
	c := 0
	for a := 0; a < k; a++ {
		if a == j {
			continue
		}
		col := mat.Col(nil, a, s)
		base.SetCol(c, col)
		for x := 0; x < m; x++ {
			der.Set(x, c, col[min(x+1, m-1)]-col[max(x-1, 0)])
		}
		c++
	}
	qs := orthonormalColumns(base)
	r := removeSpan(v, qs)
	vv, rr := dot(v, v), dot(r, r)
	if !(vv > 0) {
		return 0, 0
	}
	novel = rr / vv
	if !(rr > 0) {
		return novel, 0
	}
	for a := 0; a < k-1; a++ {
		der.SetCol(a, removeSpan(mat.Col(nil, a, der), qs))
	}
	qd := orthonormalColumns(der)
	if qd == nil {
		return novel, 0
	}
	rest := removeSpan(r, qd)
	return novel, 1 - dot(rest, rest)/rr
}

// inBandShare returns the share of ‖r‖² at the points where some other spectrum (column
// ≠ j of s) reaches a tenth of its own maximum, r = smoothed s_new less its projection on
// the other spectra.
func inBandShare(sNew []float64, s *mat.Dense, j int) float64 {
	m, k := s.Dims()
	if k < 2 {
		return 0
	}
	base := mat.NewDense(m, k-1, nil)
	in := make([]bool, m)
	c := 0
	for a := 0; a < k; a++ {
		if a == j {
			continue
		}
		col := mat.Col(nil, a, s)
		base.SetCol(c, col)
		c++
		top := 0.0
		for _, v := range col {
			top = math.Max(top, math.Abs(v))
		}
		for x, v := range col {
			in[x] = in[x] || top > 0 && math.Abs(v) >= 0.1*top
		}
	}
	r := removeSpan(smooth5(sNew), orthonormalColumns(base))
	var tot, inside float64
	for x, v := range r {
		tot += v * v
		if in[x] {
			inside += v * v
		}
	}
	if !(tot > 0) {
		return 0
	}
	return inside / tot
}

// removeSpan returns (I − Q Qᵀ) v for Q with orthonormal columns (nil = v).
func removeSpan(v []float64, q *mat.Dense) []float64 {
	out := append([]float64(nil), v...)
	if q == nil {
		return out
	}
	_, k := q.Dims()
	for a := 0; a < k; a++ {
		col := mat.Col(nil, a, q)
		p := dot(col, v)
		for x := range out {
			out[x] -= p * col[x]
		}
	}
	return out
}

// smooth5 is a 5-point moving average: the noise on a refitted minor spectrum would
// otherwise hide its shape.
func smooth5(v []float64) []float64 {
	out := make([]float64, len(v))
	for j := range v {
		s, c := 0.0, 0
		for i := max(j-2, 0); i <= min(j+2, len(v)-1); i++ {
			s += v[i]
			c++
		}
		out[j] = s / float64(c)
	}
	return out
}

// concentratedRows reports the rows holding 80 % of c's energy when they are at most
// max(3, n/10) and c is not smooth in time (lag-1 autocorrelation below 0.5), the outlier
// criterion of svd.ClassifyFactors.
func concentratedRows(c []float64) ([]int, bool) {
	n := len(c)
	if n < 10 || lag1(c) >= 0.5 {
		return nil, false
	}
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return c[idx[a]]*c[idx[a]] > c[idx[b]]*c[idx[b]] })
	tot := dot(c, c)
	acc := 0.0
	for q := 0; q < max(3, n/10); q++ {
		acc += c[idx[q]] * c[idx[q]]
		if acc >= minorConcentrated*tot {
			rows := append([]int(nil), idx[:q+1]...)
			sort.Ints(rows)
			return rows, true
		}
	}
	return nil, false
}

// lag1 is the lag-1 autocorrelation about the mean.
func lag1(x []float64) float64 {
	mu := 0.0
	for _, v := range x {
		mu += v / float64(len(x))
	}
	var num, den float64
	for i, v := range x {
		den += (v - mu) * (v - mu)
		if i+1 < len(x) {
			num += (v - mu) * (x[i+1] - mu)
		}
	}
	if !(den > 0) {
		return 0
	}
	return num / den
}

// endLevel is the mean of c over its last tenth of rows (at least one) over c[peak],
// its largest value; 0 when that is not positive.
func endLevel(c []float64, peak int) float64 {
	n := len(c)
	if n == 0 || peak < 0 || peak >= n || !(c[peak] > 0) {
		return 0
	}
	last := max(1, n/10)
	sum := 0.0
	for _, v := range c[n-last:] {
		sum += v
	}
	return sum / float64(last) / c[peak]
}

// earlyShare returns the share of c's energy in the first fifth of its rows and the row
// of its largest value.
func earlyShare(c []float64) (float64, int) {
	n := len(c)
	tot, early, peak := 0.0, 0.0, 0
	for i, v := range c {
		tot += v * v
		if i < max(1, n/5) {
			early += v * v
		}
		if v > c[peak] {
			peak = i
		}
	}
	if !(tot > 0) {
		return 0, peak
	}
	return early / tot, peak
}
