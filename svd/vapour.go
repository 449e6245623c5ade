package svd

import (
	"fmt"
	"math"
	"slices"

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
// memory). Each spectrum there is high-passed along the axis: less its
// quadratic Savitzky–Golay smooth over about 8 cm⁻¹ (Savitzky & Golay,
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
//     vector) has at least vapourLines local maxima above 5 noise
//     deviations (noiseOfPairs), where one changing condensed-phase band
//     gives a few.
type VapourCheck struct {
	// Checked says the axis covers the range evenly and finely enough to
	// see lines (at most 2 axis units apart); Why says why not otherwise.
	Checked bool
	Why     string
	Lo, Hi  float64 // the axis range examined
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
	vapourLo, vapourHi = 3550.0, 3950.0
	vapourBins         = 64  // rows averaged down to at most this many
	vapourRatio        = 3.0 // coherence ratio needed
	vapourLines        = 15  // lines needed
	vapourWidth        = 8.0 // axis units the smooth spans
)

// VapourSignificant is the z of LinesIn from which a spectrum is said to
// carry the lines: 5 noise deviations, as for the lines counted.
const VapourSignificant = 5.0

// CheckVapour checks d (rows: spectra; columns: the axis, in cm⁻¹) for
// water-vapour lines that change (see VapourCheck). blocks are the first
// rows of the experiments stacked in d (nil or {0}: one experiment).
func CheckVapour(d *mat.Dense, axis []float64, blocks []int) VapourCheck {
	n, m := d.Dims()
	v := VapourCheck{Lo: vapourLo, Hi: vapourHi}
	first, last, why := vapourWindow(axis)
	if why != "" || len(axis) != m {
		if why == "" {
			why = fmt.Sprintf("the axis has %d values for %d columns", len(axis), m)
		}
		v.Why = why
		return v
	}
	v.Checked, v.first = true, first
	spacing := math.Abs(axis[last-1]-axis[first]) / float64(last-1-first)
	v.half = max(2, int(math.Round(vapourWidth/2/spacing)))
	if last-first < 2*v.half+20 {
		v.Checked, v.Why = false, fmt.Sprintf("only %d axis values within %g–%g", last-first, vapourLo, vapourHi)
		return v
	}
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
	v.Detected = v.Ratio >= vapourRatio && v.Lines >= vapourLines
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

// vapourWindow is the columns [first, last) of the axis within the range,
// or why it cannot be checked.
func vapourWindow(axis []float64) (first, last int, why string) {
	first, last = -1, -1
	for j, x := range axis {
		if x >= vapourLo && x <= vapourHi {
			if first < 0 {
				first = j
			} else if last != j {
				return 0, 0, fmt.Sprintf("the axis is not one run of values within %g–%g", vapourLo, vapourHi)
			}
			last = j + 1
		}
	}
	if first < 0 || last-first < 2 {
		return 0, 0, fmt.Sprintf("the axis does not cover %g–%g", vapourLo, vapourHi)
	}
	step := (axis[last-1] - axis[first]) / float64(last-1-first)
	if math.Abs(step) > 2 {
		return 0, 0, fmt.Sprintf("axis values %.3g apart: too coarse to see lines", math.Abs(step))
	}
	for j := first + 1; j < last; j++ {
		if math.Abs(axis[j]-axis[j-1]-step) > 0.05*math.Abs(step) {
			return 0, 0, fmt.Sprintf("the axis is not evenly spaced within %g–%g", vapourLo, vapourHi)
		}
	}
	return first, last, ""
}

// experimentBounds turns first rows into [start, end) pairs.
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

// highPass is x less its smooth by the weights c, at the points that have
// h neighbours on each side.
func highPass(x, c []float64, h int) []float64 {
	out := make([]float64, len(x)-2*h)
	for j := range out {
		s := 0.0
		for t, w := range c {
			s += w * x[j+t]
		}
		out[j] = x[j+h] - s
	}
	return out
}

// highPassAdjoint is the filter f with f·x = p·highPass(x) for every x.
func highPassAdjoint(p []float64, h int) []float64 {
	c := savitzkyGolay2(h)
	f := make([]float64, len(p)+2*h)
	for j, pj := range p {
		f[j+h] += pj
		for t, w := range c {
			f[j+t] -= pj * w
		}
	}
	return f
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
