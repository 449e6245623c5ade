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
// the lines (vapourRanges). Each spectrum there is high-passed along the
// axis: less its quadratic Savitzky–Golay smooth over about 8 cm⁻¹ (Savitzky & Golay,
// Anal. Chem. 1964), which keeps lines a few cm⁻¹ wide and takes out bands
// tens of cm⁻¹ wide. Neighbouring spectra are averaged into at most
// vapourBins rows (within each experiment, never across two), and each
// experiment's rows are centred: what is left is how the lines change.
//
// A change is detected when two things hold:
//   - it is coherent in time: the largest singular value of the centred,
//     high-passed rows is at least vapourRatio times that of the
//     differences of disjoint pairs of neighbouring rows, which hold the
//     same noise (its correlation along the axis included) but hardly any
//     slow change, each over the Marchenko–Pastur edge √r+√w of its own r
//     rows and w points (Geman, Ann. Probab. 1980): noise alone gives a
//     ratio near 1;
//   - it is a forest of lines: its pattern (the leading right singular
//     vector) has at least 15 local maxima above 5 noise deviations
//     (noiseOfPairs) in the stretching range, 60 in the bending range, where
//     one changing condensed-phase band gives three or four (its peak and
//     the lobes the high-pass leaves).
type VapourCheck struct {
	// Checked says the axis covers the range evenly and finely enough to
	// see lines (at most 2 axis units apart); Why says why not otherwise.
	Checked bool
	Why     string
	Lo, Hi  float64 // the axis range examined (the nominal one when not checked)
	// Ratio is the coherence ratio above (noise alone about 1) and Lines
	// the number of lines counted in the pattern.
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

	first  int       // the window's first column in the matrix
	filter []float64 // over the window: a row's Height is its dot product with filter
	unit   []float64 // the high-passed pattern, unit length, over the window's interior
	half   int       // the smoothing window is 2·half+1 points
	peak   float64   // the pattern's largest entry (unit length)
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
// bending range gives 163 lines at catalyst 0.01 and 5 at 1.00, where the
// carbonyl and amide bands change most; eight narrow sample bands changing
// by up to 1 absorbance give 28 (TestVapourNotInSharpBands).
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
	rg, first, last, why := pickVapourRange(axis)
	v := VapourCheck{Lo: rg.lo, Hi: rg.hi}
	if why != "" || len(axis) != m {
		if why == "" {
			why = fmt.Sprintf("the axis has %d values for %d columns", len(axis), m)
		}
		v.Why = why
		return v
	}
	// The range examined is the axis's part of the nominal one.
	v.Lo, v.Hi = math.Min(axis[first], axis[last-1]), math.Max(axis[first], axis[last-1])
	v.Checked, v.first = true, first
	spacing := math.Abs(axis[last-1]-axis[first]) / float64(last-1-first)
	v.half = max(2, int(math.Round(vapourWidth/2/spacing)))
	bounds := experimentBounds(blocks, n)
	rows, deltas, used := vapourRows(d, first, last, v.half, bounds)
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
	w := float64(len(rows[0]))
	edge := func(r int) float64 { return math.Sqrt(float64(r)) + math.Sqrt(w) }
	v.Ratio = (s1 / edge(len(rows)-used)) / (sd / edge(len(deltas)))
	pattern := make([]float64, len(rows[0]))
	for i, row := range rows {
		for j, x := range row {
			pattern[j] += u[i] * x
		}
	}
	orientLines(pattern)
	v.Lines = countLines(pattern, 5*noiseOfPairs(deltas))
	v.Detected = v.Ratio >= vapourRatio && v.Lines >= rg.lines
	for j := range pattern {
		pattern[j] /= s1
	}
	v.unit = pattern
	top := argMax(pattern)
	v.peak, v.LargestAt = pattern[top], axis[first+v.half+top]
	if v.Detected {
		v.filter = highPassAdjoint(pattern, v.half)
		v.heights(d, bounds)
	}
	return v
}

// pickVapourRange is the first of vapourRanges the axis covers evenly and
// finely enough, with its columns [first, last), or why none is (the
// reasons of each, the last range returned).
func pickVapourRange(axis []float64) (rg vapourRange, first, last int, why string) {
	var whys []string
	for _, rg = range vapourRanges() {
		if first, last, why = vapourWindow(axis, rg.lo, rg.hi); why == "" {
			return rg, first, last, ""
		}
		whys = append(whys, why)
	}
	return rg, 0, 0, strings.Join(whys, "; ")
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

// orientLines flips p so that its largest entry in magnitude is positive:
// lines then point up, as absorption lines do when they grow.
func orientLines(p []float64) {
	big := 0.0
	for _, x := range p {
		if math.Abs(x) > math.Abs(big) {
			big = x
		}
	}
	if big < 0 {
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

func argMax(p []float64) int {
	k := 0
	for j, x := range p {
		if x > p[k] {
			k = j
		}
	}
	return k
}

// heights fills Height and Change from every row of d.
func (v *VapourCheck) heights(d *mat.Dense, bounds [][2]int) {
	n, _ := d.Dims()
	v.Height = make([]float64, n)
	for i := range v.Height {
		v.Height[i] = v.peak * dotWindow(d.RawRowView(i)[v.first:], v.filter)
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
// largest line in it, and z its size over the spectrum's own high-passed
// remainder in the window (root mean square): about 1 or less where the
// spectrum holds no more of the lines than noise would. Zero without a
// detection.
func (v *VapourCheck) LinesIn(spectrum []float64) (height, z float64) {
	if !v.Detected || len(spectrum) < v.first+len(v.filter) {
		return 0, 0
	}
	c := dotWindow(spectrum[v.first:], v.filter)
	hp := highPass(spectrum[v.first:v.first+len(v.filter)], savitzkyGolay2(v.half), v.half)
	ss := 0.0
	for j, x := range hp {
		r := x - c*v.unit[j]
		ss += r * r
	}
	rms := math.Sqrt(ss / float64(len(hp)))
	if rms == 0 { // a spectrum of the pattern alone, or zero
		if c == 0 {
			return 0, 0
		}
		return c * v.peak, math.MaxFloat64
	}
	return c * v.peak, math.Abs(c) / rms
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

// linesApart refuses a reference whose high-pass keeps less than a
// millionth of its energy (no narrow lines: a broad band keeps about
// 1e-10, a line forest a large share) and two references whose lines are
// nearly the same (cosine above 0.999).
func linesApart(gram *mat.SymDense, refs [][]float64) error {
	k := gram.SymmetricDim()
	for p := 0; p < k; p++ {
		if e := dotWindow(refs[p], refs[p]); !(gram.At(p, p) > 1e-6*e) {
			return fmt.Errorf("line spectrum %d has no narrow lines (its high-pass keeps %.2g of its energy)", p+1, gram.At(p, p)/math.Max(e, math.SmallestNonzeroFloat64))
		}
		for q := 0; q < p; q++ {
			if cos := gram.At(p, q) / math.Sqrt(gram.At(p, p)*gram.At(q, q)); math.Abs(cos) > 0.999 {
				return fmt.Errorf("line spectra %d and %d have the same lines (cosine %.4f): give one", q+1, p+1, cos)
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
