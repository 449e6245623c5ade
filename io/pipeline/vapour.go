package pipeline

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/spectra"
	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
)

// checkVapour looks for water-vapour lines that change during the run
// (svd.CheckVapour) in the matrix as assembled (less the --vapour spectra),
// before anything is resolved: a change of the beam path's humidity is
// not chemistry, and the user should hear of it whatever is counted.
func checkVapour(r *Result) {
	var v svd.VapourCheck
	if axis, _ := linesAxis(r); axis != nil {
		v = svd.CheckVapour(r.D, axis, experimentBlocks(r))
	} else {
		v.Why = "a wavelength of the axis is not positive, so it has no wavenumber"
	}
	r.Vapour = &v
	if note := vapourNotChecked(r, &v); note != "" {
		r.Notes = append(r.Notes, note)
	}
	for q, f := range r.Settings.Vapour {
		lo, hi := amountRange(r, q)
		r.Notes = append(r.Notes, fmt.Sprintf("--vapour %s subtracted from every spectrum, its amount fitted on its narrow lines: %.3g to %.3g times the file's spectrum (vapour_subtracted.csv)", f, lo, hi))
	}
}

// vapourNotChecked says on the terminal that the check was skipped when the
// axis holds some of the vapour's lines: a region cut through them leaves
// them in the data unexamined, and summary.json's not_checked_because alone
// is easily missed. "" when checked, or when the axis holds none of them
// (nothing there to check).
func vapourNotChecked(r *Result, v *svd.VapourCheck) string {
	if v.Checked || v.Why == "" {
		return ""
	}
	lo, hi, in := math.Inf(1), math.Inf(-1), 0
	axis, converted := linesAxis(r)
	for _, x := range axis {
		if svd.InVapourRange(x) {
			lo, hi, in = math.Min(lo, x), math.Max(hi, x), in+1
		}
	}
	if in == 0 {
		return ""
	}
	on := ""
	if converted {
		on = " (on the wavelength axis converted to wavenumber, 10⁷/λ)"
	}
	return fmt.Sprintf("water vapour not checked%s: %s; the axis holds %d point(s) at %.4g–%.4g cm⁻¹ where the vapour has lines (%s), so a change of the beam path's humidity there would go unnoticed: look for narrow lines in the residual map, or widen --region to cover a whole range", on, v.Why, in, lo, hi, vapourRangesAll())
}

// linesAxis is the run's axis as the rules written in cm⁻¹ read it
// (linesAxisOf).
func linesAxis(r *Result) (axis []float64, converted bool) {
	return linesAxisOf(r.AxisName, r.Axis)
}

// linesAxisOf is the axis in cm⁻¹ for the water-vapour check and the
// rules after it, whose ranges are in cm⁻¹: a wavelength axis converted
// (spectra.Wavenumbers; converted true, nil when a wavelength is not
// positive), a wavenumber axis as it is, and an axis of another name as it
// is too, read in cm⁻¹ as an infrared export without a unit most often is
// (common practice; the readers' guessAxisName).
func linesAxisOf(name string, axis []float64) (wn []float64, converted bool) {
	if name == "wavelength" {
		return spectra.Wavenumbers(name, axis), true
	}
	return axis, false
}

// convertedAxis is the run's axis in cm⁻¹ when it is in nm, else nil
// (the axis itself is in cm⁻¹, or of no known unit).
func convertedAxis(r *Result) []float64 {
	if wn, converted := linesAxis(r); converted {
		return wn
	}
	return nil
}

// vapourRangesText is the ranges the check examined, "3550–3950 cm⁻¹" or
// "3550–3950 and 1350–1950 cm⁻¹".
func vapourRangesText(v *svd.VapourCheck) string {
	rs := v.Ranges
	if len(rs) == 0 {
		rs = [][2]float64{{v.Lo, v.Hi}}
	}
	parts := make([]string, len(rs))
	for i, rg := range rs {
		parts[i] = fmt.Sprintf("%.4g–%.4g", rg[0], rg[1])
	}
	return strings.Join(parts, " and ") + " cm⁻¹"
}

// vapourRangesAll names the ranges where the vapour has the lines the
// check looks for (svd.InVapourRange).
func vapourRangesAll() string {
	return "3550–3950 and 1350–1950 cm⁻¹"
}

// amountRange is the smallest and largest amount of --vapour spectrum q.
func amountRange(r *Result, q int) (lo, hi float64) {
	col := mat.Col(nil, q, r.LineAmounts)
	return slices.Min(col), slices.Max(col)
}

// reportVapour adds, once the spectra are resolved, the warning that the
// vapour changed (vapourWarning) and, in a stack whose last counted
// component was measured to be the vapour's change, the advice correcting
// the count (vapourCountAdvice), from the measurement made after the
// factor analysis (r.vapourLists).
func reportVapour(r *Result) {
	v := r.Vapour
	if v == nil || !v.Detected {
		return
	}
	m := decideVapourStack(r)
	r.Warnings = append(r.Warnings, vapourWarning(r, m))
	if m != nil && m.counted {
		r.Advice = insertAfterRankAdvice(r.Advice, vapourCountAdvice(m, r.Components))
	}
}

// vapourWarning says that the vapour changed, by how much, which resolved
// spectra carry its lines and, in a stack, what it accounts for (m).
func vapourWarning(r *Result, m *vapourStack) string {
	v := r.Vapour
	var b strings.Builder
	after := ""
	if len(r.LineSpectra) > 0 {
		after = " (after the --vapour spectra were subtracted)"
	}
	fmt.Fprintf(&b, "water vapour%s: %d narrow lines at %s change together during the run (%.3g× what noise gives), the water-vapour lines of the beam path; the largest, at %.5g cm⁻¹, changes by %s",
		after, v.Lines, vapourRangesText(v), v.Ratio, v.LargestAt, vapourChanges(r))
	b.WriteString(": the humidity of the air or purge in the beam changed. ")
	switch {
	case len(v.Ranges) > 1:
		// Too weak to tell alone, the two ranges changing together tell it.
		fmt.Fprintf(&b, "Neither range alone showed enough lines (%d and %d); together they do. Those at %.4g–%.4g cm⁻¹ lie over the bands there", v.LinesPer[0], v.LinesPer[1], v.Ranges[1][0], v.Ranges[1][1])
	case v.Lo > 2000:
		b.WriteString("The same gas has lines at about 1300–2000 cm⁻¹, over the bands there")
	default:
		// Without the stretching range a gas of the sample with lines
		// there (nitric oxide near 1876 cm⁻¹, say) looks the same.
		b.WriteString("They lie over the bands there; the axis does not reach the vapour's stretching lines (3550–3950 cm⁻¹), which alone would tell them from a gas of the sample's own with lines in this range")
	}
	if carriers := vapourCarriers(r); carriers != "" {
		b.WriteString("; " + carriers)
	}
	if len(r.Experiments) > 1 {
		b.WriteString("; " + vapourStackText(m, r.Components))
	}
	b.WriteString(". Purge the spectrometer longer before starting, or give a water-vapour spectrum recorded at the same resolution to --vapour FILE, which subtracts it from every spectrum; vapour.csv gives the lines' height in every spectrum")
	return b.String()
}

// vapourLists are the singular values of a stack as its count saw them,
// before and after the vapour's course is projected out of the rows
// (vapourInStack), and the same for the differences' count
// (vapourInStackDifferences; nil when not measured). measureVapourLists
// makes them right after the factor analysis, on the matrix the count
// read, before the resolution changes it (baseline fitted, spectra set
// aside replaced).
type vapourLists struct {
	before, after, dBefore, dAfter []float64
}

// measureVapourLists measures r's stack (nil when it cannot be measured:
// one experiment, no change detected, reactions mode, or too large).
func measureVapourLists(r *Result) *vapourLists {
	before, after, ok := vapourInStack(r)
	if !ok {
		return nil
	}
	l := &vapourLists{before: before, after: after}
	l.dBefore, l.dAfter, _ = vapourInStackDifferences(r)
	return l
}

// vapourStack is what the vapour's course accounts for in a stack, for
// the final count k (and kd of the differences): counted (countedDiff)
// says the k-th (kd-th) value falls below 1.5 times the next one's before,
// so that component is the vapour's change.
type vapourStack struct {
	k, kd                          int
	before, after, dBefore, dAfter []float64
	counted, countedDiff           bool
}

// decideVapourStack reads r.vapourLists at the final counts (nil when not
// measured).
func decideVapourStack(r *Result) *vapourStack {
	l, k := r.vapourLists, r.Rank.Estimate
	if l == nil || k < 1 || len(l.before) <= k || len(l.after) <= k {
		return nil
	}
	m := &vapourStack{k: k, before: l.before, after: l.after, counted: l.after[k-1] < 1.5*l.before[k]}
	if !m.counted || r.DiffRank == nil {
		return m
	}
	if kd := r.DiffRank.Estimate; kd >= 1 && len(l.dBefore) > kd && len(l.dAfter) > kd {
		m.kd, m.dBefore, m.dAfter, m.countedDiff = kd, l.dBefore, l.dAfter, l.dAfter[kd-1] < 1.5*l.dBefore[kd]
	}
	return m
}

// vapourStackText says what the vapour's course accounts for in a stack:
// measured where it can be (m), else in general; components is the number
// resolved, which --components may have set below the count.
func vapourStackText(m *vapourStack, components int) string {
	general := "a change that differs between experiments is one more independent change in their stack and can be counted as a component that no experiment shows alone"
	if m == nil {
		return general
	}
	k := m.k
	drop := fmt.Sprintf("without the vapour's course (vapour.csv) the stack's singular values %d and %d (less the baseline, noise-weighted as counted) go from %.4g and %.4g to %.4g and %.4g", k, k+1, m.before[k-1], m.before[k], m.after[k-1], m.after[k])
	if !m.counted {
		return general + "; " + drop
	}
	way := fmt.Sprintf("without one, keep it as a component: --components %d leaves the change in the residual", k-1)
	if components < k {
		way = fmt.Sprintf("with %d component(s) resolved the change is left in the residual", components)
	}
	return drop + fmt.Sprintf(": the %s component counted in the stack is the vapour's change, which differs between the experiments, not chemistry (--vapour with a spectrum of it takes it out; %s)", ordinal(k), way)
}

// vapourCountAdvice corrects the count's advice when the stack's k-th
// component is the vapour's change (m.counted): the chemistry is one
// fewer, and the differences' count too where it was measured and falls
// the same way.
func vapourCountAdvice(m *vapourStack, components int) string {
	k, diff := m.k, ""
	if m.countedDiff {
		kd := m.kd
		diff = fmt.Sprintf(", and its differences %d, not %d (their singular value %d goes from %.4g to %.4g without the vapour's course, the %s was %.4g)", kd-1, kd, kd, m.dBefore[kd-1], m.dAfter[kd-1], ordinal(kd+1), m.dBefore[kd])
	}
	then := fmt.Sprintf("until then read component %d as the vapour's change mixed with the chemistry within its uniqueness range, not as chemistry (--components %d leaves the change in the residual)", k, k-1)
	if components < k {
		then = fmt.Sprintf("as it is, with %d component(s), the change is left in the residual", components)
	}
	return fmt.Sprintf("the count of %d includes the water vapour's change (the warning measures it): the chemistry of the stack has %d component(s)%s; resolve with --vapour and a vapour spectrum; %s", k, k-1, diff, then)
}

// insertAfterRankAdvice puts line right after the advice on the count
// (rankAdvicePrefix), which it corrects, else first.
func insertAfterRankAdvice(advice []string, line string) []string {
	at := 0
	for i, a := range advice {
		if strings.HasPrefix(a, rankAdvicePrefix) {
			at = i + 1
			break
		}
	}
	return slices.Insert(advice, at, line)
}

// ordinal is 1st, 2nd, 3rd, 4th, ….
func ordinal(k int) string {
	switch {
	case k%100 >= 11 && k%100 <= 13:
		return fmt.Sprintf("%dth", k)
	case k%10 == 1:
		return fmt.Sprintf("%dst", k)
	case k%10 == 2:
		return fmt.Sprintf("%dnd", k)
	case k%10 == 3:
		return fmt.Sprintf("%drd", k)
	}
	return fmt.Sprintf("%dth", k)
}

// vapourChanges is the change of the largest line, per experiment when
// there are several.
func vapourChanges(r *Result) string {
	v := r.Vapour
	const height = "its height less the smooth under it"
	if len(v.Change) == 1 {
		return fmt.Sprintf("%.2g absorbance (%s)", v.Change[0], height)
	}
	parts := make([]string, len(v.Change))
	for e, c := range v.Change {
		parts[e] = fmt.Sprintf("%.2g in experiment %d", c, e+1)
	}
	return strings.Join(parts, ", ") + " (absorbance; " + height + ")"
}

// vapourCarriers names the resolved spectra that hold the lines beyond
// their noise, with the height of the largest line in each against the
// spectrum's largest value.
func vapourCarriers(r *Result) string {
	if r.ALS == nil || r.ALS.S == nil {
		return ""
	}
	holders := vapourHolders(r)
	if len(holders) == 0 {
		return "no resolved spectrum holds them beyond its noise"
	}
	names, sizes := make([]string, len(holders)), make([]string, len(holders))
	for i, c := range holders {
		names[i], sizes[i] = c.name, c.size()
	}
	return fmt.Sprintf("the resolved %s %s them, their largest line %s", joinNames(names), holds(len(names)), strings.Join(sizes, ", "))
}

// vapourHolder is a resolved spectrum that holds the vapour's lines beyond
// its noise (z ≥ svd.VapourSignificant): the height of the largest line in
// it, and its own largest absolute value.
type vapourHolder struct {
	name            string
	height, largest float64
}

// size is the height of the largest line with its sign, as summary.json's
// line_height has it, and its share of the spectrum's largest value. The
// detected pattern's lines point up (absorption), so a negative height is
// the gas's lines taken off the spectrum, which is said.
func (c vapourHolder) size() string {
	down := ""
	if c.height < 0 {
		down = "pointing down, the gas's lines taken off; "
	}
	return fmt.Sprintf("%.2g (%s%.2g %% of its largest value)", c.height, down, 100*math.Abs(c.height)/c.largest)
}

// vapourHolders are the resolved spectra holding the lines, in component
// order (none without a resolution).
func vapourHolders(r *Result) []vapourHolder {
	if r.ALS == nil || r.ALS.S == nil {
		return nil
	}
	var out []vapourHolder
	for k, name := range r.Names {
		if h, z, big := vapourIn(r, k); z >= svd.VapourSignificant {
			out = append(out, vapourHolder{name, h, big})
		}
	}
	return out
}

// vapourIn measures the lines in resolved spectrum k: their height, its z
// and the spectrum's largest absolute value.
func vapourIn(r *Result, k int) (h, z, big float64) {
	m, _ := r.ALS.S.Dims()
	s := make([]float64, m)
	for j := range s {
		s[j] = r.ALS.S.At(j, k)
		big = math.Max(big, math.Abs(s[j]))
	}
	h, z = r.Vapour.LinesIn(s)
	return h, z, big
}

func joinNames(names []string) string {
	switch len(names) {
	case 1:
		return "spectrum " + names[0]
	case 2:
		return "spectra " + names[0] + " and " + names[1]
	}
	return "spectra " + strings.Join(names[:len(names)-1], ", ") + " and " + names[len(names)-1]
}

func holds(n int) string {
	if n == 1 {
		return "holds"
	}
	return "hold"
}

// vapourSummary is summary.json's water_vapour (nil when the axis was not
// checked).
func vapourSummary(r *Result) *output.VapourJSON {
	v := r.Vapour
	if v == nil {
		return nil
	}
	j := &output.VapourJSON{Checked: v.Checked, Why: v.Why, Range: []float64{v.Lo, v.Hi}}
	for q, f := range r.Settings.Vapour {
		lo, hi := amountRange(r, q)
		j.Subtracted = append(j.Subtracted, output.VapourSubtractedJSON{File: f, AmountMin: round(lo), AmountMax: round(hi)})
	}
	if !v.Checked {
		return j
	}
	ratio, lines := round(v.Ratio), v.Lines
	j.Detected, j.Ratio, j.Lines = v.Detected, &ratio, &lines
	for _, rg := range v.Ranges {
		j.Ranges = append(j.Ranges, []float64{rg[0], rg[1]})
	}
	j.LinesPer = v.LinesPer
	if !v.Detected {
		return j
	}
	j.LargestAt = round(v.LargestAt)
	if m := decideVapourStack(r); m != nil && m.counted {
		j.CountedComponent = m.k
		if m.countedDiff {
			j.CountedReaction = m.kd
		}
	}
	for _, c := range v.Change {
		j.Change = append(j.Change, round(c))
	}
	for _, c := range vapourHolders(r) {
		j.Carriers = append(j.Carriers, output.VapourCarrierJSON{Component: c.name, LineHeight: round(c.height)})
	}
	return j
}

// writeVapour writes vapour.csv when the lines changed: per spectrum, the
// height of the largest line (high-passed, absorbance).
func writeVapour(r *Result, st *output.Stage) error {
	v := r.Vapour
	if v == nil || !v.Detected {
		return nil
	}
	return st.Write("vapour.csv", perSpectrumCSV(r, []string{"line_height"}, func(i, _ int) float64 { return v.Height[i] }))
}

// perSpectrumCSV is a table of one row per spectrum: time in seconds
// (experiment first with several), then the columns named, cell (i, q)
// from value.
func perSpectrumCSV(r *Result, names []string, value func(i, q int) float64) []byte {
	multi := len(r.Experiments) > 1
	h := []string{"time"}
	if multi {
		h = []string{"experiment", "time"}
	}
	var w output.CSV
	w.Row(append(h, names...))
	for i, tm := range r.Times {
		if multi {
			w.Int(r.ExpOfRow[i] + 1)
		}
		w.Float(tm)
		for q := range names {
			w.Float(value(i, q))
		}
		w.End()
	}
	return w.Bytes()
}

// readLineSpectra reads the --vapour spectra onto the common channels (on
// the same axis, or interpolated with --resample, as a blank is).
func readLineSpectra(r *Result, first *spectra.Series, axis []float64, chans []int) error {
	s := r.Settings
	for _, f := range s.Vapour {
		sp, err := spectra.ReadSpectrum(s.Path(f))
		if err != nil {
			return readFault("vapour", err)
		}
		v, err := axisValues(r, sp, "vapour "+strconv.Quote(f), first, axis, chans)
		if err != nil {
			return err
		}
		r.LineSpectra = append(r.LineSpectra, v)
	}
	return nil
}

// vapourFault says what LineAmounts refused: a fault of the --vapour
// files themselves names them (it had named the --data file, source,
// whose axis they were put on), one of the data's axis names source.
func vapourFault(s *Settings, source string, err error) error {
	var le *svd.LineError
	if !errors.As(err, &le) {
		return fmt.Errorf("--vapour: %s: %w", source, err)
	}
	var files []string
	for _, k := range le.Lines {
		if k >= 1 && k <= len(s.Vapour) {
			files = append(files, s.Vapour[k-1])
		}
	}
	hint := "give the vapour's absorbance spectrum (humid less dry beam path), recorded at the data's resolution"
	if len(le.Lines) > 1 {
		hint = "leave out one of them"
	}
	return fmt.Errorf("--vapour %s: %s, on the channels of %s; %s", strings.Join(files, " and "), le.Msg, source, hint)
}

// subtractLineSpectra takes the --vapour spectra out of one experiment's
// assembled matrices, each row by the amounts fitted on its own lines
// (svd.LineAmounts). The fit is linear in the row, so the differences
// stay the absolute rows less the reference's, both compensated. The
// amounts of the rows D is made of are kept for vapour_subtracted.csv.
// axis is in cm⁻¹ (linesAxisOf), the unit of the fit's smooth.
func subtractLineSpectra(r *Result, as *spectra.Assembled, source string, axis []float64) error {
	if len(r.LineSpectra) == 0 {
		return nil
	}
	if axis == nil {
		return fmt.Errorf("--vapour: %s: a wavelength of the axis is not positive, so it has no wavenumber to fit the lines on", source)
	}
	kept := as.Difference
	if as.Absolute != nil {
		kept = as.Absolute
	}
	for _, d := range []*mat.Dense{as.Absolute, as.Difference} {
		if d == nil {
			continue
		}
		a, err := svd.LineAmounts(d, axis, r.LineSpectra)
		if err != nil {
			return vapourFault(r.Settings, source, err)
		}
		svd.SubtractLines(d, r.LineSpectra, a)
		if d == kept && r.LineAmounts == nil {
			r.LineAmounts = a
		} else if d == kept {
			r.LineAmounts = stack([]*mat.Dense{r.LineAmounts, a})
		}
	}
	return nil
}

// writeLineAmounts writes vapour_subtracted.csv with --vapour: per
// spectrum, the amount of each spectrum subtracted (1: as much as in its
// file), in the order given.
func writeLineAmounts(r *Result, st *output.Stage) error {
	if r.LineAmounts == nil {
		return nil
	}
	names := make([]string, len(r.LineSpectra))
	for q := range names {
		names[q] = fmt.Sprintf("amount_%d", q+1)
	}
	return st.Write("vapour_subtracted.csv", perSpectrumCSV(r, names, r.LineAmounts.At))
}

// vapourInStack measures, for a stack of experiments, what the vapour's
// course (its height in every spectrum, svd.VapourCheck.Height) accounts
// for: the singular values of the stack as the count sees it (less the
// baseline, with the noise weights) before and after that course is
// projected out of the rows. Within one experiment a vapour that drifts
// with the reaction shares the chemistry's course and taking it out would
// take chemistry too; across experiments whose vapour changed differently
// no combination of the species' profiles follows it (closure ties them in
// every experiment), so what the projection removes is the vapour. In
// reactions mode the extents are free and a combination of them can follow
// it, so nothing is claimed there. ok is false when not measured: one
// experiment, no detection, reactions mode, or a stack whose n² m product
// exceeds maxVapourWork.
func vapourInStack(r *Result) (before, after []float64, ok bool) {
	if r.Mode != mcr.Species || !stackMeasurable(r) {
		return nil, nil, false
	}
	return valuesWithout(countedMatrix(r.D, r.Axis, r.BaselineOrder, r.Weights), r.Vapour.Height, r.Weights)
}

// vapourInStackDifferences is vapourInStack for the differences the
// species-mode count also ranks: each experiment's rows less its
// reference (the mean of its reference rows), with the differences'
// weights; the course is the heights less the reference's, the check
// being linear in the spectrum. Not measured when a reference is a file.
func vapourInStackDifferences(r *Result) (before, after []float64, ok bool) {
	if r.Mode != mcr.Species || r.DiffRank == nil || r.DiffWeights == nil || !stackMeasurable(r) {
		return nil, nil, false
	}
	d := mat.DenseCopyOf(r.D)
	h := slices.Clone(r.Vapour.Height)
	for _, e := range r.Experiments {
		if len(e.RefRows) == 0 {
			return nil, nil, false
		}
		_, m := d.Dims()
		ref, href := make([]float64, m), 0.0
		for _, q := range e.RefRows {
			floats.Add(ref, r.D.RawRowView(e.FirstRow+q))
			href += h[e.FirstRow+q]
		}
		floats.Scale(1/float64(len(e.RefRows)), ref)
		href /= float64(len(e.RefRows))
		for i := e.FirstRow; i < e.FirstRow+e.Rows; i++ {
			floats.Sub(d.RawRowView(i), ref)
			h[i] -= href
		}
	}
	return valuesWithout(countedMatrix(d, r.Axis, r.BaselineOrder, r.DiffWeights), h, r.DiffWeights)
}

// stackMeasurable says vapourInStack can measure r: several experiments,
// a change detected, and n² m within maxVapourWork.
func stackMeasurable(r *Result) bool {
	v := r.Vapour
	if v == nil || !v.Detected || len(r.Experiments) < 2 {
		return false
	}
	n, m := r.D.Dims()
	return float64(n)*float64(n)*float64(m) <= maxVapourWork
}

// valuesWithout are the singular values of rows, and of rows with the
// course (weighted by the square roots of w's row weights) projected out
// of them, from their Gram matrix.
func valuesWithout(rows *mat.Dense, course []float64, w *spectra.Weights) (before, after []float64, ok bool) {
	n, _ := rows.Dims()
	g := make([]float64, n)
	for i := range g {
		g[i] = course[i]
		if w != nil {
			g[i] *= math.Sqrt(w.Row[i])
		}
	}
	nrm := floats.Norm(g, 2)
	if !(nrm > 0) {
		return nil, nil, false
	}
	floats.Scale(1/nrm, g)
	gram := mat.NewSymDense(n, nil)
	gram.SymOuterK(1, rows)
	before = symValues(gram)
	// (I − ĝĝᵀ) G (I − ĝĝᵀ) = G − ĝwᵀ − wĝᵀ + (ĝᵀGĝ) ĝĝᵀ, w = G ĝ.
	gw := mat.NewVecDense(n, nil)
	gv := mat.NewVecDense(n, g)
	gw.MulVec(gram, gv)
	c := mat.Dot(gv, gw)
	proj := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			proj.SetSym(i, j, gram.At(i, j)-g[i]*gw.AtVec(j)-gw.AtVec(i)*g[j]+c*g[i]*g[j])
		}
	}
	return before, symValues(proj), true
}

// maxVapourWork bounds vapourInStack's Gram matrix (n² m products, about
// 0.1 s).
const maxVapourWork = 2e8

// countedMatrix is src as the count reads it: rows and columns scaled by
// the square roots of the noise weights w (nil: unweighted), then the
// baseline polynomials up to order (−1: none) projected out in that
// metric (svd.PolyBasis, as chemicalRank does).
func countedMatrix(src *mat.Dense, axis []float64, order int, w *spectra.Weights) *mat.Dense {
	d := mat.DenseCopyOf(src)
	n, _ := d.Dims()
	var col []float64
	if w != nil {
		col = w.Col
		for i := 0; i < n; i++ {
			row := d.RawRowView(i)
			a := math.Sqrt(w.Row[i])
			for j := range row {
				row[j] *= a * math.Sqrt(w.Col[j])
			}
		}
	}
	if order < 0 {
		return d
	}
	if q := svd.PolyBasis(axis, order, col); q != nil {
		return projectOutShapes(d, q)
	}
	return d
}

// symValues are the square roots of the eigenvalues of g, descending.
func symValues(g *mat.SymDense) []float64 {
	var eig mat.EigenSym
	if !eig.Factorize(g, false) {
		return nil
	}
	vals := eig.Values(nil)
	slices.Reverse(vals)
	for i, x := range vals {
		vals[i] = math.Sqrt(math.Max(x, 0))
	}
	return vals
}
