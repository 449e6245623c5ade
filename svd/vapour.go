package svd

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// Water vapour in the beam path (PRIMER §8). An FTIR's beam crosses room air
// or a purge gas; when its humidity changes between the background and a
// spectrum, or during the series, the spectra gain water-vapour lines: a
// forest of lines as narrow as the instrument's resolution, in the bending
// region (about 1300–2000 cm⁻¹, over the carbonyl and amide bands) and the
// stretching region (about 3450–4000 cm⁻¹). Their amount follows the air, not
// the chemistry, so a change of it is one more factor of the data; when it
// drifts in step with a reaction it is resolved as part of that reaction's
// spectrum, and when it changes differently in two experiments it adds a
// component to their stack that neither shows alone.
//
// CheckVapour looks for that change where condensed-phase bands are broad:
// 3550–3950 cm⁻¹, between the hydrogen-bonded O–H/N–H stretches and the
// upper end of the vapour's stretching lines (band positions common
// practice; water vapour's ν₁ and ν₃ centres near 3657 and 3756 cm⁻¹, from
// memory). When the axis does not reach there (a --region on the
// fingerprint, say) it looks at the bending lines, 1350–1950 cm⁻¹, where
// sharp condensed-phase bands can change too, and then asks for four times
// the lines (vapourRanges). When the axis covers both and the stretching
// range alone shows no change, both are examined together: the same gas
// changes both at once, so a change too weak to pass in either alone adds
// up (a line of the stretching range counts as four of the bending
// range's). Each spectrum there is high-passed along the axis: less its
// quadratic Savitzky–Golay smooth over about 8 cm⁻¹ (Savitzky & Golay,
// Anal. Chem. 1964), which keeps lines a few cm⁻¹ wide and takes out bands
// tens of cm⁻¹ wide. Neighbouring spectra are averaged into at most
// vapourBins rows (within each experiment, never across two), and each
// experiment's rows are centred: what is left is how the lines change.
// Every point is then divided by its noise (noiseWeights): a single beam's
// noise is constant in counts, so the absorbance noise grows where little
// light comes through, twentyfold across 3550–3950 cm⁻¹ where source and
// beamsplitter fade towards 4000 cm⁻¹; unweighted, the noisiest end sets
// the noise the lines are judged against and hides them where the light is
// good.
//
// A change is detected when two things hold:
//   - it is coherent in time: the largest singular value of the centred,
//     high-passed, noise-weighted rows is at least vapourRatio times that
//     of the differences of disjoint pairs of neighbouring rows, which hold
//     the same noise (its correlation along the axis included) but hardly
//     any slow change, each over the Marchenko–Pastur edge √r+√w of its
//     own r rows and w points (Geman, Ann. Probab. 1980): noise alone gives
//     a ratio near 1;
//   - it is a forest of lines: its pattern (the leading right singular
//     vector) has local maxima above 5 noise deviations (noiseOfPairs), at
//     least 15 in the stretching range or 60 in the bending range (both
//     together: lines/15 + lines/60 ≥ 1), where one changing
//     condensed-phase band gives three or four (its peak and the lobes the
//     high-pass leaves).
type VapourCheck struct {
	// Checked says the axis covers a range evenly and finely enough to
	// see lines (at most 2 axis units apart); Why says why not otherwise.
	Checked bool
	Why     string
	Lo, Hi  float64 // the first axis range examined (the nominal one when not checked)
	// Ranges are all the axis ranges examined together (Lo–Hi first), and
	// LinesPer the lines counted in each.
	Ranges   [][2]float64
	LinesPer []int
	// Ratio is the coherence ratio above (noise alone about 1) and Lines
	// the number of lines counted in the pattern, over all ranges.
	Ratio    float64
	Lines    int
	Detected bool
	// LargestAt is the axis value of the pattern's largest line.
	LargestAt float64
	// Height is, per spectrum (row of the matrix checked), the height of
	// the largest line of the pattern in that spectrum, high-passed, in
	// the matrix's units (absorbance): positive where the lines absorb
	// more than in the background (absorbance) or the reference
	// (differences). Computed only when Detected.
	Height []float64
	// Change is, per experiment, the largest minus the smallest Height:
	// how much the lines changed during it (only when Detected).
	Change []float64

	wins []vapourWin
	peak float64 // the pattern's largest line in absorbance, per unit of its weighted amount
}

// vapourWin is one range as examined: its columns [first, last) of the
// matrix and the smooth's half width; after the check, at its interior
// points (first+half … last−half−1), the noise of each high-passed point,
// the noise-weighted pattern (unit length over all the windows together),
// and the filter over [first, last) whose dot product with a row is the
// pattern's weighted least-squares amount in it.
type vapourWin struct {
	rg                  vapourRange
	first, last, half   int
	sigma, unit, filter []float64
}

const (
	vapourBins  = 64  // rows averaged down to at most this many
	vapourRatio = 3.0 // coherence ratio needed
	vapourWidth = 8.0 // axis units the smooth spans
	// lineFitWidth is LineAmounts' smooth: wider than the check's, which
	// keeps more of each line against the noise and a real spectrum's own
	// sharp features (docs/measurement.md section 9 gives the trial).
	lineFitWidth = 12.0
)

// vapourRange is a range CheckVapour may look in, with the lines it needs
// to see there.
type vapourRange struct {
	lo, hi float64
	lines  int
}

// vapourRanges are the ranges in the order tried: the stretching lines,
// then the bending lines (see CheckVapour). On the urethane series the
// bending range gives 152 lines at catalyst 0.01; eight narrow sample
// bands changing by up to 1 absorbance give 22 (TestVapourNotInSharpBands).
func vapourRanges() []vapourRange {
	return []vapourRange{{3550, 3950, 15}, {1350, 1950, 60}}
}

// VapourSignificant is the z of LinesIn from which a spectrum is said to
// carry the lines: 5 noise deviations, as for the lines counted.
const VapourSignificant = 5.0

// CheckVapour checks d (rows: spectra; columns: the axis, in cm⁻¹) for
// water-vapour lines that change (see VapourCheck). blocks are the first
// rows of the experiments stacked in d (nil or {0}: one experiment).
func CheckVapour(d *mat.Dense, axis []float64, blocks []int) VapourCheck {
	n, m := d.Dims()
	wins, last, why := pickVapourWindows(axis)
	if why != "" || len(axis) != m {
		if why == "" {
			why = fmt.Sprintf("the axis has %d values for %d columns", len(axis), m)
		}
		return VapourCheck{Lo: last.lo, Hi: last.hi, Why: why}
	}
	bounds := experimentBounds(blocks, n)
	// The first range alone, where sample bands are broad when it is the
	// stretching range; both together only when it shows nothing. Each
	// window's rows are made once: the joint check takes the first's again.
	per := []windowRows{weightedRows(d, &wins[0], bounds)}
	v := checkWindows(d, axis, wins[:1], per, bounds)
	if !v.Detected && v.Checked && len(wins) > 1 {
		for q := 1; q < len(wins); q++ {
			per = append(per, weightedRows(d, &wins[q], bounds))
		}
		v = checkWindows(d, axis, wins, per, bounds)
	}
	return v
}

// checkWindows is the check over the windows together, per holding each
// one's weighted rows (weightedRows).
func checkWindows(d *mat.Dense, axis []float64, wins []vapourWin, per []windowRows, bounds [][2]int) VapourCheck {
	v := VapourCheck{wins: slices.Clone(wins)}
	for _, w := range wins {
		lo, hi := math.Min(axis[w.first], axis[w.last-1]), math.Max(axis[w.first], axis[w.last-1])
		v.Ranges = append(v.Ranges, [2]float64{lo, hi})
	}
	v.Lo, v.Hi, v.Checked = v.Ranges[0][0], v.Ranges[0][1], true
	rows, deltas, used := joinWindows(per)
	if len(deltas) == 0 {
		v.Checked, v.Why = false, "fewer than two spectra in every experiment"
		return v
	}
	s1, u := leadingSingular(rows, true)
	sd, _ := leadingSingular(deltas, false)
	if sd == 0 || s1 == 0 {
		return v
	}
	// Each against the Marchenko–Pastur edge √r+√w of its own size (the
	// centring takes one row per experiment).
	width := float64(len(rows[0]))
	edge := func(r int) float64 { return math.Sqrt(float64(r)) + math.Sqrt(width) }
	v.Ratio = (s1 / edge(len(rows)-used)) / (sd / edge(len(deltas)))
	pattern := make([]float64, len(rows[0]))
	for i, row := range rows {
		for j, x := range row {
			pattern[j] += u[i] * x
		}
	}
	orientLines(pattern)
	level := 5 * noiseOfPairs(deltas)
	forest := v.countForest(pattern, level)
	v.Detected = v.Ratio >= vapourRatio && forest
	unit, scale := v.reportedPattern(pattern)
	v.setPattern(unit, axis, level/scale)
	if v.Detected {
		v.heights(d, bounds)
	}
	return v
}

// windowRows are one window's vapourRows and pair differences, every point
// divided by its noise, and the number of experiments used.
type windowRows struct {
	rows, deltas [][]float64
	used         int
}

// weightedRows are vapourRows of window w, each point divided by its noise
// (noiseWeights, kept in w); no rows when no experiment has two spectra.
func weightedRows(d *mat.Dense, w *vapourWin, bounds [][2]int) windowRows {
	r, dl, u := vapourRows(d, w.first, w.last, w.half, bounds)
	if len(dl) == 0 {
		return windowRows{}
	}
	w.sigma = noiseWeights(dl, w.half)
	for _, x := range append(slices.Clone(r), dl...) { // the rows themselves, in place
		for j := range x {
			x[j] /= w.sigma[j]
		}
	}
	return windowRows{r, dl, u}
}

// joinWindows puts the windows' rows side by side in new slices (per is
// left as it is, for a later joint check); none when a window has none.
func joinWindows(per []windowRows) (rows, deltas [][]float64, used int) {
	for _, p := range per {
		if len(p.deltas) == 0 {
			return nil, nil, 0
		}
	}
	join := func(pick func(windowRows) [][]float64) [][]float64 {
		out := make([][]float64, len(pick(per[0])))
		for i := range out {
			for _, p := range per {
				out[i] = append(out[i], pick(p)[i]...)
			}
		}
		return out
	}
	rows = join(func(p windowRows) [][]float64 { return p.rows })
	deltas = join(func(p windowRows) [][]float64 { return p.deltas })
	return rows, deltas, per[len(per)-1].used
}

// countForest counts the pattern's lines above level in every window
// (LinesPer, Lines) and says whether they make a forest: Σ lines/needed ≥ 1,
// in integers.
func (v *VapourCheck) countForest(pattern []float64, level float64) bool {
	need, score, at := 1, 0, 0
	for _, w := range v.wins {
		need *= w.rg.lines
	}
	for _, w := range v.wins {
		c := countLines(pattern[at:at+len(w.sigma)], level)
		v.LinesPer, v.Lines = append(v.LinesPer, c), v.Lines+c
		score += c * (need / w.rg.lines)
		at += len(w.sigma)
	}
	return score >= need
}

// reportedPattern is the pattern the heights and LinesIn measure, as a
// unit vector and its length: the whole one, or with several windows only
// the first's part. There sample bands are broad; in the bending range
// their sharp bands change too, often more than the lines, and share the
// leading vector (on TestVapourSeenInBothRanges' series at half the lines'
// amount its largest entry is a band of a species at 1598 cm⁻¹), so the
// lines' shape and course are read where they are alone, pointing up. It
// keeps only the first window in v.wins.
func (v *VapourCheck) reportedPattern(pattern []float64) (unit []float64, scale float64) {
	if len(v.wins) > 1 {
		pattern, v.wins = slices.Clone(pattern[:len(v.wins[0].sigma)]), v.wins[:1]
		orientLines(pattern) // the whole was turned by its bands too
	}
	for _, x := range pattern {
		scale += x * x
	}
	scale = math.Sqrt(scale)
	unit = make([]float64, len(pattern))
	for j, x := range pattern {
		unit[j] = x / scale
	}
	return unit, scale
}

// setPattern splits the unit noise-weighted pattern over the windows,
// finds its largest line in absorbance (the pattern times the noise) among
// the points measured to a tenth (above twice level, 10 noise deviations;
// else above level, the lines counted; else all) and makes the windows'
// filters. Without the level the noisiest points would win, where the
// pattern's noise is largest in absorbance; and the largest of many is
// picked where its noise happens to raise it, which overstates its height
// by about that noise (by half where a line barely passes the count:
// TestVapourWhereTheLightFades).
func (v *VapourCheck) setPattern(pattern, axis []float64, level float64) {
	big := slices.Max(pattern)
	if big > 2*level {
		level *= 2
	}
	at, top, some := 0, math.Inf(-1), big > level
	for q := range v.wins {
		w := &v.wins[q]
		w.unit = pattern[at : at+len(w.sigma)]
		at += len(w.sigma)
		p := make([]float64, len(w.unit))
		for j, x := range w.unit {
			if a := x * w.sigma[j]; a > top && (x > level || !some) {
				top, v.LargestAt = a, axis[w.first+w.half+j]
			}
			p[j] = x / w.sigma[j]
		}
		// The weighted least-squares amount of the unit pattern in a row's
		// high-pass h is Σ unit_j h_j / σ_j: the high-pass's adjoint applied
		// to unit/σ.
		w.filter = highPassAdjoint(p, w.half)
	}
	v.peak = top
}

// noiseWeights is the noise standard deviation of every column of the
// pair differences: the root of the running median, over 2·(2h)+1
// neighbouring columns (fewer at the ends), of their mean squares. The
// median along the axis steadies each estimate (a few dozen pairs give it
// ±15 %) and passes over the few columns where a fast change of the lines
// or of a band adds to the differences. A column without noise (constant
// placeholders) takes a thousandth of the median noise, so that nothing is
// divided by zero.
func noiseWeights(deltas [][]float64, h int) []float64 {
	k := len(deltas[0])
	ms := make([]float64, k)
	for _, r := range deltas {
		for j, x := range r {
			ms[j] += x * x / float64(len(deltas))
		}
	}
	q := 2 * h
	sigma := make([]float64, k)
	for j := range sigma {
		sigma[j] = math.Sqrt(median(ms[max(0, j-q):min(k, j+q+1)]))
	}
	floor := 1e-3 * median(sigma)
	if floor == 0 {
		floor = 1
	}
	for j := range sigma {
		sigma[j] = math.Max(sigma[j], floor)
	}
	return sigma
}

// median of x (the mean of the two middle values for an even count).
func median(x []float64) float64 {
	s := slices.Clone(x)
	slices.Sort(s)
	if len(s)%2 == 1 {
		return s[len(s)/2]
	}
	return 0.5 * (s[len(s)/2-1] + s[len(s)/2])
}

// pickVapourWindows are the vapourRanges the axis covers evenly and finely
// enough, in order, or why none is (the reasons of each, the last range
// returned).
func pickVapourWindows(axis []float64) (wins []vapourWin, last vapourRange, why string) {
	var whys []string
	for _, rg := range vapourRanges() {
		last = rg
		first, end, why := vapourWindow(axis, rg.lo, rg.hi)
		if why != "" {
			whys = append(whys, why)
			continue
		}
		spacing := math.Abs(axis[end-1]-axis[first]) / float64(end-1-first)
		wins = append(wins, vapourWin{rg: rg, first: first, last: end, half: max(2, int(math.Round(vapourWidth/2/spacing)))})
	}
	if len(wins) == 0 {
		return nil, last, strings.Join(whys, "; ")
	}
	return wins, last, ""
}

// vapourWindow is the columns [first, last) of the axis within lo–hi, or
// why it cannot be checked there: not covered in one evenly spaced run of
// values at most 2 apart, with room for the smooth and 20 points more.
func vapourWindow(axis []float64, lo, hi float64) (first, last int, why string) {
	first, last = -1, -1
	for j, x := range axis {
		if x >= lo && x <= hi {
			if first < 0 {
				first = j
			} else if last != j {
				return 0, 0, fmt.Sprintf("the axis is not one run of values within %g–%g", lo, hi)
			}
			last = j + 1
		}
	}
	if first < 0 || last-first < 2 {
		return 0, 0, fmt.Sprintf("the axis does not cover %g–%g", lo, hi)
	}
	// The line counts needed are for the whole range: most of it must be
	// there.
	if a, b := axis[first], axis[last-1]; math.Abs(b-a) < 0.75*(hi-lo) {
		return 0, 0, fmt.Sprintf("the axis covers only %.4g–%.4g of %g–%g", math.Min(a, b), math.Max(a, b), lo, hi)
	}
	step := (axis[last-1] - axis[first]) / float64(last-1-first)
	if math.Abs(step) > 2 {
		return 0, 0, fmt.Sprintf("axis values %.3g apart: too coarse to see lines", math.Abs(step))
	}
	for j := first + 1; j < last; j++ {
		if math.Abs(axis[j]-axis[j-1]-step) > 0.05*math.Abs(step) {
			return 0, 0, fmt.Sprintf("the axis is not evenly spaced within %g–%g", lo, hi)
		}
	}
	if half := max(2, int(math.Round(vapourWidth/2/math.Abs(step)))); last-first < 2*half+20 {
		return 0, 0, fmt.Sprintf("only %d axis values within %g–%g", last-first, lo, hi)
	}
	return first, last, ""
}

// experimentBounds turns first rows into [start, end) pairs (nil: one
// experiment of all n rows).
func experimentBounds(blocks []int, n int) [][2]int {
	if len(blocks) == 0 {
		return [][2]int{{0, n}}
	}
	out := make([][2]int, len(blocks))
	for e, b := range blocks {
		end := n
		if e+1 < len(blocks) {
			end = blocks[e+1]
		}
		out[e] = [2]int{b, end}
	}
	return out
}

// vapourRows averages each experiment's spectra over the window in runs
// of equal length (vapourBinsOf), high-passes the averages, centres them per experiment
// and returns them with the differences of disjoint neighbouring pairs
// (÷√2, so the noise is the rows' own) and the number of experiments
// used. An experiment of fewer than two spectra gives none.
func vapourRows(d *mat.Dense, first, last, half int, bounds [][2]int) (rows, deltas [][]float64, used int) {
	n, _ := d.Dims()
	width := last - first
	sm := savitzkyGolay2(half)
	for _, b := range bounds {
		ne := b[1] - b[0]
		if ne < 2 {
			continue
		}
		// Runs of size spectra, as many as fit: at most size−1 of the
		// experiment's last spectra are left out.
		size := (ne + vapourBinsOf(ne, n) - 1) / vapourBinsOf(ne, n)
		if ne/size < 2 { // a small experiment in a large stack: keep two rows
			size = ne / 2
		}
		bins := ne / size
		used++
		start := len(rows)
		mean := make([]float64, width-2*half)
		avg := make([]float64, width)
		for k := 0; k < bins; k++ {
			clear(avg)
			for i := b[0] + k*size; i < b[0]+(k+1)*size; i++ {
				row := d.RawRowView(i)[first:last]
				for j, x := range row {
					avg[j] += x
				}
			}
			hp := highPass(avg, sm, half)
			for j := range hp {
				hp[j] /= float64(size)
				mean[j] += hp[j] / float64(bins)
			}
			rows = append(rows, hp)
		}
		for _, r := range rows[start:] {
			for j := range r {
				r[j] -= mean[j]
			}
		}
		// Disjoint pairs: differences that share a row are correlated,
		// which would raise their largest singular value.
		for k := start + 1; k < len(rows); k += 2 {
			dl := make([]float64, len(mean))
			for j := range dl {
				dl[j] = (rows[k][j] - rows[k-1][j]) / math.Sqrt2
			}
			deltas = append(deltas, dl)
		}
	}
	return rows, deltas, used
}

// vapourBinsOf is the number of rows an experiment of ne of the n spectra
// is averaged down to: its share of vapourBins, at least 2.
func vapourBinsOf(ne, n int) int {
	return min(ne, max(2, int(math.Round(float64(vapourBins)*float64(ne)/float64(n)))))
}

// savitzkyGolay2 are the quadratic (and cubic) Savitzky–Golay smoothing
// weights over 2h+1 points, c_j = 3(3h²+3h−1−5j²)/((2h+3)(2h+1)(2h−1)),
// j = −h…h (Savitzky & Golay 1964; the closed form of their table).
func savitzkyGolay2(h int) []float64 {
	c := make([]float64, 2*h+1)
	hf := float64(h)
	den := (2*hf + 3) * (2*hf + 1) * (2*hf - 1)
	for j := -h; j <= h; j++ {
		jf := float64(j)
		c[j+h] = 3 * (3*hf*hf + 3*hf - 1 - 5*jf*jf) / den
	}
	return c
}

// highPass is highPassAt at every point of x that has h neighbours on
// each side.
func highPass(x, c []float64, h int) []float64 {
	return highPassAt(x, c, h, interior(len(x), h))
}

// highPassAdjoint is the filter f with f·x = p·highPass(x) for every x
// (adjointAt on the same points).
func highPassAdjoint(p []float64, h int) []float64 {
	m := len(p) + 2*h
	return adjointAt(p, savitzkyGolay2(h), h, interior(m, h), m)
}

// interior are the points h … m−h−1 of m.
func interior(m, h int) []int {
	out := make([]int, max(0, m-2*h))
	for i := range out {
		out[i] = i + h
	}
	return out
}

// leadingSingular is the largest singular value of the matrix whose rows
// are rows, from the eigenvalues of their Gram matrix, and (when vector)
// its left singular vector.
func leadingSingular(rows [][]float64, vector bool) (float64, []float64) {
	r := len(rows)
	g := mat.NewSymDense(r, nil)
	for i := range rows {
		for k := i; k < r; k++ {
			s := 0.0
			for j, x := range rows[i] {
				s += x * rows[k][j]
			}
			g.SetSym(i, k, s)
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(g, vector) {
		return 0, nil
	}
	vals := eig.Values(nil)
	top := vals[len(vals)-1]
	if top <= 0 {
		return 0, nil
	}
	if !vector {
		return math.Sqrt(top), nil
	}
	var vecs mat.Dense
	eig.VectorsTo(&vecs)
	return math.Sqrt(top), mat.Col(nil, r-1, &vecs)
}

// orientLines flips p so that its lines point up, as absorption lines do
// when they grow: so that Σp³ > 0, since the high-pass of a line is a peak
// with two shallower lobes (a delta's, 5 points: 18/35 against −12/35 and
// 3/35 on each side) and noise is symmetric. The largest entry would do
// for strong lines, but where the pattern is weak and its noise largest at
// one end (the light fading), a spike of noise can be it.
func orientLines(p []float64) {
	skew := 0.0
	for _, x := range p {
		skew += x * x * x
	}
	if skew < 0 {
		for j := range p {
			p[j] = -p[j]
		}
	}
}

// countLines counts the local maxima of p above level.
func countLines(p []float64, level float64) int {
	n := 0
	for j := 1; j+1 < len(p); j++ {
		if p[j] > level && p[j] > p[j-1] && p[j] >= p[j+1] {
			n++
		}
	}
	return n
}

// noiseOfPairs is the noise standard deviation of the rows: the median
// over the pair differences of their root mean square (as
// sigmaFromRowPairs), which a few fast changes do not inflate.
func noiseOfPairs(deltas [][]float64) float64 {
	per := make([]float64, len(deltas))
	for i, r := range deltas {
		ss := 0.0
		for _, x := range r {
			ss += x * x
		}
		per[i] = ss / float64(len(r))
	}
	slices.Sort(per)
	med := per[len(per)/2]
	if len(per)%2 == 0 {
		med = 0.5 * (per[len(per)/2-1] + per[len(per)/2])
	}
	return math.Sqrt(med)
}

// heights fills Height and Change from every row of d.
func (v *VapourCheck) heights(d *mat.Dense, bounds [][2]int) {
	n, _ := d.Dims()
	v.Height = make([]float64, n)
	for i := range v.Height {
		row := d.RawRowView(i)
		for _, w := range v.wins {
			v.Height[i] += v.peak * dotWindow(row[w.first:], w.filter)
		}
	}
	v.Change = make([]float64, len(bounds))
	for e, b := range bounds {
		if b[1] > b[0] {
			lo, hi := slices.Min(v.Height[b[0]:b[1]]), slices.Max(v.Height[b[0]:b[1]])
			v.Change[e] = hi - lo
		}
	}
}

func dotWindow(x, f []float64) float64 {
	s := 0.0
	for j, w := range f {
		s += w * x[j]
	}
	return s
}

// LinesIn measures the detected pattern in one spectrum over the whole
// axis (a resolved spectrum, say): height is the height of the pattern's
// largest line in it, and z its size over the spectrum's own high-passed,
// noise-weighted remainder in the windows (root mean square): about 1 or
// less where the spectrum holds no more of the lines than noise would.
// Zero without a detection.
func (v *VapourCheck) LinesIn(spectrum []float64) (height, z float64) {
	c, rest, ok := v.project(spectrum)
	if !ok {
		return 0, 0
	}
	rms := math.Sqrt(rest / float64(v.points()))
	if rms == 0 { // a spectrum of the pattern alone, or zero
		if c == 0 {
			return 0, 0
		}
		return c * v.peak, math.MaxFloat64
	}
	return c * v.peak, math.Abs(c) / rms
}

// PatternShare is the share of a spectrum's high-passed, noise-weighted
// energy in the windows that lies along the detected pattern (its squared
// cosine to it): 1 for the vapour's lines alone, about one over the
// number of points for noise. Zero without a detection.
func (v *VapourCheck) PatternShare(spectrum []float64) float64 {
	c, rest, ok := v.project(spectrum)
	if !ok || c*c+rest == 0 {
		return 0
	}
	return c * c / (c*c + rest)
}

// InVapourRange says whether axis value x (cm⁻¹) lies in a range where
// water vapour has the lines the check looks for (vapourRanges), examined
// or not.
func InVapourRange(x float64) bool {
	for _, rg := range vapourRanges() {
		if x >= rg.lo && x <= rg.hi {
			return true
		}
	}
	return false
}

// InVapourLines says whether axis value x (cm⁻¹) lies where water vapour
// has lines at all: its bending lines over about 1300–2000 cm⁻¹ and its
// stretching lines over about 3450–4000 cm⁻¹ (the package comment; from
// memory), wider than the ranges the check reads (InVapourRange), which
// keep clear of condensed-phase bands. What a change of the vapour explains
// lies here, its stretching lines above 3950 cm⁻¹ included.
func InVapourLines(x float64) bool {
	return x >= 1300 && x <= 2000 || x >= 3450 && x <= 4000
}

// InCarbonDioxideLines says whether axis value x (cm⁻¹) lies where CO₂ in
// the beam path has lines: the P, Q and R branches of its bending band
// about the 667 cm⁻¹ Q branch, over about 630–710 cm⁻¹, and of its
// antisymmetric stretching band, 2349 cm⁻¹, over about 2290–2400 cm⁻¹
// (from memory; the branches' reach at room temperature and a few cm⁻¹
// resolution). A purge that lets in moist air lets in the air's CO₂ too
// (common practice), so a component that is the vapour's change carries
// CO₂'s lines as well.
func InCarbonDioxideLines(x float64) bool {
	return x >= 630 && x <= 710 || x >= 2290 && x <= 2400
}

// points counts the windows' high-passed points.
func (v *VapourCheck) points() int {
	k := 0
	for _, w := range v.wins {
		k += len(w.unit)
	}
	return k
}

// project is the pattern's amount c in the spectrum (its weighted
// high-pass's dot product with the unit pattern) and the sum of squares of
// what is left; ok is false without a detection or for a short spectrum.
func (v *VapourCheck) project(spectrum []float64) (c, rest float64, ok bool) {
	if !v.Detected {
		return 0, 0, false
	}
	for _, w := range v.wins {
		if len(spectrum) < w.first+len(w.filter) {
			return 0, 0, false
		}
		c += dotWindow(spectrum[w.first:], w.filter)
	}
	for _, w := range v.wins {
		hp := highPass(spectrum[w.first:w.first+len(w.filter)], savitzkyGolay2(w.half), w.half)
		for j, x := range hp {
			r := x/w.sigma[j] - c*w.unit[j]
			rest += r * r
		}
	}
	return c, rest, true
}

// LineAmounts fits, in every row of d, the amounts of the line spectra
// refs (each over the whole axis: a water-vapour or CO₂ spectrum recorded
// at the same resolution) on their narrow lines alone: the least-squares
// amounts a_i of min ‖H d_i − Σ_k a_ik H r_k‖², H a high-pass like
// CheckVapour's (less the quadratic Savitzky–Golay smooth, here over about
// lineFitWidth axis units) at every point whose smoothing window lies on
// evenly spaced axis values. The bands of a sample, tens of units wide,
// hardly enter H d_i, so the amounts follow the lines, which is how a
// reference spectrum of the atmosphere is scaled to a sample spectrum
// (common practice). The result is n × len(refs); an error says why no fit
// is made: an axis too coarse for lines, a reference without lines, or two
// references that cannot be told apart on their lines.
func LineAmounts(d *mat.Dense, axis []float64, refs [][]float64) (*mat.Dense, error) {
	n, m := d.Dims()
	half, centres, err := evenCentres(axis)
	if err != nil {
		return nil, err
	}
	k := len(refs)
	hr := make([][]float64, k) // H r_k at the centres
	c := savitzkyGolay2(half)
	for q, r := range refs {
		if len(r) != m {
			return nil, fmt.Errorf("line spectrum %d has %d values for %d axis points", q+1, len(r), m)
		}
		hr[q] = highPassAt(r, c, half, centres)
	}
	gram := mat.NewSymDense(k, nil)
	for p := 0; p < k; p++ {
		for q := p; q < k; q++ {
			gram.SetSym(p, q, dotWindow(hr[p], hr[q]))
		}
	}
	if err := linesApart(gram, refs); err != nil {
		return nil, err
	}
	var chol mat.Cholesky
	if !chol.Factorize(gram) {
		return nil, fmt.Errorf("the line spectra cannot be told apart on their lines")
	}
	// Gᵀ H d_i = Fᵀ d_i with F = Hᵀ G, the adjoint filters over the axis.
	filters := make([][]float64, k)
	for q := range hr {
		filters[q] = adjointAt(hr[q], c, half, centres, m)
	}
	out := mat.NewDense(n, k, nil)
	rhs, a := mat.NewVecDense(k, nil), mat.NewVecDense(k, nil)
	for i := 0; i < n; i++ {
		row := d.RawRowView(i)
		for q, f := range filters {
			rhs.SetVec(q, dotWindow(row, f))
		}
		if err := chol.SolveVecTo(a, rhs); err != nil {
			return nil, err
		}
		out.SetRow(i, a.RawVector().Data)
	}
	return out, nil
}

// SubtractLines takes amounts·refs (LineAmounts) out of every row of d.
func SubtractLines(d *mat.Dense, refs [][]float64, amounts *mat.Dense) {
	n, _ := d.Dims()
	for i := 0; i < n; i++ {
		row := d.RawRowView(i)
		for q, r := range refs {
			a := amounts.At(i, q)
			for j, x := range r {
				row[j] -= a * x
			}
		}
	}
}

// LineError is a fault of given line spectra themselves (no narrow lines,
// two alike), not of the data: Lines are their 1-based places in the list
// LineAmounts was given, so that a caller can name their files.
type LineError struct {
	Lines []int
	Msg   string
}

func (e *LineError) Error() string { return e.Msg }

// linesApart refuses a reference whose high-pass keeps less than a
// millionth of its energy (no narrow lines: a broad band keeps about
// 1e-10, a line forest a large share) and two references whose lines are
// nearly the same (cosine above 0.999).
func linesApart(gram *mat.SymDense, refs [][]float64) error {
	k := gram.SymmetricDim()
	for p := 0; p < k; p++ {
		if e := dotWindow(refs[p], refs[p]); !(gram.At(p, p) > 1e-6*e) {
			return &LineError{Lines: []int{p + 1}, Msg: fmt.Sprintf("line spectrum %d has no narrow lines (its high-pass keeps %.2g of its energy)", p+1, gram.At(p, p)/math.Max(e, math.SmallestNonzeroFloat64))}
		}
		for q := 0; q < p; q++ {
			if cos := gram.At(p, q) / math.Sqrt(gram.At(p, p)*gram.At(q, q)); math.Abs(cos) > 0.999 {
				return &LineError{Lines: []int{q + 1, p + 1}, Msg: fmt.Sprintf("line spectra %d and %d have the same lines (cosine %.4f): give one", q+1, p+1, cos)}
			}
		}
	}
	return nil
}

// evenCentres are the half width of the smooth for the axis's median
// spacing and the points whose window of 2·half+1 values is evenly spaced
// (within 5 %): gaps left by --exclude or an uneven axis are stepped over.
func evenCentres(axis []float64) (half int, centres []int, err error) {
	m := len(axis)
	if m < 5 {
		return 0, nil, fmt.Errorf("only %d axis values", m)
	}
	steps := make([]float64, m-1)
	for j := range steps {
		steps[j] = math.Abs(axis[j+1] - axis[j])
	}
	sorted := slices.Clone(steps)
	slices.Sort(sorted)
	step := sorted[len(sorted)/2]
	if step > 2 {
		return 0, nil, fmt.Errorf("axis values %.3g apart: too coarse to see narrow lines (at most 2)", step)
	}
	half = max(2, int(math.Round(lineFitWidth/2/step)))
	even := 0 // evenly spaced steps ending at j
	for j := 0; j < m; j++ {
		if j > 0 && math.Abs(steps[j-1]-step) <= 0.05*step {
			even++
		} else {
			even = 0
		}
		// The window of the centre j−half ends at j.
		if even >= 2*half {
			centres = append(centres, j-half)
		}
	}
	if len(centres) == 0 {
		return 0, nil, fmt.Errorf("no run of %d evenly spaced axis values", 2*half+1)
	}
	return half, centres, nil
}

// highPassAt is x less its smooth by the weights c at the centres.
func highPassAt(x, c []float64, h int, centres []int) []float64 {
	out := make([]float64, len(centres))
	for i, j := range centres {
		s := 0.0
		for t, w := range c {
			s += w * x[j-h+t]
		}
		out[i] = x[j] - s
	}
	return out
}

// adjointAt is the filter f over m points with f·x = p·highPassAt(x).
func adjointAt(p, c []float64, h int, centres []int, m int) []float64 {
	f := make([]float64, m)
	for i, j := range centres {
		f[j] += p[i]
		for t, w := range c {
			f[j-h+t] -= p[i] * w
		}
	}
	return f
}
