package pipeline

import (
	"fmt"
	"io"
	"slices"
	"strconv"
	"strings"

	"github.com/bandsolve/bandsolve/internal/pvalue"
	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// Wiring of the refit test of minor factors (mcr.TestMinorFactor, docs/rank.md): a
// factor that the size test set aside as minor or as a band shift is refitted as one more
// component under the same constraints and baseline; when the refit says it is a
// species, the count goes up by one and the resolution is run again with it
// (--components still overrides, and then nothing is tested).

// maxMinorTests bounds the refits: the largest candidates first. Each costs two ALS
// runs from a converged start; real series show a dozen factors just above the noise
// whose size falls fast.
const maxMinorTests = 3

// minorRefitIter bounds each refit's iterations (from a converged start).
const minorRefitIter = 300

// minorLowerIter bounds the ALS that holds a minor species' spectrum at its lower edge:
// with the lowering ALS is no descent method and stirs within the noise once the
// lowering has done its work, in the first tens of iterations (transient test case:
// cosine to the truth 0.9964 after 30 and 100 iterations, 0.9958 after 1000).
const minorLowerIter = 50

// MinorVerdict is the refit test of one minor factor.
type MinorVerdict struct {
	Factor int // 1-based factor of the decomposition
	Test   *mcr.MinorTest
	Err    error // the refit failed (no verdict)
}

// minorState carries what a second resolution with one more component needs: the data
// as it was before the first. Before the refit's verdict the first changes only the rows
// it sets aside (filled with its fit, imputeRows); it subtracts the baseline after the
// verdict (withoutBaseline), when no second resolution follows. So the rows it fills, as
// they were, put the data back: m values a row instead of a copy of all n × m
// (TestMinorPromotionRestoresData).
type minorState struct {
	rows     []keptRow
	setAside int
}

// keptRow is one row of the data as it was before the first resolution changed it.
type keptRow struct {
	i    int
	vals []float64
}

// keep records the rows about to be filled that are not recorded yet: the first record
// of a row is the one from before the resolution.
func (st *minorState) keep(d *mat.Dense, rows []SetAside) {
	if st == nil {
		return
	}
	_, m := d.Dims()
	for _, sa := range rows {
		if !slices.ContainsFunc(st.rows, func(k keptRow) bool { return k.i == sa.Row }) {
			st.rows = append(st.rows, keptRow{i: sa.Row, vals: slices.Clone(d.RawRowView(sa.Row)[:m])})
		}
	}
}

// restore writes the recorded rows back into d.
func (st *minorState) restore(d *mat.Dense) {
	for _, k := range st.rows {
		d.SetRow(k.i, k.vals)
	}
}

// minorCandidates are the factors the refit tests: minor and band-shift factors with a
// time vector, largest first, at most maxMinorTests; none when --components is given, a
// hard model is asked for, or the test has run already.
func minorCandidates(r *Result) []svd.NuisanceFactor {
	if r.Chemical == nil || r.Settings.Components != "auto" || r.MinorTested || (r.Settings.Model != "" && r.Settings.HardModel) {
		return nil
	}
	var out []svd.NuisanceFactor
	for _, nf := range r.Chemical.Nuisance {
		if (nf.Kind == svd.NuisanceMinor || nf.Kind == svd.NuisanceBandShift) && len(nf.Time) == len(r.Times) && len(out) < maxMinorTests {
			out = append(out, nf)
		}
	}
	return out
}

// saveForMinor starts the record of what the first resolution changes when there is
// something to test (nil otherwise).
func saveForMinor(r *Result) *minorState {
	if len(minorCandidates(r)) == 0 {
		return nil
	}
	return &minorState{setAside: len(r.SetAside)}
}

// testMinor refits res (on data, under opt with the baseline shapes) with each candidate
// as one more component and records the verdicts in r.MinorTests.
func testMinor(r *Result, data mcr.Data, res *mcr.Result, opt mcr.Options, log io.Writer) {
	cands := minorCandidates(r)
	if len(cands) == 0 {
		return
	}
	r.MinorTested = true
	fmt.Fprintf(log, "testing %d minor factor(s) as one more component\n", len(cands))
	us := make([][]float64, len(cands))
	for i, nf := range cands {
		us[i] = nf.Time
	}
	mts, errs := mcr.TestMinorFactors(data, res, opt, us, r.Settings.Alpha, minorRefitIter)
	for i, nf := range cands {
		if errs[i] == nil {
			vapourRefit(r, mts[i])
		}
		r.MinorTests = append(r.MinorTests, MinorVerdict{Factor: nf.Factor, Test: mts[i], Err: errs[i]})
	}
}

// vapourRefitLines is the share of the refit's extra spectrum's narrow
// lines (high-passed, noise-weighted, in the ranges the vapour check
// examined) that must be the vapour's pattern for the extra component to
// be the vapour's change (vapourRefit). A species with a sharp band of its
// own there has its own lobes after the high-pass, not the forest's
// pattern; the vapour's factor in TestVapourFactorNotASpecies gives 0.58
// (another draw of such a series 0.51), the noisy copies of the real
// urethane series 0.90.
const vapourRefitLines = 0.25

// vapourRefit turns a species verdict into a finding of the water vapour
// when the vapour check found changing lines (svd.CheckVapour) and the
// refit's extra component is their change: its spectrum's high-passed,
// noise-weighted part where the check read the lines is largely the lines'
// pattern (svd.VapourCheck.PatternShare), and with the channels where the
// vapour has lines set apart (svd.InVapourLines) what it explains has no
// band of its own left (mcr.MinorTest.OwnBandBeyond: the refit's own
// limits). The refit calls it a species because the lines are a band of
// its own, narrow and outside the others'; but a gas in the beam path is
// not chemistry, and counting it would resolve one more species that is a
// copy of the others with the lines on it. A species that changes with the
// vapour keeps its band outside the lines and stays a species.
func vapourRefit(r *Result, mt *mcr.MinorTest) {
	v := r.Vapour
	if v == nil || !v.Detected || mt == nil || !mt.Species || mt.Refit == nil {
		return
	}
	s, _ := extraComponent(mt.Refit)
	if len(s) != len(r.Axis) || len(mt.ChannelDrop) != len(r.Axis) || len(mt.InBand) != len(r.Axis) {
		return
	}
	share := v.PatternShare(s)
	wn, _ := linesAxis(r) // not nil: the check ran on it
	lines := make([]bool, len(r.Axis))
	for j, x := range wn {
		lines[j] = svd.InVapourLines(x) || svd.InCarbonDioxideLines(x)
	}
	beyond := mt.OwnBandBeyond(lines, r.Settings.Alpha)
	if share < vapourRefitLines || beyond.Own {
		return
	}
	ranges := fmt.Sprintf("%.4g–%.4g cm⁻¹", v.Lo, v.Hi) // where the pattern is read
	mt.Species = false
	mt.Finding = fmt.Sprintf("%.0f %% of its spectrum's narrow lines in %s (high-passed, noise-weighted) is the pattern of the water-vapour lines found changing, and outside the other spectra's bands and the vapour's lines (%s) it has no band of its own: %.0f %% of the drop lies there (%s), and per channel it reaches there %.0f %% of its largest value", 100*share, ranges, vapourLinesText, 100*beyond.Share, pvalue.Text(beyond.Significance), 100*beyond.Peak)
	mt.Rule = fmt.Sprintf("a component whose spectrum's narrow lines are largely (≥ %.0f %%) the pattern of the water-vapour lines found changing, and which has no band of its own once the channels where the vapour has lines are set apart as well (the refit's limits there), is the change of the vapour in the beam path, not a species, though the refit alone would count it (the lines are a band of its own)", 100*vapourRefitLines)
	mt.Verdict = fmt.Sprintf("%s; but %s: it is the change of the water vapour in the beam path (see its warning), not a species", mt.Verdict, mt.Finding)
}

// vapourLinesText names where svd.InVapourLines says the vapour has lines,
// and svd.InCarbonDioxideLines the air's CO₂.
const vapourLinesText = "1300–2000 and 3450–4000 cm⁻¹, and CO₂'s, 630–710 and 2290–2400 cm⁻¹"

// promoteMinor counts the first (largest) minor factor the refit called a species: the rank and
// the count go up by one, the factor leaves the nuisance list, and r is put back as it
// was before the resolution so that it can run again with one more component. It
// reports whether it did.
func promoteMinor(r *Result, st *minorState) bool {
	if st == nil {
		return false
	}
	for _, v := range r.MinorTests {
		if v.Test == nil || !v.Test.Species {
			continue
		}
		for i, nf := range r.Chemical.Nuisance {
			if nf.Factor == v.Factor {
				r.MinorSpecies = append(r.MinorSpecies, nf)
				r.Chemical.Nuisance = append(r.Chemical.Nuisance[:i:i], r.Chemical.Nuisance[i+1:]...)
				break
			}
		}
		r.Chemical.Estimate++
		r.Rank.Estimate++
		raiseDiffRank(r, v.Factor)
		recountAdvice(r)
		r.Components++
		st.restore(r.D)
		r.SetAside = r.SetAside[:st.setAside]
		restoreNoise(r)
		r.EFA, r.Compressed = nil, false
		what := "a species"
		if r.Mode == mcr.Reactions {
			what = "a reaction"
		}
		r.Notes = append(r.Notes, fmt.Sprintf("factor %d, first set aside as minor by its size, is counted as %s: %s; resolved again with %d components (--components N overrides)", v.Factor, what, v.Test.Verdict, r.Components))
		return true
	}
	return false
}

// raiseDiffRank keeps the count of independent reactions consistent with a
// species the refit counted: rank(D) ≤ rank(D − 1d₀ᵀ) + 1 (subtracting one
// row from every row changes the rank by at most one; the rank of a sum is
// at most the sum of the ranks), so absolute absorbance with k species has
// at least k − 1 independent reactions. The differences' count is made
// without the refit, which only the absolute count gets: what the refit
// counted there raises the differences' count too. The noisy copy of the
// real urethane series at catalyst 0.01 read "3 chemical component(s) and
// the differences 1: at least 3 species take part in 1 independent
// reaction", which no data can show.
func raiseDiffRank(r *Result, factor int) {
	if r.Mode != mcr.Species || r.DiffRank == nil || r.DiffRank.Estimate == 0 || r.DiffRank.Estimate >= r.Rank.Estimate-1 {
		return
	}
	was := r.DiffRank.Estimate
	r.DiffRank.Estimate = r.Rank.Estimate - 1
	r.Notes = append(r.Notes, fmt.Sprintf("the differences' count of independent reactions goes from %d to %d with factor %d counted as a species: k species in absolute absorbance need at least k − 1 independent reactions (rank(D) ≤ rank(D − 1d₀ᵀ) + 1), so a count of the differences without it is short", was, r.DiffRank.Estimate, factor))
}

// minorOf returns the refit verdict of a factor (nil when it was not tested).
func minorOf(r *Result, factor int) *MinorVerdict {
	for i := range r.MinorTests {
		if r.MinorTests[i].Factor == factor {
			return &r.MinorTests[i]
		}
	}
	return nil
}

// minorLooks says what the refitted component looks like: where its profile lives in
// time and how much of its spectrum is a band shift.
func minorLooks(r *Result, mt *mcr.MinorTest) string {
	return fmt.Sprintf("as one more component its profile is %s; of what its spectrum adds to the others, %.0f %% is their derivative (a band shift when large) and %.0f %% lies under their bands", minorShape(r, mt), 100*mt.ShiftShare, 100*mt.InBandShare)
}

// comesBack is the end level (mcr.MinorTest.EndLevel) at or below which a profile
// that rose has come back: a quarter of its largest. Above it the change lasts, and
// a profile concentrated early is a step (an addition, a dilution), not a transient.
const comesBack = 0.25

// minorShape says where the refitted component's profile lives in time. In a stack
// its largest value is placed within its experiment, whose times start again at 0 and
// whose end is not the stack's.
func minorShape(r *Result, mt *mcr.MinorTest) string {
	first, n, in := 0, len(r.Times), ""
	if e, ok := experimentOf(r, mt.PeakRow); ok {
		first, n, in = r.Experiments[e].FirstRow, r.Experiments[e].Rows, fmt.Sprintf(" of experiment %d", e+1)
	}
	peak := mt.PeakRow - first
	// In a stack the profile's last rows are the last experiment's: its end
	// says nothing of the others'.
	stays := mt.EndLevel > comesBack && in == ""
	switch {
	case mt.EarlyShare >= 0.5 && stays:
		return fmt.Sprintf("concentrated early (%.0f %% of its profile in the first fifth of the spectra) but still at %.0f %% of its largest at the end: it does not come back, so a lasting change (such as an addition or a step), not a transient", 100*mt.EarlyShare, 100*mt.EndLevel)
	case mt.EarlyShare >= 0.5:
		return fmt.Sprintf("concentrated early (%.0f %% of its profile in the first fifth of the spectra: a mixing or settling transient)", 100*mt.EarlyShare)
	case peak >= n-max(1, n/10) && in == "":
		return "growing to the end of the run (a slow product or drift)"
	case peak >= n-max(1, n/10):
		return "growing to the end" + in + ", where it is largest (a slow product or drift)"
	case peak > 0 && stays:
		return fmt.Sprintf("largest at t = %s s and still at %.0f %% of that at the end: it does not come back, so a lasting change, not a transient", output.Float(r.Times[mt.PeakRow]), 100*mt.EndLevel)
	case peak > 0:
		return fmt.Sprintf("rising then falling, largest at t = %s s%s (a transient)", output.Float(r.Times[mt.PeakRow]), strings.Replace(in, " of ", " in ", 1))
	case in != "" && first > 0:
		return "largest at the start" + in
	}
	return "spread over the run"
}

// experimentOf is the experiment of a row of a stack; false for a single experiment.
func experimentOf(r *Result, row int) (int, bool) {
	if len(r.Experiments) < 2 || row < 0 || row >= len(r.ExpOfRow) {
		return 0, false
	}
	return r.ExpOfRow[row], true
}

// minorRefitJSON is the refit verdict of a factor for summary.json (nil when untested).
func minorRefitJSON(r *Result, factor int) *output.MinorRefitJSON {
	v := minorOf(r, factor)
	if v == nil {
		return nil
	}
	if v.Err != nil || v.Test == nil {
		return &output.MinorRefitJSON{Verdict: "not tested: " + v.Err.Error()}
	}
	mt := v.Test
	j := &output.MinorRefitJSON{Species: mt.Species, DropNoiseVariances: round(mt.Drop()), NoiseEdge: round(mt.NoiseEdge),
		Significance: round(mt.Significance), F: round(mt.F), BandShiftPercent: round(100 * mt.ShiftShare),
		EarlyPercent: round(100 * mt.EarlyShare), InBandPercent: round(100 * mt.InBandShare), Looks: minorLooks(r, mt), Verdict: mt.Verdict}
	j.OutBandDrop, j.OutBandEdge, j.OutBandSignificance = round(mt.OutBandDrop), round(mt.OutBandEdge), round(mt.OutBandSignificance)
	j.OutBandDropPercent, j.OutBandChannels = round(100*mt.OutBandShare()), mt.OutBandChannels
	j.OutBandPeakPercent = round(100 * mt.OutBandPeak)
	if mt.PeakRow < len(r.Times) {
		j.PeakTimeS = round(r.Times[mt.PeakRow])
	}
	j.SameAsFactor, _, _, _ = sameRefit(r, factor)
	return j
}

// minorAdvice is the refit's sentence for a factor's advice line ("" when untested).
// When other factors' refits reached the same verdict, their common reasoning is said
// once (sharedMinorAdvice) and this line keeps only what differs.
func minorAdvice(r *Result, factor int) string {
	v := minorOf(r, factor)
	switch {
	case v == nil && r.MinorTested && refittable(r, factor):
		return fmt.Sprintf("; not refitted as one more component (only the %d largest minor factors are)", maxMinorTests)
	case v == nil:
		return ""
	case v.Err != nil || v.Test == nil:
		return fmt.Sprintf("; the refit with it as one more component failed (%v)", v.Err)
	}
	mt := v.Test
	if earlier, cs, cc, ok := sameRefit(r, factor); ok {
		return fmt.Sprintf("; refitted as one more component, it ends at the same extra component as factor %d's refit (spectra alike to a cosine of %.4f, profiles %.4f): one finding, not another; %s",
			earlier, cs, cc, mt.Finding)
	}
	if same := sameVerdict(r, factor); same != nil {
		return fmt.Sprintf("; refitted as one more component (the verdict shared by factors %s is above): the extra component's profile is %s; %.0f %% of what its spectrum adds to the others is their derivative and %.0f %% lies under their bands; %s",
			factorList(same), minorShape(r, mt), 100*mt.ShiftShare, 100*mt.InBandShare, mt.Finding)
	}
	return fmt.Sprintf("; refitted as one more component under the same constraints and baseline, %s; %s", minorLooks(r, mt), mt.Verdict)
}

// sameAlike is the cosine above which two refits' extra components, spectrum and profile
// both, are called the same: the refits of real series reach one fit from every start
// (mcr.TestMinorFactors), and the text should not present it as several findings.
const sameAlike = 0.99

// sameRefit finds the first factor refitted before this one whose refit ended at the same
// extra component (spectra and profiles alike beyond sameAlike), with the two cosines.
func sameRefit(r *Result, factor int) (earlier int, cosS, cosC float64, ok bool) {
	v := minorOf(r, factor)
	if v == nil || v.Test == nil || v.Test.Refit == nil {
		return 0, 0, 0, false
	}
	s, c := extraComponent(v.Test.Refit)
	for _, w := range r.MinorTests {
		if w.Factor == factor {
			break
		}
		if w.Test == nil || w.Test.Refit == nil {
			continue
		}
		ws, wc := extraComponent(w.Test.Refit)
		cs, cc := Cosine(s, ws), Cosine(c, wc)
		if len(s) == len(ws) && len(c) == len(wc) && cs >= sameAlike && cc >= sameAlike {
			return w.Factor, cs, cc, true
		}
	}
	return 0, 0, 0, false
}

// extraComponent is the spectrum and profile of a minor refit's last component, the one
// started from the factor (mcr.TestMinorFactors appends it).
func extraComponent(refit *mcr.Result) (spectrum, profile []float64) {
	_, k := refit.C.Dims()
	return mat.Col(nil, k-1, refit.S), mat.Col(nil, k-1, refit.C)
}

// sharedMinorAdvice is the advice line that says once the verdict a factor's refit shares
// with others, when factor is the first of them to be advised on (said records the
// verdicts said); nil otherwise.
func sharedMinorAdvice(r *Result, factor int, said map[string]bool) []string {
	same := sameVerdict(r, factor)
	if same == nil {
		return nil
	}
	rule := minorOf(r, factor).Test.Rule
	if said[rule] {
		return nil
	}
	said[rule] = true
	return []string{fmt.Sprintf("factors %s, each refitted as one more component under the same constraints and baseline, share one verdict: %s", factorList(same), rule)}
}

// sameVerdict lists, in order, the refitted factors whose verdict has the same reasoning
// (mcr.MinorTest.Rule) as factor's, factor included; nil when no other shares it.
func sameVerdict(r *Result, factor int) []int {
	v := minorOf(r, factor)
	if v == nil || v.Err != nil || v.Test == nil {
		return nil
	}
	var out []int
	for _, w := range r.MinorTests {
		if w.Err == nil && w.Test != nil && w.Test.Rule == v.Test.Rule {
			out = append(out, w.Factor)
		}
	}
	if len(out) < 2 {
		return nil
	}
	slices.Sort(out)
	return out
}

// factorList writes factor numbers as "3 and 5" or "3, 5 and 7".
func factorList(fs []int) string {
	var ss []string
	for _, f := range fs {
		ss = append(ss, strconv.Itoa(f))
	}
	if len(ss) < 2 {
		return strings.Join(ss, "")
	}
	return strings.Join(ss[:len(ss)-1], ", ") + " and " + ss[len(ss)-1]
}

// refittable reports whether a factor is of a kind the refit tests (minor or band shift).
func refittable(r *Result, factor int) bool {
	for _, nf := range r.Chemical.Nuisance {
		if nf.Factor == factor {
			return nf.Kind == svd.NuisanceMinor || nf.Kind == svd.NuisanceBandShift
		}
	}
	return false
}

// minorSpeciesSummary lists the minor factors counted as species for summary.json.
func minorSpeciesSummary(r *Result) []output.NuisanceJSON {
	var out []output.NuisanceJSON
	for _, nf := range r.MinorSpecies {
		out = append(out, output.NuisanceJSON{Factor: nf.Factor, Kind: "species", Looks: nf.Looks, SharePercent: round(nf.SharePercent), Refit: minorRefitJSON(r, nf.Factor)})
	}
	return out
}

// lowerMinor holds a counted minor species' spectrum at the lower edge of its feasible
// range (mcr.Options.LeastOthers: closure and non-negativity leave a small component
// free to carry the others' bands) and lets ALS settle from res for minorLowerIter
// iterations. The result is kept when it fits as well: worse by less than what one more
// component takes from noise alone (mcr.NoiseEdgeSS), so the data cannot tell the two
// apart. The iteration count and convergence reported stay those of res.
func lowerMinor(r *Result, data mcr.Data, res *mcr.Result, opt mcr.Options) *mcr.Result {
	if len(r.MinorSpecies) == 0 || r.Mode != mcr.Species || !opt.Closure {
		return res
	}
	_, k := res.C.Dims()
	j := ownBandComponent(r, res)
	opt.Observe, opt.MaxIter = nil, minorLowerIter
	opt.LeastOthers = make([]bool, k)
	opt.LeastOthers[j] = true
	again, err := mcr.Resolve(data, mat.DenseCopyOf(res.C), opt)
	tol := mcr.NoiseEdgeSS(data, res)
	if err != nil || again.ResidualSS > res.ResidualSS+tol {
		return res
	}
	r.Notes = append(r.Notes, fmt.Sprintf("the minor species' spectrum is taken with as little of the other spectra's bands as non-negativity allows (closure and non-negativity alone leave a component this small free to carry part of them at the same fit); the fit changes by %.3g of what one more component would take from noise", (again.ResidualSS-res.ResidualSS)/tol))
	again.Iterations, again.Converged, again.Warnings = res.Iterations, res.Converged, res.Warnings
	again.History, again.HistoryAt = res.History, res.HistoryAt
	return again
}

// ownBandComponent is the column whose spectrum has the largest share of its energy
// outside the bands of the resolution before the minor species was counted (the channels
// where the refit found its own band): the minor species. Smallest size does not find it
// when closure lets it merge with a major species (seen: two columns like B, one with
// 2 % of C's band).
func ownBandComponent(r *Result, res *mcr.Result) int {
	var in []bool
	if v := minorOf(r, r.MinorSpecies[0].Factor); v != nil && v.Test != nil {
		in = v.Test.InBand
	}
	m, k := res.S.Dims()
	best, share := 0, -1.0
	for j := 0; j < k; j++ {
		var out, all float64
		for x := 0; x < m; x++ {
			v := res.S.At(x, j)
			all += v * v
			if x < len(in) && !in[x] {
				out += v * v
			}
		}
		if all > 0 && out/all > share {
			best, share = j, out/all
		}
	}
	return best
}
