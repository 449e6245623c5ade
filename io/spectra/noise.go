package spectra

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"
	"sync"

	"github.com/bandsolve/bandsolve/internal/fresh"
	"github.com/bandsolve/bandsolve/internal/product"
	"github.com/bandsolve/bandsolve/internal/vecmath"
	"gonum.org/v1/gonum/mat"
)

// The noise model of the assembled matrix (docs/measurement.md).
//
// Single beams: the detector's noise is about constant in counts, so by
// propagation of error (A = −log10(I/I₀), dA = −dI/(I ln 10)) the absorbance
// of point (i, j) has
//
//	σ_A,ij = (1/ln 10)·√((σ_I,j/I_ij)² + (σ_0,j/I_0,j)²)
//
// with I₀ the reference of difference spectra and σ_0 its own noise: σ_I
// for one recorded beam, σ_I/√N for the mean of N. A blank's noise is one
// fixed pattern in every absolute spectrum that the spectra absorb, so it
// is not part of the per-point noise of absolute absorbance.
// σ_I,j, the detector's noise at channel j, comes from the data: from
// successive differences of the pre-reaction spectra ((I_{i+1}−I_i)/√2) when
// there are some, else from second differences in time,
// (I_{i+1} − 2I_i + I_{i−1})/√6, which cancel any change that is linear over
// three spectra (slow chemistry, drift). Differences in time do not see
// noise correlated along the axis (smoothing, interpolation by the
// instrument). The scale is the median absolute value × 1.4826 (the MAD of
// a zero-mean normal; common practice), robust to the few large differences
// of fast chemistry or a spike, then a running median along the axis makes
// it smooth enough for 50 spectra. Exports round to a few digits: rounding
// to a step q adds q²/12 of variance (Sheppard), so σ is never taken below
// q/√12.
//
// Absorbance or difference input: the same time differences give σ_A,j per
// channel directly.
//
// Weights: maximum-likelihood weighting (Wentzell, Andrews, Hamilton, Faber
// & Kowalski, J. Chemometrics 1997) minimises Σ w_ij e_ij² with w = 1/σ².
// The weights kept are the row × column fit w_ij ≈ a_i·b_j (log w fitted by
// row and column means, the two-way additive model) so that every ALS half
// step keeps one shared Gram matrix; they are scaled so that the weighted
// noise has unit variance on average over the observed points.
//
// Blind points: a single beam that is not finite, at or below 3σ_I (no light
// above the noise: an opaque band, a detector edge) or at the detector's
// ceiling (a flat top) holds no absorbance information. Such points are
// missing (weight zero) rather than errors; their values in the matrices are
// placeholders (interpolated in time within the channel), to be replaced by
// the low-rank model where the matrix is factored.

// Weights are the row × column maximum-likelihood weights w_ij = Row[i]·Col[j]
// ≈ 1/σ²_ij, scaled so that w·σ² averages 1 over the observed points. nil
// when no noise could be measured (noiseless or identical spectra).
type Weights struct {
	Row []float64 // a_i, one per spectrum
	Col []float64 // b_j, one per channel
}

// ChannelSigma returns the noise standard deviation per channel of a typical
// spectrum (median row weight), in the matrix's units: 1/√(b_j·median a).
func (w *Weights) ChannelSigma() []float64 {
	if w == nil {
		return nil
	}
	ma := median(w.Row)
	out := make([]float64, len(w.Col))
	for j, b := range w.Col {
		if b > 0 && ma > 0 {
			out[j] = 1 / math.Sqrt(b*ma)
		}
	}
	return out
}

// StepToNoise measures how far each spectrum of rows lo+1 … hi−1 of d moved from the
// one before it, in units of the noise the weights give: ρ_i = √(Σ_j z²_ij / m_i) with
// z_ij = (d_ij − d_{i−1,j}) / √((1/a_i + 1/a_{i−1})/b_j) over the m_i points observed in
// both (the variance of a difference of independent points is the sum of theirs). For
// repeats of one state Σ_j z²_ij is χ² with m_i degrees of freedom and ρ_i ≈ 1; a
// spectrum that already changed gives ρ_i well above 1. Out[i−lo−1] is ρ_i (0 when no
// point is observed in both). A difference cancels any pattern common to both rows (a
// reference's noise), so ρ_i can only be lower than the per-point weights imply. Each
// step's drift along the axis is taken out first (removeDrift, by weighted least squares:
// the shapes and the step scaled by √b_j), so that a baseline creeping between repeats is
// not read as a change: the baseline model takes such a drift, the chemistry does not move
// that way.
func StepToNoise(d *mat.Dense, lo, hi int, w *Weights, blind *Blind) []float64 {
	return StepToNoiseRows(d, rowSpan(lo, hi), w, blind)
}

// StepToNoiseRows is StepToNoise of each of rows[1:] from the one before it in rows: the
// steps between successive spectra kept when some between them are set aside. Out[k−1]
// is the step to rows[k].
func StepToNoiseRows(d *mat.Dense, rows []int, w *Weights, blind *Blind) []float64 {
	if w == nil || len(rows) < 2 {
		return nil
	}
	out := make([]float64, len(rows)-1)
	m := len(w.Col)
	use, z, root := make([]bool, m), make([]float64, m), make([]float64, m)
	for k := 1; k < len(rows); k++ {
		h, i := rows[k-1], rows[k]
		if !(w.Row[i] > 0 && w.Row[h] > 0) {
			continue // a spectrum set aside has no noise scale
		}
		a, b := d.RawRowView(h), d.RawRowView(i)
		va := 1/w.Row[i] + 1/w.Row[h]
		for j, bj := range w.Col {
			use[j] = !blind.Has(i, j) && !blind.Has(h, j) && bj > 0
			z[j], root[j] = 0, math.Sqrt(bj)
			if use[j] {
				z[j] = (b[j] - a[j]) * root[j]
			}
		}
		removeDrift(z, use, root)
		ss, cnt := 0.0, 0
		for j, u := range use {
			if u {
				ss += z[j] * z[j] / va
				cnt++
			}
		}
		if cnt > 0 {
			out[k-1] = math.Sqrt(ss / float64(cnt))
		}
	}
	return out
}

// rowSpan are rows lo … hi−1.
func rowSpan(lo, hi int) []int {
	rows := make([]int, 0, max(hi-lo, 0))
	for i := lo; i < hi; i++ {
		rows = append(rows, i)
	}
	return rows
}

// TimeNoise is each channel's noise standard deviation over rows lo … hi−1 of d from
// their second differences in time, as the noise model takes it when no spectra are
// counted as before the reaction: a change smooth in time cancels, so it does not rest on
// which spectra are repeats, and can judge the ones said to be. nil with fewer than three
// rows.
func TimeNoise(d *mat.Dense, times []float64, lo, hi int, blind *Blind) []float64 {
	if hi-lo < 3 {
		return nil
	}
	var line []float64
	if len(times) >= hi {
		line = lineWeights(times[lo:hi])
	}
	_, m := d.Dims()
	var b *Blind
	if blind != nil && lo < len(blind.Rows) {
		b = &Blind{Rows: blind.Rows[lo:min(hi, len(blind.Rows))]}
	}
	sig, _, _, _ := channelNoiseSpaced(d.Slice(lo, hi, 0, m).(*mat.Dense), line, 0, b)
	return sig
}

// Blind lists the points with no usable light.
type Blind struct {
	Rows  [][]int // Rows[i]: the blind channels of spectrum i, ascending (nil: none)
	Count int
	// Opaque are the runs of channels (first, last) taken as opaque bands
	// of absorbance input (opaqueBands), blind in every spectrum; for the
	// note that names them.
	Opaque [][2]int
}

// Has reports whether point (i, j) is blind.
func (b *Blind) Has(i, j int) bool {
	if b == nil || i >= len(b.Rows) {
		return false
	}
	r := b.Rows[i]
	k := sort.SearchInts(r, j)
	return k < len(r) && r[k] == j
}

// Noise says how the noise was estimated.
type Noise struct {
	// Level is the median over channels of the estimated σ: of the single
	// beams (counts) for single-beam input, else of absorbance.
	Level float64
	Unit  string // "single-beam units" or "absorbance"
	// Source names the estimate ("pre-reaction spectra …" or "second differences in time").
	Source string
	// Channel is σ per channel (single beams: σ_I,j; absorbance: σ_A,j).
	Channel []float64
	// Quantum is the rounding step seen in the export (0 if none).
	Quantum float64
	// Spectra is each spectrum's level and the test of equal levels, for
	// absorbance and difference input judged (measureSpectrumNoise); nil
	// otherwise.
	Spectra *SpectrumNoise
	// Sampling is the variance of log σ_j about the truth from the
	// estimate's own sampling, typical over the channels (runningSampling,
	// narrowSampling): the weights' error channel by channel.
	Sampling float64
}

// madScale is 1/Φ⁻¹(3/4): the median absolute value of a zero-mean normal
// sample times this is its standard deviation (common practice).
const madScale = 1.482602218505602

// MADEfficiency is the asymptotic efficiency of the median absolute
// deviation as an estimate of a normal σ (Rousseeuw & Croux 1993; from memory).
const MADEfficiency = 0.37

// differenceKappa is κ = 1 + 2 Σ_{h≥1} ρ_h² for differences with coefficients
// c, ρ_h = Σ_i c_i c_{i+h} / Σ_i c_i²: the variance of a mean of N squared
// overlapping differences of white noise is κ times that of N independent
// ones (the variance of a sum of squares of jointly normal variables,
// 2 Σ_ij cov², Isserlis 1918).
func differenceKappa(c []float64) float64 {
	k := 1.0
	for _, rho := range lagCorrelations(c) {
		k += 2 * rho * rho
	}
	return k
}

// lagCorrelations are ρ_h = Σ_i c_i c_{i+h} / Σ_i c_i² for h = 1 … len(c)−1.
func lagCorrelations(c []float64) []float64 {
	var s0 float64
	for _, v := range c {
		s0 += v * v
	}
	out := make([]float64, 0, len(c))
	for h := 1; h < len(c); h++ {
		var s float64
		for i := 0; i+h < len(c); i++ {
			s += c[i] * c[i+h]
		}
		out = append(out, s/s0)
	}
	return out
}

// MADKappa is κ of the median absolute value of overlapping differences
// with coefficients c: the variance of the median of N such values is κ
// times that of N independent ones. A median's variance is the indicator
// 1{|x| > q}'s at its median q (Bahadur 1966), and two normal values with
// correlation ρ give indicators with covariance Σ_k c_k² ρ^k/k! over even
// k ≥ 2, c_k = 2φ(q)He_{k−1}(q) the indicator's Hermite coefficients
// (Mehler's formula; He the probabilists' Hermite polynomials), so
// κ = 1 + 8 Σ_h Σ_k c_k² ρ_h^k/k! with q = Φ⁻¹(3/4): 1.213 for successive,
// 1.453 for second differences, against a sum of squares' 1 + 2 Σ ρ_h²
// (1.5, 1.94; differenceKappa), its upper bound (the largest correlation
// of even functions of two normal values is ρ²; Lancaster 1957). On white
// noise the spread of 2000 channels' log σ̂ agrees with it within 10 %
// (TestChannelSamplingIsTheSpread).
func MADKappa(c []float64) float64 {
	q := 1 / madScale
	phi := math.Exp(-q*q/2) / math.Sqrt(2*math.Pi)
	kappa := 1.0
	for _, rho := range lagCorrelations(c) {
		// He_{k−1}(q) by the recurrence He_{n+1} = x He_n − n He_{n−1};
		// the terms fall as ρ^k, 60 of them reach the rounding for |ρ| ≤ 2/3.
		prev, cur := 1.0, q // He_0, He_1
		term := 1.0         // ρ^k/k!, built up
		for k := 2; k <= 60; k += 2 {
			term *= rho * rho / float64(k*(k-1))
			if k > 2 {
				prev, cur = cur, q*cur-float64(k-3)*prev // He_{k−2}
				prev, cur = cur, q*cur-float64(k-2)*prev // He_{k−1}
			}
			ck := 2 * phi * cur
			kappa += 8 * ck * ck * term
		}
	}
	return kappa
}

// channelNoise estimates σ per channel from differences in time of v's rows,
// skipping blind points: successive differences over rows [0, pre) when
// pre ≥ 2 (repeats of one state), else second differences over all rows.
// It returns σ per channel, the rounding step and the source in words.
func channelNoise(v *mat.Dense, pre int, blind *Blind) ([]float64, float64, string) {
	sigma, q, src, _ := channelNoiseSpaced(v, nil, pre, blind)
	return sigma, q, src
}

// channelNoiseSpaced is channelNoise of spectra taken at unequal intervals:
// line holds their interpolation weights (lineWeights), nil for equal ones.
func channelNoiseSpaced(v *mat.Dense, line []float64, pre int, blind *Blind) ([]float64, float64, string, float64) {
	return channelNoiseOwn(v, line, pre, blind, quantum(v, blind), nil, nil, false)
}

// channelNoiseOwn is channelNoise given the rounding step q (quantum of v
// and blind), taken in a pass that was made anyway, and each channel's own
// scale and count of differences (channelScales) when the parse took them;
// nil when it did not.
func channelNoiseOwn(v *mat.Dense, line []float64, pre int, blind *Blind, q float64, own []float64, cnt []int, relative bool) (sigma []float64, quantum float64, source string, sampling float64) {
	n, m := v.Dims()
	src := fmt.Sprintf("second differences in time of all %d spectra", n)
	rows, reason := preRowsWithData(pre, n, m, blind)
	if pre >= 2 && len(rows) < 2 {
		pre, own = 0, nil // the scan's own scales were of the pre-reaction steps
	}
	d := timeDiffs{v: v, pre: pre, blind: blind, line: line}
	switch {
	case pre < 2 && n >= 3 && line != nil:
		src = fmt.Sprintf("second differences in time of all %d spectra, at their unequal intervals (each spectrum less the straight line through its neighbours in time)", n)
	case pre < 2 && n < 3 && m-4 >= diffsWanted:
		// No difference in time exists: the noise is taken along the axis,
		// where there are enough points for the median to be the noise's
		// rather than the spectra's shape.
		src = fmt.Sprintf("fourth differences along the axis of the %d spectra, too few for differences in time", n)
		d.alongAxis, own = true, nil
	case pre < 2 && n < 3:
		// Neither a difference in time nor enough points along the axis:
		// nothing below measures the noise, and the level is the floor
		// set after it, the smallest step between the spectra over √12.
		src = fmt.Sprintf("the smallest step between the %d spectra over √12, a floor, not a measured noise: %d spectra have no second difference in time and %d points are too few for differences along the axis", n, n, m)
	case pre >= 2 && len(rows) < min(pre, n):
		src = fmt.Sprintf("successive differences of the %d pre-reaction spectra with data, their drift along the axis removed", len(rows))
		d.pre, d.rows = len(rows), rows
		d.steps, own = driftFreeSteps(v, rows, blind, relative), nil
	case pre >= 2:
		src = fmt.Sprintf("successive differences of the %d pre-reaction spectra, their drift along the axis removed", pre)
		// The scan's own scales were of the raw differences.
		d.steps, own = driftFreeSteps(v, rows, blind, relative), nil
	}
	src += reason
	if own == nil {
		own, cnt = channelScales(d)
	}
	sig := runningMAD(d, own, cnt)
	sampling = runningSampling(d, cnt) + smoothingError(d, own, cnt, sig)
	if d.pre >= 2 && !relative && d.pre-1 < 30 && n-2 >= 30 {
		sig, sampling = preLevelSeriesShape(d, line, sig, sampling)
		src += fmt.Sprintf(" for its level; its shape along the axis from second differences in time of all %d spectra", n)
	}
	// A channel with no change at all (synthetic data, a clipped region)
	// gets a thousandth of the typical σ, not zero: its weight is large but
	// finite.
	floor := math.Max(q/math.Sqrt(12), 1e-3*median(sig))
	for j := range sig {
		sig[j] = math.Max(sig[j], floor)
	}
	return sig, q, src, sampling
}

// preRowsWithData are the rows among the first pre (at most n) of a matrix
// of n × m that have data: a row blind at every channel (a spectrum set
// aside, ChannelNoiseWithout; one with no light) has none. The steps of
// the noise are then taken between successive rows with data, all
// repeats of the state before the reaction, so that a row without data
// breaks no pair into a difference with nothing (a zero) and none is taken
// across the reaction's start. reason says, in words to follow the source,
// what rows were passed over or, with fewer than two left, that the noise
// is taken from second differences in time instead; "" when every row has
// data or pre < 2.
func preRowsWithData(pre, n, m int, blind *Blind) (rows []int, reason string) {
	if pre < 2 {
		return nil, ""
	}
	top := min(pre, n)
	for i := range top {
		if blind == nil || i >= len(blind.Rows) || len(blind.Rows[i]) < m {
			rows = append(rows, i)
		}
	}
	switch left := len(rows); {
	case left == top:
		return rows, ""
	case left < 2:
		have := "have"
		if left == 1 {
			have = "has"
		}
		return rows, fmt.Sprintf("; only %d of the %d pre-reaction spectra %s data (the others set aside or without light), too few for a successive difference", left, top, have)
	default:
		return rows, fmt.Sprintf(" (%d of the %d set aside or without light, each step taken to the next spectrum with data)", top-left, top)
	}
}

// preLevelSeriesShape is the absorbance noise per channel with the level of
// the few pre-reaction steps (pre: their timeDiffs) and the shape along the
// axis of the whole series' second differences in time. A few pre-reaction
// spectra give a channel too few steps for a median of its own, so
// runningMAD pools hundreds of channels (201 for 3 spectra), and the noise
// of an absorbance export is not smooth along the axis: under a strong band
// constant in time, a solvent's, it is 10^A times the rest (σ_A =
// σ_I/(I ln 10) for a detector whose noise is constant in counts), which a
// window that wide averages away (and spreads beside it), leaving the
// fit's residual at 1.3 times the noise on such data. The series' own
// differences resolve the shape a few channels wide; they can carry the
// chemistry's curvature in time, which the pre-reaction steps do not, so
// the level is the steps': the scale of every step divided by its
// channel's shape, pooled over the channels. fallback is returned when the
// shape is missing.
func preLevelSeriesShape(pre timeDiffs, line []float64, fallback []float64, fallbackSampling float64) ([]float64, float64) {
	all := timeDiffs{v: pre.v, blind: pre.blind, line: line}
	shape, sampling := narrowShape(all)
	_, m := pre.v.Dims()
	per := pre.perChannel()
	steps, scnt := make([]float64, m*per), make([]int, m)
	div := pre.fill(0, m, steps, scnt)
	var z []float64
	for j := 0; j < m; j++ {
		if shape[j] > 0 {
			for _, x := range steps[j*per : j*per+scnt[j]] {
				z = append(z, x/shape[j])
			}
		}
	}
	if len(z) == 0 {
		return fallback, fallbackSampling
	}
	level := madScale * medianOver(z, div)
	out := make([]float64, m)
	for j, x := range shape {
		out[j] = level * x
	}
	return out, sampling
}

// narrowShape is each channel's own noise scale from its differences in
// time (30 or more of them: about 12 % relative error at 90 spectra), the
// median of it and its two neighbours, so that one channel's chance large
// scale does not stand alone: a window as wide as runningMAD's (11
// channels at least) halves the peak of a band 8 channels wide at half
// height. A channel with no differences (blind in every spectrum) takes
// runningMAD's value.
func narrowShape(d timeDiffs) ([]float64, float64) {
	own, cnt := channelScales(d)
	wide := runningMAD(d, own, cnt)
	out := make([]float64, len(own))
	w := make([]float64, 0, 3)
	for j := range own {
		w = w[:0]
		for l := max(0, j-1); l <= min(len(own)-1, j+1); l++ {
			if cnt[l] > 0 {
				w = append(w, own[l])
			}
		}
		out[j] = wide[j]
		if cnt[j] > 0 && len(w) > 0 {
			out[j] = medianInPlace(w)
		}
	}
	return out, narrowSampling(d, cnt)
}

// timeDiffs are the absolute differences in time channelNoise pools, one
// list per channel, made on demand for a block of channels at a time: held
// whole they would be one more data-sized array (480 MB at 20 000 × 3000)
// for a median per channel.
type timeDiffs struct {
	v     *mat.Dense
	pre   int
	blind *Blind
	steps *mat.Dense // with pre ≥ 2: the steps between those spectra, drift removed (driftFreeSteps)
	// rows are the pre spectra whose successive steps are taken, when not
	// the first pre rows of v (preRowsWithData: some have no data).
	rows []int
	// line holds, for spectra 1 … n−2 taken at unequal intervals, the
	// weight a_i = (t_{i+1} − t_i)/(t_{i+1} − t_{i−1}) of the spectrum
	// before in the straight line through the two neighbours in time
	// (lineWeights); nil for equal intervals.
	line []float64
	// alongAxis takes second differences along the axis instead, of the
	// step between two spectra (of the one spectrum there is): the only
	// ones a series of one or two spectra has. The step cancels what the
	// spectra share (a source's envelope, a solvent's bands: in single
	// beams their curvature along the axis is many times the noise); a band
	// that changes and is narrow beside the point spacing still adds, and
	// the running median over a window of channels (runningMAD) passes
	// over it as long as such bands fill less than half the window.
	alongAxis bool
}

// perChannel is the most differences a channel can have.
func (d timeDiffs) perChannel() int {
	n, _ := d.v.Dims()
	switch {
	case d.alongAxis:
		return 1
	case d.pre >= 2:
		return d.pre - 1
	}
	return max(n-2, 0)
}

// preRow is the row of the k-th pre-reaction spectrum whose steps are taken.
func (d timeDiffs) preRow(k int) int {
	if d.rows == nil {
		return k
	}
	return d.rows[k]
}

// fill writes the differences of channels j0 … j1−1 into buf, channel c's
// at buf[(c−j0)·per:], in time order, and their counts into cnt[c−j0]:
// |x_i − x_{i−1}| over rows [0, pre) when pre ≥ 2 (their drift removed:
// d.steps; between successive rows of d.rows when some have no data), else
// |x_{i+1} − 2x_i + x_{i−1}|, leaving out any difference that touches a
// blind point. It returns what they are to be divided by to be on the scale
// of one value's noise (√2, or √6: the variance of x_{i+1} − 2x_i + x_{i−1}
// is 6σ²); the medians divide instead (medianOver), which gives the same
// bits and saves a division per value.
func (d timeDiffs) fill(j0, j1 int, buf []float64, cnt []int) (div float64) {
	n, _ := d.v.Dims()
	per := d.perChannel()
	for c := range cnt[:j1-j0] {
		cnt[c] = 0
	}
	noneBlind := func(i int) bool { return d.blind == nil || i >= len(d.blind.Rows) || len(d.blind.Rows[i]) == 0 }
	if d.alongAxis {
		return d.fillAlongAxis(j0, j1, buf, cnt)
	}
	if d.pre >= 2 {
		for k := 1; k < d.pre; k++ {
			st := d.steps.RawRowView(k - 1)[j0:j1]
			i0, i1 := d.preRow(k-1), d.preRow(k)
			all := noneBlind(i0) && noneBlind(i1)
			for c, s := range st {
				if all || !d.blind.Has(i0, j0+c) && !d.blind.Has(i1, j0+c) {
					buf[c*per+cnt[c]] = math.Abs(s)
					cnt[c]++
				}
			}
		}
		return math.Sqrt2
	}
	const r6 = 2.449489742783178 // √6
	if d.line != nil {
		d.fillSpaced(j0, j1, buf, cnt)
		return r6
	}
	for i := 1; i+1 < n; i++ {
		a, b, e := d.v.RawRowView(i - 1)[j0:j1], d.v.RawRowView(i)[j0:j1], d.v.RawRowView(i + 1)[j0:j1]
		if noneBlind(i-1) && noneBlind(i) && noneBlind(i+1) {
			for c := range a {
				buf[c*per+cnt[c]] = math.Abs(e[c] - 2*b[c] + a[c])
				cnt[c]++
			}
			continue
		}
		for c := range a {
			if !d.blind.Has(i-1, j0+c) && !d.blind.Has(i, j0+c) && !d.blind.Has(i+1, j0+c) {
				buf[c*per+cnt[c]] = math.Abs(e[c] - 2*b[c] + a[c])
				cnt[c]++
			}
		}
	}
	return r6
}

// fillSpaced is fill for spectra taken at unequal intervals: spectrum i
// less the straight line through its neighbours in time,
// r = x_i − a x_{i−1} − (1 − a) x_{i+1} with a = line[i−1], which cancels
// any change linear in time whatever the intervals (the plain second
// difference does only for equal ones: a steady change over a short and a
// long interval passed for noise, 18 % of it on a real series sampled
// every 21 s at first and every 40 min later). Its variance is
// (1 + a² + (1 − a)²)σ² for white noise, so r is scaled by
// √6/√(1 + a² + (1 − a)²) to the plain second difference's 6σ² (a = ½
// gives 2r, the plain one).
func (d timeDiffs) fillSpaced(j0, j1 int, buf []float64, cnt []int) {
	n, _ := d.v.Dims()
	per := d.perChannel()
	for i := 1; i+1 < n; i++ {
		a := d.line[i-1]
		scale := lineScale(a)
		x0, x1, x2 := d.v.RawRowView(i - 1)[j0:j1], d.v.RawRowView(i)[j0:j1], d.v.RawRowView(i + 1)[j0:j1]
		for c := range x0 {
			if d.blind != nil && (d.blind.Has(i-1, j0+c) || d.blind.Has(i, j0+c) || d.blind.Has(i+1, j0+c)) {
				continue
			}
			buf[c*per+cnt[c]] = scale * math.Abs(lineResidual(a, x0[c], x1[c], x2[c]))
			cnt[c]++
		}
	}
}

// lineResidual is x₁ less the straight line through its neighbours in
// time, x₁ − a·x₀ − (1 − a)·x₂ (fillSpaced).
func lineResidual(a, x0, x1, x2 float64) float64 { return x1 - a*x0 - (1-a)*x2 }

// lineScale takes lineResidual to the variance 6σ² of the plain second
// difference (fillSpaced).
func lineScale(a float64) float64 { return math.Sqrt(6 / (1 + a*a + (1-a)*(1-a))) }

// rowDiff writes into dst spectrum i's difference in time on the scale of
// the plain second difference (variance 6σ² for white noise of one σ), as
// fill and fillSpaced take it but signed and for one spectrum, 1 ≤ i ≤ n−2.
// Blind points are not looked at: the caller leaves them out.
func (d timeDiffs) rowDiff(i int, dst []float64) {
	x0, x1, x2 := d.v.RawRowView(i-1), d.v.RawRowView(i), d.v.RawRowView(i+1)
	if d.line == nil {
		for c := range dst {
			dst[c] = x2[c] - 2*x1[c] + x0[c]
		}
		return
	}
	a := d.line[i-1]
	scale := lineScale(a)
	for c := range dst {
		dst[c] = scale * lineResidual(a, x0[c], x1[c], x2[c])
	}
}

// lineWeights returns, for spectra 1 … n−2 taken at times t, the weight
// a_i = (t_{i+1} − t_i)/(t_{i+1} − t_{i−1}) of the spectrum before in the
// straight line through the neighbours in time; nil when the intervals are
// equal (within 10⁻⁶ of their mean: a clock's rounding), unknown, or not
// all positive (times given out of order or twice), where the plain second
// difference is taken.
func lineWeights(t []float64) []float64 {
	n := len(t)
	if n < 3 {
		return nil
	}
	mean := (t[n-1] - t[0]) / float64(n-1)
	even := true
	for i := 1; i < n; i++ {
		h := t[i] - t[i-1]
		if !(h > 0) {
			return nil
		}
		even = even && math.Abs(h-mean) <= 1e-6*mean
	}
	if even {
		return nil
	}
	a := make([]float64, n-2)
	for i := 1; i+1 < n; i++ {
		a[i-1] = (t[i+1] - t[i]) / (t[i+1] - t[i-1])
	}
	return a
}

// fillAlongAxis is fill for alongAxis: channel j gets the absolute fourth
// difference y_{j−2} − 4y_{j−1} + 6y_j − 4y_{j+1} + y_{j+2} of y = x₂ − x₁
// (of x₁ alone for one spectrum; channels near the ends take their inner
// neighbour's), none when it touches a blind point. The fourth difference
// cancels a cubic over five points, so the curvature of a band some
// channels wide adds little; its variance is 70σ² for white noise on one
// spectrum, 140σ² on the step between two.
func (d timeDiffs) fillAlongAxis(j0, j1 int, buf []float64, cnt []int) (div float64) {
	n, m := d.v.Dims()
	x := d.v.RawRowView(0)[:m]
	y, div := x, math.Sqrt(70)
	if n == 2 {
		y, div = make([]float64, m), math.Sqrt(140)
		for j, v := range d.v.RawRowView(1)[:m] {
			y[j] = v - x[j]
		}
	}
	blind := func(j int) bool { return d.blind.Has(0, j) || n == 2 && d.blind.Has(1, j) }
	for c := range j1 - j0 {
		cnt[c] = 0
		j := min(max(j0+c, 2), m-3)
		if !blind(j-2) && !blind(j-1) && !blind(j) && !blind(j+1) && !blind(j+2) {
			buf[c] = math.Abs(y[j-2] - 4*y[j-1] + 6*y[j] - 4*y[j+1] + y[j+2])
			cnt[c] = 1
		}
	}
	return div
}

// diffBlock is how many channels timeDiffs.fill makes at once: a buffer of
// about a megabyte (it stays in cache and is reused), and at least a cache
// line of each row.
func diffBlock(per int) int {
	return max(8, min(64, (1<<17)/max(per, 1)))
}

// channelScales gives each channel's own madScale × median of its
// differences (0 for none) and how many it has, a block of channels at a
// time on the workers.
func channelScales(d timeDiffs) (own []float64, cnt []int) {
	_, m := d.v.Dims()
	per := d.perChannel()
	own = make([]float64, m) // per-channel median, for channels with plenty
	cnt = make([]int, m)
	bl := diffBlock(per)
	// Blocks of channels on the workers: each channel's median is its own.
	bufs := newScratch(bl * per)
	product.FixedBlocks((m+bl-1)/bl, 1, func(b0, b1 int) {
		buf := bufs.get()
		defer bufs.put(buf)
		for b := b0; b < b1; b++ {
			j0, j1 := b*bl, min(m, (b+1)*bl)
			div := d.fill(j0, j1, buf, cnt[j0:j1])
			for c := 0; c < j1-j0; c++ {
				if k := cnt[j0+c]; k > 0 {
					// The median is a value of the sample, whatever its
					// order: select in place in the buffer the block owns.
					own[j0+c] = madScale * medianOver(buf[c*per:c*per+k], div)
				}
			}
		}
	})
	return own, cnt
}

// diffsWanted is how many differences a channel's noise scale is taken
// from: about 5 % relative error of the scale of a normal sample (common
// practice).
const diffsWanted = 400

// runningHalfWidth is how many channels runningMAD takes on each side,
// for avg differences per channel on m channels.
func runningHalfWidth(avg float64, m int) int {
	h := 5
	if avg > 0 {
		h = max(h, int(math.Ceil(diffsWanted/avg/2)))
	}
	return min(h, m)
}

// kappa is MADKappa of the differences d pools.
func (d timeDiffs) kappa() float64 {
	switch {
	case d.alongAxis:
		return MADKappa([]float64{1, -4, 6, -4, 1})
	case d.pre >= 2:
		return MADKappa([]float64{1, -1})
	}
	return MADKappa([]float64{1, -2, 1})
}

// The sampling error of σ_j, channel by channel.
//
// σ_j is a median of N absolute differences, whose log has the variance
// κ/(2·MADEfficiency·N) (a standard deviation's, 1/(2N), over the median
// absolute deviation's Gaussian efficiency and the differences' overlap κ;
// Rousseeuw & Croux 1993, MADKappa). A median of w such scales, each
// from N, has π/(2w) of that (the sample median's efficiency at the
// normal; common statistics), and the median of three 0.449 of one's (the
// variance of the median of three normal values; from memory). The
// misfit test allows for it: weights 1/σ̂² estimated with log error of
// variance s² raise the expected χ² of a right model by about e^{2s²}
// (E[e^{−2ε}] for a normal ε; Jensen's inequality made exact).

// runningSampling is the variance of log σ_j from runningMAD for cnt.
func runningSampling(d timeDiffs, cnt []int) float64 {
	total := 0
	for _, k := range cnt {
		total += k
	}
	if total == 0 {
		return 0
	}
	avg := float64(total) / float64(len(cnt))
	w := float64(2*runningHalfWidth(avg, len(cnt)) + 1)
	one := d.kappa() / (2 * MADEfficiency * avg)
	if avg >= 30 {
		return math.Pi / (2 * w) * one
	}
	return one / w
}

// smoothingError is the variance of log σ_j about the truth that the
// running median over ±h channels adds where the noise changes within the
// window: under a band constant in time whose light is a few times less
// (noise constant in counts goes as 10^A), the median cuts the peak and
// spreads it beside (to 0.58 of the peak under a solvent's Lorentzian of
// 3 channels' half width at 0.6 absorbance, on invented exports). Each
// channel's own scale scatters about σ_j by its own sampling error,
// κ/(2·MADEfficiency·N_j), plus that error; the mean square of log own_j −
// log σ_j less the former is the latter (never below zero). Only the
// running median of the channels' own scales (30 differences a channel or
// more) is judged: with fewer, the own scales are too rough to tell.
func smoothingError(d timeDiffs, own []float64, cnt []int, sig []float64) float64 {
	total := 0
	for _, k := range cnt {
		total += k
	}
	if len(cnt) == 0 || float64(total)/float64(len(cnt)) < 30 {
		return 0
	}
	kappa := d.kappa()
	var sum float64
	used := 0
	for j, k := range cnt {
		if k < 30 || !(own[j] > 0) || !(sig[j] > 0) {
			continue
		}
		l := math.Log(own[j] / sig[j])
		sum += l*l - kappa/(2*MADEfficiency*float64(k))
		used++
	}
	if used == 0 {
		return 0
	}
	return math.Max(0, sum/float64(used))
}

// narrowSampling is the variance of log σ_j from narrowShape for cnt.
func narrowSampling(d timeDiffs, cnt []int) float64 {
	total := 0
	for _, k := range cnt {
		total += k
	}
	if total == 0 {
		return 0
	}
	return medianOfThree * d.kappa() / (2 * MADEfficiency * float64(total) / float64(len(cnt)))
}

// medianOfThree is the variance of the median of three independent
// standard normal values (from memory; 0.4487).
const medianOfThree = 0.4487

// runningMAD gives each channel madScale × the median of the absolute
// differences of the channels within a window around it, from the
// channels' own scales and counts (channelScales). The window grows until
// it holds at least 400 differences (about 5 % relative error of the scale
// of a normal sample; common practice), at least 5 channels each side when
// every channel has many.
func runningMAD(d timeDiffs, own []float64, cnt []int) []float64 {
	_, m := d.v.Dims()
	out := make([]float64, m)
	per := d.perChannel()
	total := 0
	for _, k := range cnt {
		total += k
	}
	if total == 0 {
		return out
	}
	avg := float64(total) / float64(m)
	h := runningHalfWidth(avg, m)
	if avg >= 30 {
		// Enough per channel: a running median of the channels' own scales
		// (cheap at thousands of spectra).
		w := make([]float64, 0, 2*h+1)
		for j := 0; j < m; j++ {
			w = w[:0]
			for l := max(0, j-h); l <= min(m-1, j+h); l++ {
				if cnt[l] > 0 {
					w = append(w, own[l])
				}
			}
			if len(w) > 0 {
				out[j] = medianInPlace(w)
			}
		}
		return out
	}
	// Few spectra: pool the differences themselves over the window (fewer
	// than 30 per channel on average, so all of them are small).
	all := make([]float64, m*per)
	div := d.fill(0, m, all, cnt)
	var w []float64
	for j := 0; j < m; j++ {
		w = w[:0]
		for l := max(0, j-h); l <= min(m-1, j+h); l++ {
			w = append(w, all[l*per:l*per+cnt[l]]...)
		}
		if len(w) > 0 {
			out[j] = madScale * medianOver(w, div)
		}
	}
	return out
}

// quantum is the export's rounding step: the smallest non-zero change
// between successive spectra in one channel. Rounded values are multiples
// of the step, so their differences are too; for unrounded data it is tiny
// and the floor it sets does not matter.
func quantum(v *mat.Dense, blind *Blind) float64 {
	n, m := v.Dims()
	// The smallest change of each block of rows, then of the blocks: a
	// minimum is the same whatever order it is taken in.
	q := math.Inf(1)
	var mu sync.Mutex
	eachRowBlock(n, m, func(r0, r1 int) {
		bq := math.Inf(1)
		for i := max(r0, 1); i < r1; i++ {
			a, b := v.RawRowView(i - 1)[:m], v.RawRowView(i)[:m]
			for j := range a {
				if d := math.Abs(b[j] - a[j]); d > 0 && d < bq && !blind.Has(i-1, j) && !blind.Has(i, j) {
					bq = d
				}
			}
		}
		mu.Lock()
		q = math.Min(q, bq)
		mu.Unlock()
	})
	if math.IsInf(q, 1) {
		return 0
	}
	return q
}

// beamMaxima returns the largest finite single beam, and the largest beam
// per channel (+Inf counts there, NaN never does; −Inf for a channel with
// none) that saturationWarnings needs, in one pass over the rows.
func beamMaxima(v *mat.Dense) (top float64, channel []float64) {
	n, m := v.Dims()
	top = math.Inf(-1)
	channel = make([]float64, m)
	for j := range channel {
		channel[j] = math.Inf(-1)
	}
	var mu sync.Mutex
	bufs := newScratch(m)
	eachRowBlock(n, m, func(r0, r1 int) {
		bc := bufs.get()
		defer bufs.put(bc)
		for j := range bc {
			bc[j] = math.Inf(-1)
		}
		bt, inf := math.Inf(-1), math.Inf(1)
		for i := r0; i < r1; i++ {
			for j, x := range v.RawRowView(i)[:m] {
				if x > bc[j] {
					bc[j] = x
				}
				if x > bt && x < inf {
					bt = x
				}
			}
		}
		// A maximum does not depend on the order it is taken in.
		mu.Lock()
		top = math.Max(top, bt)
		for j, x := range bc {
			if x > channel[j] {
				channel[j] = x
			}
		}
		mu.Unlock()
	})
	return top, channel
}

// flatTop is top when it is a flat top of v's rows (the same value in at
// least 3 neighbouring channels of one spectrum: the detector or its
// converter saturated there), else 0.
func flatTop(v *mat.Dense, top float64) float64 {
	if !(top > 0) {
		return 0
	}
	n, m := v.Dims()
	var mu sync.Mutex
	flat := false
	eachRowBlock(n, m, func(r0, r1 int) {
		for i := r0; i < r1; i++ {
			run := 0
			for _, x := range v.RawRowView(i)[:m] {
				if x == top {
					run++
					if run >= 3 {
						mu.Lock()
						flat = true
						mu.Unlock()
						return
					}
				} else {
					run = 0
				}
			}
		}
	})
	if flat {
		return top
	}
	return 0
}

// findBlindTops marks the single beams that carry no light: not finite, at
// or below zero, or at the detector's ceiling ceil (0: none). Where a
// reference or blank channel is itself unusable, that channel is blind in
// every spectrum. It returns besides each channel's brightest beam that is
// not blind (0 when none is), which addWeakBelow needs: both in one pass
// over the rows.
func findBlindTops(v *mat.Dense, badChannel []bool, ceil float64) (*Blind, []float64) {
	n, m := v.Dims()
	b := &Blind{Rows: make([][]int, n)}
	top := make([]float64, m)
	var mu sync.Mutex
	bufs := newScratch(m)
	eachRowBlock(n, m, func(r0, r1 int) {
		bt := bufs.get()
		defer bufs.put(bt)
		clear(bt)
		for i := r0; i < r1; i++ {
			for j, x := range v.RawRowView(i)[:m] {
				if !(x > 0) || math.IsInf(x, 0) || (ceil > 0 && x == ceil) || (badChannel != nil && badChannel[j]) {
					b.Rows[i] = append(b.Rows[i], j)
				} else if x > bt[j] {
					bt[j] = x
				}
			}
		}
		raiseTo(&mu, top, bt)
	})
	for _, r := range b.Rows {
		b.Count += len(r)
	}
	return b, top
}

// beamScan is what one pass over the single beams gathers for the noise
// model (scanBeams).
type beamScan struct {
	maxFinite  float64   // the largest finite beam (beamMaxima's top)
	channelMax []float64 // the largest beam per channel (beamMaxima's)
	ceiling    float64   // the detector's ceiling (flatTop's answer)
	blind      *Blind    // findBlindTops's blind points, for the ceiling
	top        []float64 // findBlindTops's brightest observed beams
	quantum    float64   // the rounding step (quantum), over those points
}

// scanBeams gives what beamMaxima, flatTop, findBlindTops (badChannel not
// nil) and quantum give, in one pass over the rows instead of four. The
// blind points, the brightest beams and the quantum are taken as if there
// were no ceiling; only when a flat top is found (a saturated detector,
// rare) are those two passes made again with it. Every result is a maximum,
// a minimum or a per-point test, the same whatever the order of the blocks.
//
// A row of positive finite beams only, the usual row, goes through a loop
// without a branch on the data: maxima taken with max (its NaN and signed
// zero rules cannot apply to positive finite values), the unusable channels,
// blind in every row, set aside at the end. The maxima of the separate
// passes took a branch per value that went either way at random on noise
// (is this beam the brightest so far?), which cost more than reading the
// matrix. The flat top needs no pass of its own: a run of 3 values equal to
// the largest finite beam lies in a row whose own largest finite beam is that
// value, so only such rows are looked at again.
func scanBeams(v *mat.Dense, badChannel []bool) beamScan {
	n, m := v.Dims()
	sc := beamScan{maxFinite: math.Inf(-1), channelMax: make([]float64, m), top: make([]float64, m), quantum: math.Inf(1)}
	for j := range sc.channelMax {
		sc.channelMax[j] = math.Inf(-1)
	}
	var badList []int
	for j, bad := range badChannel {
		if bad {
			badList = append(badList, j)
		}
	}
	b := &Blind{Rows: make([][]int, n)}
	rowMax := make([]float64, n) // each row's largest finite value
	var mu sync.Mutex
	bufs := newScratch(2 * m)
	eachRowBlock(n, m, func(r0, r1 int) {
		buf := bufs.get()
		defer bufs.put(buf)
		bc, bt := buf[:m], buf[m:2*m]
		for j := range bc {
			bc[j] = math.Inf(-1)
		}
		clear(bt)
		bq := math.Inf(1)
		prevClean := false
		for i := r0; i < r1; i++ {
			row := v.RawRowView(i)[:m]
			// The change from the row before (quantum); row 0 against
			// itself, which gives no change.
			prev := row
			if i > 0 {
				prev = v.RawRowView(i - 1)[:m]
			}
			if i == r0 && i > 0 {
				prevClean = vecmath.AllPositiveFinite(prev)
			}
			clean := vecmath.AllPositiveFinite(row)
			if clean {
				rowMax[i], bq = scanCleanRow(row, prev, prevClean, badChannel, len(badList) > 0, bc, bt, bq)
				if len(badList) > 0 {
					b.Rows[i] = slices.Clone(badList)
				}
			} else {
				rowMax[i], bq = scanRow(row, prev, badChannel, bc, bt, bq, &b.Rows[i])
			}
			prevClean = clean
		}
		mu.Lock()
		defer mu.Unlock()
		sc.quantum = math.Min(sc.quantum, bq)
		for j, x := range bc {
			if x > sc.channelMax[j] {
				sc.channelMax[j] = x
			}
		}
		for j, x := range bt {
			if x > sc.top[j] {
				sc.top[j] = x
			}
		}
	})
	sc.finish(v, badChannel, badList, b, rowMax)
	return sc
}

// finish completes scanBeams from its pass over the rows: the blind points
// b, each row's largest finite beam rowMax and the unusable channels
// badList. It looks for the flat top only in the rows that can hold it and,
// when there is one, takes the blind points, the brightest beams and the
// quantum again with the ceiling.
func (sc *beamScan) finish(v *mat.Dense, badChannel []bool, badList []int, b *Blind, rowMax []float64) {
	_, m := v.Dims()
	// The clean rows took every channel's beam into the brightest; an
	// unusable channel is blind in every row and has none.
	for _, j := range badList {
		sc.top[j] = 0
	}
	for _, x := range rowMax {
		if x > sc.maxFinite {
			sc.maxFinite = x
		}
	}
	for i, x := range rowMax {
		if sc.maxFinite > 0 && x == sc.maxFinite && hasRunOf(v.RawRowView(i)[:m], x, 3) {
			sc.ceiling = sc.maxFinite
			break
		}
	}
	if sc.ceiling > 0 {
		sc.blind, sc.top = findBlindTops(v, badChannel, sc.ceiling)
		sc.quantum = quantum(v, sc.blind)
		return
	}
	for _, r := range b.Rows {
		b.Count += len(r)
	}
	sc.blind = b
	if math.IsInf(sc.quantum, 1) {
		sc.quantum = 0
	}
}

// scanCleanRow is scanBeams's work on a row of positive finite beams: the
// maxima per channel (bc, and bt, the unusable channels among them), the
// row's largest value, returned, and the smallest change from the row
// before, prev (positive finite too when prevClean), below bq, returned.
// anyBad says whether bad marks any channel.
func scanCleanRow(row, prev []float64, prevClean bool, bad []bool, anyBad bool, bc, bt []float64, bq float64) (float64, float64) {
	if prevClean && !anyBad {
		// The usual row: every beam here and in the row before is observed,
		// so every change above zero counts; maxima and a minimum, four
		// lanes at a time in one pass (vecmath), the same values.
		top, step := vecmath.RaiseAndStep(bc, bt, row, prev)
		return top, min(bq, step)
	}
	bc, bt, prev, bad = bc[:len(row)], bt[:len(row)], prev[:len(row)], bad[:len(row)]
	// Four running maxima, so that each max does not wait for the last.
	r0, r1, r2, r3 := math.Inf(-1), math.Inf(-1), math.Inf(-1), math.Inf(-1)
	j := 0
	for ; j+4 <= len(row); j += 4 {
		x0, x1, x2, x3 := row[j], row[j+1], row[j+2], row[j+3]
		r0, r1, r2, r3 = max(r0, x0), max(r1, x1), max(r2, x2), max(r3, x3)
	}
	for ; j < len(row); j++ {
		r0 = max(r0, row[j])
	}
	for j, x := range row {
		bc[j] = max(bc[j], x)
		bt[j] = max(bt[j], x)
		if d := math.Abs(x - prev[j]); d > 0 && d < bq && !bad[j] && (prevClean || observedBeam(prev[j], j, bad)) {
			bq = d
		}
	}
	return max(max(r0, r1), max(r2, r3)), bq
}

// scanRow is scanBeams's work on any row, a test per value: blind points
// are appended to blind, the maxima per channel taken in bc (every beam but
// NaN) and bt (observed beams), the smallest change below bq between
// observed beams of row and prev returned with the row's largest finite
// value.
func scanRow(row, prev []float64, bad []bool, bc, bt []float64, bq float64, blind *[]int) (float64, float64) {
	inf := math.Inf(1)
	rm := math.Inf(-1)
	for j, x := range row {
		if x > bc[j] {
			bc[j] = x
		}
		if x > rm && x < inf {
			rm = x
		}
		if x > 0 && x < inf && !bad[j] {
			if x > bt[j] {
				bt[j] = x
			}
		} else {
			*blind = append(*blind, j)
		}
		if d := math.Abs(x - prev[j]); d > 0 && d < bq && observedBeam(x, j, bad) && observedBeam(prev[j], j, bad) {
			bq = d
		}
	}
	return rm, bq
}

// hasRunOf says whether x comes at least k times in a row in row.
func hasRunOf(row []float64, x float64, k int) bool {
	run := 0
	for _, y := range row {
		if y != x {
			run = 0
			continue
		}
		if run++; run >= k {
			return true
		}
	}
	return false
}

// observedBeam is findBlindTops's test of an observed beam when there is no
// ceiling.
func observedBeam(x float64, j int, badChannel []bool) bool {
	return x > 0 && x < math.Inf(1) && !badChannel[j]
}

// addWeakBelow marks single beams at or below weakSigmas·σ_I,j as blind
// too: the light left there is not above the detector's noise, so −log10
// of it is noise with a heavy tail, not absorbance. Only beams also below
// weakBeamFraction of the channel's brightest observed beam top[j] count:
// with a few spectra of fast chemistry σ_I is overestimated, and a beam at
// 10 % of its channel's light is absorbance, not darkness.
func (b *Blind) addWeakBelow(v *mat.Dense, sigma, top []float64) {
	n, m := v.Dims()
	added := make([]int, n)
	// The two limits of each channel, formed once (the same products the
	// test formed per value); a row is searched four values to a test
	// (vecmath), since weak beams are rare.
	atMost, below := make([]float64, m), make([]float64, m)
	for j := range atMost {
		atMost[j], below[j] = weakSigmas*sigma[j], weakBeamFraction*top[j]
	}
	eachRowBlock(n, m, func(r0, r1 int) {
		for i := r0; i < r1; i++ {
			row := v.RawRowView(i)[:m]
			// Membership against the row's blind channels as they were
			// (ascending); the points added go after them.
			bl, next := b.Rows[i], 0
			for j := 0; ; j++ {
				j += vecmath.NextAtOrBelow(row[j:], atMost[j:], below[j:])
				if j >= m {
					break
				}
				for next < len(bl) && bl[next] < j {
					next++
				}
				if !(next < len(bl) && bl[next] == j) {
					b.Rows[i] = append(b.Rows[i], j)
					added[i]++
				}
			}
			if len(b.Rows[i]) > len(bl) {
				sort.Ints(b.Rows[i])
			}
		}
	})
	for _, k := range added {
		b.Count += k
	}
}

// weakSigmas: a beam within 3 standard deviations of zero is not
// distinguishable from no light (common practice: the 3σ detection limit).
const weakSigmas = 3

// fillBlind puts placeholders at the blind points of d: linear
// interpolation in time between the nearest observed spectra of the same
// channel (constant beyond the ends), 0 where the channel has none. They
// only start the imputation by the low-rank model.
func fillBlind(d *mat.Dense, b *Blind, times []float64) {
	if b == nil || b.Count == 0 {
		return
	}
	n, m := d.Dims()
	cols := map[int]bool{}
	for _, r := range b.Rows {
		for _, j := range r {
			cols[j] = true
		}
	}
	for j := 0; j < m; j++ {
		if !cols[j] {
			continue
		}
		var obs []int
		for i := 0; i < n; i++ {
			if !b.Has(i, j) {
				obs = append(obs, i)
			}
		}
		for i := 0; i < n; i++ {
			if !b.Has(i, j) {
				continue
			}
			d.Set(i, j, interpAt(d, j, obs, i, times))
		}
	}
}

func interpAt(d *mat.Dense, j int, obs []int, i int, times []float64) float64 {
	if len(obs) == 0 {
		return 0
	}
	k := sort.SearchInts(obs, i)
	switch {
	case k == 0:
		return d.At(obs[0], j)
	case k == len(obs):
		return d.At(obs[len(obs)-1], j)
	}
	lo, hi := obs[k-1], obs[k]
	t := float64(i - lo)
	span := float64(hi - lo)
	if times != nil && times[hi] != times[lo] {
		t, span = times[i]-times[lo], times[hi]-times[lo]
	}
	f := t / span
	return (1-f)*d.At(lo, j) + f*d.At(hi, j)
}

// fitWeights fits log w_ij = α_i + β_j to the weights w = 1/var(i, j) of
// the observed points by row and column means (the two-way additive model;
// exact in one pass when nothing is blind, the usual approximation with a
// few blind points), then scales it so that Σ w·var = number of observed
// points: the weighted noise then has unit variance on average. It fits one
// set of weights per variance function, all in the same two passes over the
// points; each fit's sums run in the same order as a fit of its own.
func fitWeights(n, m int, blind *Blind, variances ...func(i int, out []float64)) []*Weights {
	w, _ := fitWeightsJoint(n, m, len(variances), blind, func(i int, out []float64) {
		for f, variance := range variances {
			variance(i, out[f*m:(f+1)*m])
		}
	})
	return w
}

// fitWeightsJoint is fitWeights for nf variance functions computed together:
// variances(i, out) writes function f's variances of row i to out[f·m:(f+1)·m]
// (work they share, such as σ/I, is then done once). It is called from
// several goroutines at once, for different rows.
//
// It returns besides, from the scale pass, an upper bound per row of
// a_i·b_j·var_ij over the row's observed points for the first fit's final
// weights and variances (peak; NaN for a row it cannot bound, nil when it
// bounds none): with it addOverweighted passes over the rows that cannot
// hold an overweighted point without computing their variances again.
func fitWeightsJoint(n, m, nf int, blind *Blind, variances func(i int, out []float64)) (fits []*Weights, peak []float64) {
	return fitWeightsReusing(newRowPieces(nf*m), n, m, nf, blind, variances, nil)
}

// fitWeightsReusing is fitWeightsJoint with the buffers of its passes over
// the rows from pieces (of width nf·m), shared by both passes and by a
// caller's later fit. logVariances, when not nil, writes the natural
// logarithms of what variances writes (bit for bit math.Log of them), for
// the first pass, and reports whether every one is finite: a caller that
// forms both in one pass.
func fitWeightsReusing(pieces *rowPieces, n, m, nf int, blind *Blind, variances func(i int, out []float64), logVariances func(i int, out []float64) bool) (fits []*Weights, peak []float64) {
	out := additiveWeights(n, m, logWeightSums(pieces, n, m, nf, blind, variances, logVariances))
	scale, peak := scaleSums(pieces, n, m, blind, variances, out)
	for f, w := range out {
		if w == nil {
			continue
		}
		sc := 1.0
		if s, c := scale[f].sum, scale[f].cnt; s > 0 {
			sc = float64(c) / s
			for j := range w.Col {
				w.Col[j] *= sc
			}
		}
		var row0, col0 []float64
		if f == 0 {
			row0, col0 = slices.Clone(w.Row), slices.Clone(w.Col)
		}
		floorWeights(w.Row)
		floorWeights(w.Col)
		if f == 0 {
			peak = scalePeaks(peak, sc)
			unboundRaised(peak, blind, row0, w.Row, col0, w.Col)
		}
	}
	return out, peak
}

// logSums are one fit's sums of log weights −log var_ij over the observed
// points: per row, per channel and in all.
type logSums struct {
	rowSum, colSum []float64
	rowCnt, colCnt []int
	grand          float64
	cnt            int
}

// logWeightSums forms the sums of log weights of each of the nf fits in one
// pass over the rows (the logarithms from logVariances when not nil).
func logWeightSums(pieces *rowPieces, n, m, nf int, blind *Blind, variances func(i int, out []float64), logVariances func(i int, out []float64) bool) []logSums {
	acc := make([]logSums, nf)
	for f := range acc {
		acc[f] = logSums{rowSum: make([]float64, n), colSum: make([]float64, m), rowCnt: make([]int, n), colCnt: make([]int, m)}
	}
	// The logarithms on the workers, a row at a time; the sums here, in the
	// order of a loop over rows then channels. A point is left out when its
	// logarithm is not finite (a variance that is not positive and finite)
	// or NaN (a blind channel). The log weight −log v is not formed: adding
	// −l is subtracting l (IEEE 754 defines x − y as x + (−y)), so the sums
	// take l away, one pass over the row fewer.
	//
	// A row of two fits whose every logarithm is finite, the usual row, is
	// found so on the workers (finite: logVariances says so, having checked
	// each value in a register, else a pass over the row), and its sums are
	// taken without a test per value; its points' counts per channel are
	// added once for all such rows at the end (finiteRows): whole numbers,
	// exact in any order.
	finite := make([]bool, n)
	finiteRows := 0
	mapRowsReusing(pieces, n, func(i int, out []float64) {
		if logVariances != nil {
			all := logVariances(i, out)
			for f := 0; f < nf; f++ {
				blindNaN(out[f*m:(f+1)*m], blind.row(i))
			}
			finite[i] = nf == 2 && all && len(blind.row(i)) == 0
			return
		}
		variances(i, out)
		for f := 0; f < nf; f++ {
			logObserved(out[f*m:(f+1)*m], blind.row(i))
		}
		finite[i] = nf == 2 && AllFinite(out[:2*m])
	}, func(i int, out []float64) {
		switch {
		case finite[i]:
			addFiniteLogSumsPair(&acc[0], &acc[1], i, out[:m], out[m:2*m])
			finiteRows++
		case nf == 2:
			addLogSumsPair(&acc[0], &acc[1], i, out[:m], out[m:2*m])
		default:
			for f := range acc {
				addLogSums(&acc[f], i, out[f*m:(f+1)*m])
			}
		}
	})
	for f := range acc {
		for j := range acc[f].colCnt {
			acc[f].colCnt[j] += finiteRows
		}
	}
	return acc
}

// addFiniteLogSumsPair is addLogSumsPair for a row whose logarithms are all
// finite: the same sums in the same order, without the tests, and the row's
// counts; the channels' counts are the caller's to add.
func addFiniteLogSumsPair(a, b *logSums, i int, la, lb []float64) {
	m := len(la)
	lb = lb[:m]
	aSum, bSum := a.colSum[:m], b.colSum[:m]
	ra, ga, rb, gb := 0.0, a.grand, 0.0, b.grand
	for j, l := range la {
		k := lb[j]
		ra -= l
		aSum[j] -= l
		ga -= l
		rb -= k
		bSum[j] -= k
		gb -= k
	}
	a.rowSum[i], a.rowCnt[i], a.grand, a.cnt = ra, m, ga, a.cnt+m
	b.rowSum[i], b.rowCnt[i], b.grand, b.cnt = rb, m, gb, b.cnt+m
}

// addLogSums takes the logarithms l of row i's variances away from a's
// sums, leaving out those that are not finite.
func addLogSums(a *logSums, i int, ls []float64) {
	inf := math.Inf(1)
	colSum, colCnt := a.colSum[:len(ls)], a.colCnt[:len(ls)]
	rs, rc, g, c := 0.0, 0, a.grand, a.cnt
	for j, l := range ls {
		if !(l > -inf && l < inf) {
			continue
		}
		rs -= l
		rc++
		colSum[j] -= l
		colCnt[j]++
		g -= l
		c++
	}
	a.rowSum[i], a.rowCnt[i], a.grand, a.cnt = rs, rc, g, c
}

// addLogSumsPair is addLogSums for two fits at once, each with its own sums
// in its own order: the running sums of the one do not wait for the
// other's, where two loops in turn would wait for each in turn.
func addLogSumsPair(a, b *logSums, i int, la, lb []float64) {
	inf := math.Inf(1)
	m := len(la)
	lb = lb[:m]
	aSum, aCnt, bSum, bCnt := a.colSum[:m], a.colCnt[:m], b.colSum[:m], b.colCnt[:m]
	ra, rca, ga, ca := 0.0, 0, a.grand, a.cnt
	rb, rcb, gb, cb := 0.0, 0, b.grand, b.cnt
	for j, l := range la {
		if l > -inf && l < inf {
			ra -= l
			rca++
			aSum[j] -= l
			aCnt[j]++
			ga -= l
			ca++
		}
		if k := lb[j]; k > -inf && k < inf {
			rb -= k
			rcb++
			bSum[j] -= k
			bCnt[j]++
			gb -= k
			cb++
		}
	}
	a.rowSum[i], a.rowCnt[i], a.grand, a.cnt = ra, rca, ga, ca
	b.rowSum[i], b.rowCnt[i], b.grand, b.cnt = rb, rcb, gb, cb
}

// additiveWeights solves the two-way additive model log w_ij = α_i + β_j of
// each fit by its row and column means (nil for a fit without an observed
// point), before scaling.
func additiveWeights(n, m int, acc []logSums) []*Weights {
	out := make([]*Weights, len(acc))
	for f := range acc {
		a := &acc[f]
		if a.cnt == 0 {
			// No noise measured (identical or noiseless spectra): no weights,
			// and the factor analysis estimates σ itself.
			continue
		}
		w := &Weights{Row: make([]float64, n), Col: make([]float64, m)}
		g := a.grand / float64(a.cnt)
		for j := range w.Col {
			if a.colCnt[j] > 0 {
				w.Col[j] = math.Exp(a.colSum[j] / float64(a.colCnt[j]))
			}
		}
		for i := range w.Row {
			if a.rowCnt[i] > 0 {
				w.Row[i] = math.Exp(a.rowSum[i]/float64(a.rowCnt[i]) - g)
			}
		}
		out[f] = w
	}
	return out
}

// scaleSum is one fit's sum of a_i b_j var_ij over the observed points, and
// their count.
type scaleSum struct {
	sum float64
	cnt int
}

// scaleSums forms for each fit the sum whose mean the scale sets to one, in
// a second pass over the rows, and the first fit's peak per row (see
// fitWeightsJoint).
func scaleSums(pieces *rowPieces, n, m int, blind *Blind, variances func(i int, out []float64), out []*Weights) ([]scaleSum, []float64) {
	acc := make([]scaleSum, len(out))
	var peak []float64
	if out[0] != nil {
		peak = make([]float64, n)
	}
	mapRowsReusing(pieces, n, func(i int, buf []float64) {
		variances(i, buf)
		for f, w := range out {
			if w == nil {
				continue
			}
			p := scaleObserved(buf[f*m:(f+1)*m], w.Col[:m], w.Row[i], blind.row(i))
			if f == 0 {
				peak[i] = p
			}
		}
	}, func(i int, buf []float64) {
		if len(out) == 2 && out[0] != nil && out[1] != nil {
			addScaleSumsPair(&acc[0], &acc[1], buf[:m], buf[m:2*m])
			return
		}
		for f, w := range out {
			if w == nil {
				continue
			}
			a := &acc[f]
			g, c := a.sum, a.cnt
			for _, t := range buf[f*m : (f+1)*m] {
				if t == t {
					g += t
					c++
				}
			}
			a.sum, a.cnt = g, c
		}
	})
	return acc, peak
}

// addScaleSumsPair adds the products ta and tb of one row that are not NaN
// to the sums of two fits, each in its own order, in one loop: the running
// sum of the one does not wait for the other's.
func addScaleSumsPair(a, b *scaleSum, ta, tb []float64) {
	tb = tb[:len(ta)]
	ga, ca, gb, cb := a.sum, a.cnt, b.sum, b.cnt
	for j, t := range ta {
		if t == t {
			ga += t
			ca++
		}
		if u := tb[j]; u == u {
			gb += u
			cb++
		}
	}
	a.sum, a.cnt, b.sum, b.cnt = ga, ca, gb, cb
}

// scaleObserved turns the variances o of a row into the products
// a_i·b_j·var_ij with a_i = ai and b_j = col[j], NaN where the point is
// left out of the fit (the blind channels bl, ascending, and variances that
// are not positive and finite), and returns their peak, in one pass over each
// stretch between blind channels (vecmath.ScaleObserved) instead of three
// over the row: marking those points NaN, forming the products, and taking
// the peak, the largest product of the observed points (NaN when one of
// them is NaN: a point left out of the fit though not blind, which no bound
// then covers).
func scaleObserved(o, col []float64, ai float64, bl []int) float64 {
	nan := math.NaN()
	col = col[:len(o)]
	mx, anyNaN, start := 0.0, false, 0
	run := func(lo, hi int) {
		p, q := vecmath.ScaleObserved(o[lo:hi], col[lo:hi], ai)
		mx, anyNaN = max(mx, p), anyNaN || q // p ≥ +0, never NaN
	}
	for _, j := range bl {
		if j < start || j >= len(o) {
			continue
		}
		run(start, j)
		//lint:ignore SA4012 a NaN formed as ScaleObserved forms it (the product with NaN), not compared
		o[j] = ai * col[j] * nan
		start = j + 1
	}
	run(start, len(o))
	if anyNaN {
		return nan
	}
	return mx
}

// scalePeaks turns the peaks of a_i·b_j·var_ij taken before the column
// weights were scaled by sc into bounds for the final weights: the final
// product (a_i·fl(b_j·sc))·v, for any v ≤ var_ij, exceeds peak·sc by a few
// roundings (relative 2⁻⁵³ each) at most, which the factor 1 + 10⁻⁹ covers,
// and a product that underflowed before scaling (below 10⁻³⁰⁰) is at most
// 10⁻³⁰⁰·sc after. nil when sc is so large that the underflow term counts.
func scalePeaks(peak []float64, sc float64) []float64 {
	if peak == nil || !(sc > 0 && sc <= 1e200) {
		return nil
	}
	for i, p := range peak {
		peak[i] = (p + 1e-300) * sc * (1 + 1e-9) // NaN stays NaN
	}
	return peak
}

// unboundRaised sets the bound of every row to NaN whose products used a
// weight floorWeights raised (row0 and col0 the weights before, row and col
// after): a raised row, and each row in which a raised channel is observed
// (a channel blind in every spectrum, the usual case, touches none).
func unboundRaised(peak []float64, blind *Blind, row0, row, col0, col []float64) {
	if peak == nil {
		return
	}
	for i := range row {
		if row[i] != row0[i] {
			peak[i] = math.NaN()
		}
	}
	for j := range col {
		if col[j] == col0[j] {
			continue
		}
		for i := range peak {
			if !blind.Has(i, j) {
				peak[i] = math.NaN()
			}
		}
	}
}

// logObserved replaces the variances v in o by log v, the whole row at once
// (vecmath: bit for bit math.Log, four at a time), and those of the blind
// channels bl (ascending) by NaN. log v is finite exactly when v is
// positive and finite (−Inf for ±0, NaN below 0 and for NaN, +Inf for
// +Inf), so a point is in the fit when its value here is finite.
func logObserved(o []float64, bl []int) {
	vecmath.Log(o, o)
	blindNaN(o, bl)
}

// blindNaN sets o[j] to NaN at the blind channels bl.
func blindNaN(o []float64, bl []int) {
	nan := math.NaN()
	for _, j := range bl {
		if j < len(o) {
			o[j] = nan
		}
	}
}

// row returns the blind channels of spectrum i (nil when none, or when b is
// nil), ascending.
func (b *Blind) row(i int) []int {
	if b == nil || i >= len(b.Rows) {
		return nil
	}
	return b.Rows[i]
}

// floorWeights keeps every weight positive (1e-12 of the largest): a row or
// channel with no observed point then carries no weight in practice while
// the scaled matrix √A D √B stays invertible.
func floorWeights(w []float64) {
	mx := 0.0
	for _, v := range w {
		mx = math.Max(mx, v)
	}
	if mx == 0 {
		mx = 1
	}
	for i, v := range w {
		if !(v > 1e-12*mx) {
			w[i] = 1e-12 * mx
		}
	}
}

// inputWeights are the weights of absorbance or difference input: one σ
// per channel, every spectrum alike, unless the spectra's own levels were
// found to differ (sn.Varies).
func inputWeights(n int, sigma []float64, sn *SpectrumNoise, blind *Blind) *Weights {
	if sn != nil && sn.Varies {
		return spectrumWeights(sigma, sn.Factor, blind)
	}
	return channelWeights(n, sigma, blind)
}

// channelWeights are the weights of absorbance or difference input: one σ
// per channel, every spectrum alike.
func channelWeights(n int, sigma []float64, blind *Blind) *Weights {
	m := len(sigma)
	return fitWeights(n, m, blind, func(i int, out []float64) {
		for j, s := range sigma {
			out[j] = s * s
		}
	})[0]
}

// NoiseNotes says, in the user's words, how far from uniform the noise is
// across the axis and where: channels whose σ exceeds nonUniform × the
// median, as axis ranges. Channels blind in every spectrum (blind.Everywhere)
// are left out: their weight is nil by design, not by noise, and the blind
// points' own note names them.
func NoiseNotes(axisName string, axis, sigma []float64, blind *Blind) []string {
	if len(sigma) == 0 {
		return nil
	}
	gone := blind.Everywhere(len(sigma))
	var seen []float64
	for j, s := range sigma {
		if !gone[j] {
			seen = append(seen, s)
		}
	}
	if len(seen) == 0 {
		return nil
	}
	med := median(seen)
	if !(med > 0) {
		return nil
	}
	mx := 0.0
	for _, s := range seen {
		mx = math.Max(mx, s)
	}
	if mx <= nonUniform*med {
		return nil
	}
	var ranges []string
	for _, r := range runsOf(len(sigma), func(j int) bool { return !gone[j] && sigma[j] > nonUniform*med }) {
		ranges = append(ranges, fmt.Sprintf("%s %g–%g", axisName, axis[r[0]], axis[r[1]]))
	}
	return []string{fmt.Sprintf("noise is far from uniform across the axis: up to %.3g× the median at %s (strong absorption or a detector edge, where little light reaches the detector); those points are weighted down by 1/σ² and matter little to the answer",
		mx/med, listSome(ranges, 4))}
}

// Everywhere marks the channels of m that are blind in every spectrum (all
// false for a nil b or one without spectra).
func (b *Blind) Everywhere(m int) []bool {
	out := make([]bool, m)
	if b == nil || len(b.Rows) == 0 {
		return out
	}
	cnt := make([]int, m)
	for _, r := range b.Rows {
		for _, j := range r {
			if j < m {
				cnt[j]++
			}
		}
	}
	for j, c := range cnt {
		out[j] = c == len(b.Rows)
	}
	return out
}

// nonUniform: a channel whose noise σ is 10× the median has 1 % of the
// median weight (1/σ²).
const nonUniform = 10

// runsOf returns the index runs [lo, hi] where f holds.
func runsOf(m int, f func(int) bool) [][2]int {
	var runs [][2]int
	for j := 0; j < m; j++ {
		if !f(j) {
			continue
		}
		if len(runs) > 0 && runs[len(runs)-1][1] == j-1 {
			runs[len(runs)-1][1] = j
		} else {
			runs = append(runs, [2]int{j, j})
		}
	}
	return runs
}

func listSome(items []string, most int) string {
	if len(items) <= most {
		return strings.Join(items, ", ")
	}
	return strings.Join(items[:most], ", ") + fmt.Sprintf(" and %d more range(s)", len(items)-most)
}

// BlindNotes describes the blind points compactly: channel ranges that
// hold any, with how many spectra and which times, e.g. "wavenumber
// 2290–2270 in 5 spectra (120–240 s)".
func BlindNotes(source, axisName string, axis, times []float64, b *Blind) []string {
	return blindNotes(source, axisName, axis, times, b, "a single beam not finite, at or below its noise, at the detector's ceiling, or ten times noisier than its channel's weight allows")
}

// blindNotes is BlindNotes with why the points hold no light in words
// (the input's kind decides how that is seen).
func blindNotes(source, axisName string, axis, times []float64, b *Blind, why string) []string {
	if b == nil || b.Count == 0 {
		return nil
	}
	m := len(axis)
	any := make([]bool, m)
	for _, r := range b.Rows {
		for _, j := range r {
			any[j] = true
		}
	}
	var parts []string
	everywhere := false
	for _, r := range runsOf(m, func(j int) bool { return any[j] }) {
		tlo, thi, ns := math.Inf(1), math.Inf(-1), 0
		for i, row := range b.Rows {
			k := sort.SearchInts(row, r[0])
			if k < len(row) && row[k] <= r[1] {
				ns++
				tlo, thi = math.Min(tlo, times[i]), math.Max(thi, times[i])
			}
		}
		where := fmt.Sprintf("%s %g–%g", axisName, axis[r[0]], axis[r[1]])
		if r[0] == r[1] {
			where = fmt.Sprintf("%s %g", axisName, axis[r[0]])
		}
		when := fmt.Sprintf("%g s", tlo)
		if thi > tlo {
			when = fmt.Sprintf("%g–%g s", tlo, thi)
		}
		if ns == len(b.Rows) {
			parts = append(parts, fmt.Sprintf("%s in every spectrum", where))
			everywhere = true
		} else {
			parts = append(parts, fmt.Sprintf("%s in %d spectra (%s)", where, ns, when))
		}
	}
	tail := "--exclude LO:HI cuts a range on purpose"
	if everywhere {
		// No spectrum holds a value there, so neither does the model: the
		// resolved spectra's zeros there are not measured zeros.
		tail = "where every spectrum is blind nothing was measured, and the resolved spectra are not determined there " +
			"(written as 0, which is not a measured zero); --exclude LO:HI leaves such a range out of the results"
	}
	return []string{fmt.Sprintf("%s: %d blind point(s) (no usable light: %s) at %s; they are left out of the fit (weight zero) and filled from the low-rank model; %s",
		source, b.Count, why, listSome(parts, 5), tail)}
}

// assembleSingleBeams is Assemble for single beams: blind points, the
// detector's noise, the weights of both matrices, then the absorbances.
func assembleSingleBeams(s *Series, opt AssembleOptions, ref []float64, out *Assembled) error {
	n, m := s.Values.Dims()
	bad := make([]bool, m)
	if err := checkBlankAndReferenceBeams(s, opt, ref, bad); err != nil {
		return err
	}
	scan, own, cnt := scanSingleBeams(s, opt, bad)
	blind := scan.blind
	if blind.Count > n*m/4 {
		// Not a few blind points but the wrong kind of data, or a
		// detector cut flat over much of the spectrum.
		if err := checkPositive(s.Values, s, "single beam"); err != nil {
			return err
		}
		return mostlyBlindBeams(s, blind.Count, scan.ceiling)
	}
	var refFile []float64
	if opt.Reference.File != nil {
		refFile = ref
	}
	if opt.BlankOffsetFree {
		blindClippedBeams(blind, scan.ceiling, refFile)
		out.BlankOffset = keepClippedBlank(blind, scan.ceiling, opt.Blank, n)
	} else {
		blindClippedBeams(blind, scan.ceiling, opt.Blank, refFile)
	}
	line := lineWeights(s.Times)
	if line != nil {
		own, cnt = nil, nil // the parse's scales are of plain second differences
	}
	sigI, q, src, sampling := channelNoiseOwn(s.Values, line, opt.Pre, blind, scan.quantum, own, cnt, true)
	blind.addWeakBelow(s.Values, sigI, scan.top)
	nref := referenceBeamCounts(s.Values, opt, out.ReferenceRows, blind, ref)
	blindWeakChannels(blind, ref, opt.Blank, sigI, nref)
	out.Warnings = append(out.Warnings, saturationWarningsAt(s, ref, opt.Blank, scan.channelMax)...)
	out.Blind = blind
	out.Noise = Noise{Level: median(sigI), Unit: "single-beam units", Source: src, Channel: sigI, Quantum: q, Sampling: sampling}
	refVar := referenceVariance(sigI, ref, nref)
	out.ReferenceVariance = make([]float64, m)
	for j, v := range refVar {
		out.ReferenceVariance[j] = v / (math.Ln10 * math.Ln10)
	}
	var sn *SpectrumNoise
	if spectraMayDiffer(s.Values, s.Times, sigI, blind) {
		sn = measureSpectrumNoise(s.Values, s.Times, sigI, blind, opt.Pre)
	}
	out.Noise.Spectra = sn
	v := newAbsorbanceVariances(s.Values, sigI, refVar, opt.Blank != nil)
	if sn != nil && sn.Varies {
		v = newAbsorbanceVariancesScaled(s.Values, sigI, refVar, opt.Blank != nil, sn.Factor)
	}
	placeAbsorbances(s.Values, opt, out)
	fitAbsorbanceWeights(s.Values, v, blind, opt.Blank != nil, out)
	writeAbsorbances(s, ref, opt.Blank, blind, out)
	out.Notes = append(out.Notes, BlindNotes(s.shown(), s.AxisName, s.Axis, s.Times, blind)...)
	if out.BlankOffset != nil {
		// A channel blind in every spectrum by a later rule holds no data.
		for j, gone := range blind.Everywhere(m) {
			out.BlankOffset[j] = out.BlankOffset[j] && !gone
		}
		out.Notes = append(out.Notes, blankOffsetNote(s.shown(), s.AxisName, s.Axis, out.BlankOffset)...)
	}
	return nil
}

// mostlyBlindBeams refuses single beams, all positive, of which more than
// a quarter of the points are blind: at the detector's ceiling (a flat top)
// or without usable light. What is left is too little to resolve, and the
// cure is at the spectrometer.
func mostlyBlindBeams(s *Series, count int, ceiling float64) error {
	n, m := s.Values.Dims()
	at, lo, hi := 0, m, -1
	if ceiling > 0 {
		for i := 0; i < n; i++ {
			for j, x := range s.Values.RawRowView(i) {
				if x >= ceiling {
					at, lo, hi = at+1, min(lo, j), max(hi, j)
				}
			}
		}
	}
	why := "without usable light"
	if at > 0 {
		why = fmt.Sprintf("%d at the detector's ceiling %g (%s %g to %g), where the beam is cut flat (a saturated detector)", at, ceiling, s.AxisName, s.Axis[lo], s.Axis[hi])
		if at < count {
			why += fmt.Sprintf("; %d without usable light", count-at)
		}
	}
	return inputErr(s.Source, 0, "measure again with the single beam below the detector's limit (less gain, a weaker source or a smaller aperture), or leave the range out with --exclude LO:HI",
		"%d of %d points (%.0f %%) are blind, %s: more than a quarter of the data hold no absorbance", count, n*m, 100*float64(count)/float64(n*m), why)
}

// blindClippedBeams makes blind in every spectrum each channel where a blank
// or a reference file (nil: none) stands at the detector's ceiling, the
// series' flat top (0: none found, and nothing is done). The series' points
// at the ceiling are blind already (findBlindTops); a ratio to a clipped
// blank is as wrong, an absorbance low by the light the ceiling cut off, in
// every spectrum. A blank's own run of equal values at its maximum is not
// taken for a ceiling: a noiseless or constant blank has one too.
func blindClippedBeams(blind *Blind, ceiling float64, beams ...[]float64) {
	if !(ceiling > 0) {
		return
	}
	for _, b := range beams {
		for j, x := range b {
			if x >= ceiling {
				blind.addChannel(j)
			}
		}
	}
}

// keepClippedBlank marks the channels where the blank stands at the
// detector's ceiling (ceiling 0: none) but the sample's beams come under it
// in at least half the spectra, and makes the rest of the clipped blank's
// channels blind in every spectrum. There A = −log10(I/I_ceiling) is the true
// absorbance less δ_j = log10(I_blank/I_ceiling) ≥ 0, one offset per channel
// constant in time, which closure absorbs in the species' spectra (Σ_k c_k = 1
// gives C (S − δ1ᵀ)ᵀ = C Sᵀ − 1δᵀ): the sample's points are data, not blind.
// A channel at the ceiling in more than half its spectra is filled from its
// few measured values, and the fill does not know that the beams it stands
// for were at the ceiling: on an invented series clipped at 95 % of the
// source's peak, keeping such channels left the constrained fit 10 times the
// noise and an offset baseline was taken for a background (a species'
// spectrum at cosine 0.62 to the truth, against 0.994 with them blind).
func keepClippedBlank(blind *Blind, ceiling float64, blank []float64, n int) []bool {
	if !(ceiling > 0) {
		return nil
	}
	var cnt []int
	var kept []bool
	for j, x := range blank {
		if x < ceiling {
			continue
		}
		if cnt == nil {
			cnt, kept = capsPerChannel(blind, len(blank)), make([]bool, len(blank))
		}
		if 2*cnt[j] > n {
			blind.addChannel(j)
			continue
		}
		kept[j] = true
	}
	if !slices.Contains(kept, true) {
		return nil
	}
	return kept
}

// blankOffsetNote says where the blank stood at the ceiling and the sample's
// points were kept (keepClippedBlank), and what that leaves undetermined.
func blankOffsetNote(source, axisName string, axis []float64, kept []bool) []string {
	var parts []string
	count := 0
	for _, r := range runsOf(len(kept), func(j int) bool { return kept[j] }) {
		count += r[1] - r[0] + 1
		if r[0] == r[1] {
			parts = append(parts, fmt.Sprintf("%s %g", axisName, axis[r[0]]))
		} else {
			parts = append(parts, fmt.Sprintf("%s %g–%g", axisName, axis[r[0]], axis[r[1]]))
		}
	}
	if count == 0 {
		return nil
	}
	return []string{fmt.Sprintf("%s: the blank single beam is at the detector's ceiling at %s (%d channel(s)) while the sample's beams come under it: "+
		"there the absorbance is taken against the ceiling, low by one unknown amount per channel, the same in every spectrum, which closure carries into every species' spectrum; "+
		"the profiles and the differences between the species' spectra are determined there, each spectrum only up to that common amount: "+
		"the spectra shown are the lowest the physics allows (the true blank is at least the ceiling, and no spectrum is negative), and the true ones may lie higher by one amount per channel, common to all species",
		source, listSome(parts, 5), count)}
}

// checkBlankAndReferenceBeams refuses a blank or a reference file that is not a
// single beam (absorbance given where intensities are expected), and marks its
// unusable channels in bad.
func checkBlankAndReferenceBeams(s *Series, opt AssembleOptions, ref []float64, bad []bool) error {
	if opt.Blank != nil {
		src := opt.BlankSource
		if src == "" {
			src = "blank"
		}
		if j := mostlyUnusable(opt.Blank, bad); j >= 0 {
			return inputErr(src, 0, "a blank must be a single beam (positive intensities), not absorbance", "blank intensity %g at %s %g", opt.Blank[j], s.AxisName, s.Axis[j])
		}
	}
	if opt.Reference.File != nil {
		if j := mostlyUnusable(ref, bad); j >= 0 {
			return inputErr(opt.Reference.File.Source, 0, "a reference for single beams must be a single beam too (positive intensities)", "reference intensity %g at %s %g", ref[j], s.AxisName, s.Axis[j])
		}
	}
	return nil
}

// scanSingleBeams gives the maxima, the blind points, the channels'
// brightest observed beams and the rounding step in one pass over the beams
// rather than four, or from the parse's scan of each channel with the noise
// model's own scales (the same values).
func scanSingleBeams(s *Series, opt AssembleOptions, bad []bool) (beamScan, []float64, []int) {
	scan, own, cnt, scanned := s.scan.usable(s.Values, opt.Pre).complete(bad)
	if !scanned {
		scan, own, cnt = scanBeams(s.Values, bad), nil, nil
	}
	if opt.Consume {
		s.scan = nil
	}
	return scan, own, cnt
}

// referenceBeamCounts returns how many observed beams each channel of the
// reference averages: a reference file counts as one, a reference formed from
// the series' own rows as many of them as are not blind there.
func referenceBeamCounts(v *mat.Dense, opt AssembleOptions, rows []int, blind *Blind, ref []float64) []float64 {
	_, m := v.Dims()
	nref := make([]float64, m)
	if opt.Reference.File != nil {
		for j := range nref {
			nref[j] = 1
		}
	} else {
		meanObserved(v, rows, blind, ref, nref)
	}
	return nref
}

// blindWeakChannels makes blind every channel whose reference or blank beam
// is neither clear of its noise nor a fair fraction of the typical beam: a
// ratio to a beam that weak says nothing of the sample.
func blindWeakChannels(blind *Blind, ref, blank, sigI, nref []float64) {
	med, medBlank := median(ref), 0.0
	if blank != nil {
		medBlank = median(blank)
	}
	for j := range nref {
		weakRef := nref[j] == 0 || !(ref[j] > weakSigmas*sigI[j]/math.Sqrt(nref[j]) || ref[j] > weakBeamFraction*med)
		weakBlank := blank != nil && !(blank[j] > weakSigmas*sigI[j] || blank[j] > weakBeamFraction*medBlank)
		if weakRef || weakBlank {
			blind.addChannel(j)
		}
	}
}

// referenceVariance is the reference's share of each channel's relative
// variance, (σ_I/I_ref)²/n_ref: the same in every spectrum.
func referenceVariance(sigI, ref, nref []float64) []float64 {
	refVar := make([]float64, len(sigI))
	for j := range refVar {
		refVar[j] = sq(sigI[j]/ref[j]) / nref[j]
	}
	return refVar
}

// absorbanceVariances are the variance models of the absorbances, one row
// at a time, as the weight fits ask for them.
type absorbanceVariances struct {
	nf   int // 1: differences only; 2: differences and absolute absorbances
	vars func(i int, o []float64)
	// logVars, when not nil, gives vars's values and their logarithms, for
	// the first pass of a fit.
	logVars func(i int, o []float64) bool
	// abs is the absolute absorbances' variance alone, for the test of
	// overweighted points.
	abs func(i int, o []float64)
}

// newAbsorbanceVariances forms the variances a row at a time with the
// divisions four at once (vecmath: the bits of Go's division), in the order
// of the formula: (σ_I/I)², plus the reference's share, over ln²10. The
// blank's own noise is one fixed pattern in every absolute spectrum; with
// closure (Σ c_k = 1) the spectra absorb it (s_k + e for every k), so it is
// no part of the residual and is left out of the absolute weights: only σ_I/I
// of each spectrum's own beam. With a blank both sets of weights are formed
// in the same passes, σ_I/I taken once for both.
func newAbsorbanceVariances(values *mat.Dense, sigI, refVar []float64, blank bool) *absorbanceVariances {
	_, m := values.Dims()
	const ln10sq = math.Ln10 * math.Ln10
	diffVar := func(i int, o []float64) {
		o = o[:m]
		vecmath.Quo(o, sigI, values.RawRowView(i))
		for j, q := range o {
			o[j] = sq(q) + refVar[j]
		}
		vecmath.QuoBy(o, o, ln10sq)
	}
	absVar := func(i int, o []float64) {
		o = o[:m]
		vecmath.Quo(o, sigI, values.RawRowView(i))
		for j, q := range o {
			o[j] = sq(q)
		}
		vecmath.QuoBy(o, o, ln10sq)
	}
	v := &absorbanceVariances{nf: 1, vars: diffVar, abs: absVar}
	if blank {
		v.nf = 2
		// diffVar's values, then absVar's, in one pass (vecmath: the same
		// roundings in the same order), and for the first pass of a fit
		// their logarithms too.
		v.vars = func(i int, o []float64) {
			vecmath.QuoSquares(o[:m], o[m:2*m], sigI, values.RawRowView(i), refVar, ln10sq)
		}
		v.logVars = func(i int, o []float64) bool {
			return vecmath.LogQuoSquares(o[:m], o[m:2*m], sigI, values.RawRowView(i), refVar, ln10sq)
		}
	}
	return v
}

// newAbsorbanceVariances with each spectrum's detector noise its own, f_i
// σ_I,j (measureSpectrumNoise): the scans co-added change during a run, and
// with them the noise of the single beams. The reference's share stays as
// measured. Only for spectra whose levels differ: equally noisy beams keep
// newAbsorbanceVariances' bits.
func newAbsorbanceVariancesScaled(values *mat.Dense, sigI, refVar []float64, blank bool, factor []float64) *absorbanceVariances {
	// Row i's variances are newAbsorbanceVariances' with σ_I scaled by f_i
	// (the functions are called for many rows at once: no shared buffer).
	row := func(i int) *absorbanceVariances {
		sig := make([]float64, len(sigI))
		for j, x := range sigI {
			sig[j] = factor[i] * x
		}
		return newAbsorbanceVariances(values, sig, refVar, blank)
	}
	v := &absorbanceVariances{nf: 1}
	v.vars = func(i int, o []float64) { row(i).vars(i, o) }
	v.abs = func(i int, o []float64) { row(i).abs(i, o) }
	if blank {
		v.nf = 2
		v.logVars = func(i int, o []float64) bool { return row(i).logVars(i, o) }
	}
	return v
}

// placeAbsorbances gives out the matrices the absorbances go to. With Consume
// one of them is written in place of the single beams (each value is read
// before it is overwritten): the absolute one when there is a blank, else the
// differences. absorbances writes every value of both, so new ones need not
// be cleared first, and until then the weight fits' buffers may use the
// differences' memory.
func placeAbsorbances(values *mat.Dense, opt AssembleOptions, out *Assembled) {
	n, m := values.Dims()
	switch {
	case opt.Blank != nil && opt.Consume:
		out.Absolute, out.Difference = values, fresh.Overwritten(n, m)
	case opt.Blank != nil:
		out.Absolute, out.Difference = fresh.Overwritten(n, m), fresh.Overwritten(n, m)
	case opt.Consume:
		out.Difference = values
	default:
		out.Difference = fresh.Overwritten(n, m)
	}
}

// fitAbsorbanceWeights fits the noise weights of both matrices; the points
// the difference weights overweight become blind, and then both are fitted
// again. absVar ≤ diffVar at every point (refVar ≥ 0, and rounding keeps the
// order), so the first fit's peaks bound the products addOverweighted tests:
// only rows whose bound reaches the threshold are looked at.
func fitAbsorbanceWeights(values *mat.Dense, v *absorbanceVariances, blind *Blind, blank bool, out *Assembled) {
	n, m := values.Dims()
	pieces := newRowPieces(v.nf * m)
	if out.Difference != values {
		pieces.borrow(out.Difference.RawMatrix().Data)
	}
	w, peak := fitWeightsReusing(pieces, n, m, v.nf, blind, v.vars, v.logVars)
	if w[0] != nil && blind.addOverweightedIn(w[0], v.abs, peak) {
		w, _ = fitWeightsReusing(pieces, n, m, v.nf, blind, v.vars, v.logVars)
	}
	out.DifferenceWeights = w[0]
	if blank {
		out.AbsoluteWeights = w[1]
	}
}

// writeAbsorbances forms both matrices from the beams and fills their blind
// points from the low-rank model.
func writeAbsorbances(s *Series, ref, blank []float64, blind *Blind, out *Assembled) {
	finite, absTop := absorbances(s.Values, ref, blank, out.Difference, out.Absolute, blind)
	fillBlind(out.Difference, blind, s.Times)
	if out.Absolute != nil {
		fillBlind(out.Absolute, blind, s.Times)
		// The placeholders count in the largest value as the values they
		// stand for did not.
		for i, r := range blind.Rows {
			a := out.Absolute.RawRowView(i)
			for _, j := range r {
				if a[j] > absTop[j] {
					absTop[j] = a[j]
				}
			}
		}
		out.AbsoluteTop = absTop
	}
	// A placeholder is finite when the observed values it is made of are
	// (they are absorbances, far from overflow), or 0: the check holds.
	out.Finite = finite
}

func sq(x float64) float64 { return x * x }

// mostlyUnusable marks the channels where a blank or reference beam is not
// a positive finite number in bad; when more than a quarter are, it is not
// a single beam at all and the index of the first such value is returned
// (else −1).
func mostlyUnusable(beam []float64, bad []bool) int {
	first, cnt := -1, 0
	for j, v := range beam {
		if !(v > 0) || math.IsInf(v, 0) {
			bad[j] = true
			cnt++
			if first < 0 {
				first = j
			}
		}
	}
	if cnt > len(beam)/4 {
		return first
	}
	return -1
}

// meanObserved averages the observed values of the given rows per channel
// into dst, and their count into cnt (0 where every one is blind).
func meanObserved(v *mat.Dense, rows []int, b *Blind, dst, cnt []float64) {
	for j := range dst {
		dst[j], cnt[j] = 0, 0
	}
	for _, i := range rows {
		row := v.RawRowView(i)
		for j := range dst {
			if !b.Has(i, j) {
				dst[j] += row[j]
				cnt[j]++
			}
		}
	}
	for j := range dst {
		if cnt[j] > 0 {
			dst[j] /= cnt[j]
		} else {
			dst[j] = 1 // placeholder: the channel is blind everywhere
		}
	}
}

// addChannel makes channel j blind in every spectrum, and says whether it
// was not already.
func (b *Blind) addChannel(j int) bool {
	added := false
	for i, r := range b.Rows {
		k := sort.SearchInts(r, j)
		if k < len(r) && r[k] == j {
			continue
		}
		r = append(r, 0)
		copy(r[k+1:], r[k:])
		r[k] = j
		b.Rows[i] = r
		b.Count++
		added = true
	}
	return added
}

// StackWeights joins the weights of experiments stacked by rows (a
// column-wise augmented matrix). Experiments share the channels, so one
// column weight is kept: log b_j is the row-weighted mean of theirs, and
// each experiment's row weights take over the difference on average
// (exp of the mean over channels of log(b_j^(e)/b_j)); the result is the
// row × column fit of the experiments' own fits. nil when any is nil.
func StackWeights(parts []*Weights) *Weights {
	if len(parts) == 0 {
		return nil
	}
	for _, p := range parts {
		if p == nil {
			return nil
		}
	}
	if len(parts) == 1 {
		return parts[0]
	}
	m := len(parts[0].Col)
	out := &Weights{Col: make([]float64, m)}
	tot := 0
	for _, p := range parts {
		tot += len(p.Row)
	}
	for j := 0; j < m; j++ {
		s := 0.0
		for _, p := range parts {
			s += float64(len(p.Row)) * math.Log(p.Col[j])
		}
		out.Col[j] = math.Exp(s / float64(tot))
	}
	for _, p := range parts {
		d := 0.0
		for j := 0; j < m; j++ {
			d += math.Log(p.Col[j] / out.Col[j])
		}
		f := math.Exp(d / float64(m))
		for _, a := range p.Row {
			out.Row = append(out.Row, a*f)
		}
	}
	return out
}

// StackBlind joins the blind points of experiments stacked by rows; nil
// when none has any.
func StackBlind(parts []*Blind, rows []int) *Blind {
	out := &Blind{}
	for e, p := range parts {
		if p == nil {
			out.Rows = append(out.Rows, make([][]int, rows[e])...)
			continue
		}
		out.Rows = append(out.Rows, p.Rows...)
		out.Count += p.Count
	}
	if out.Count == 0 {
		return nil
	}
	return out
}

// overweighted: a point whose noise variance is this many times what its
// row × column weight assumes (σ 10× larger) would be counted a hundred times
// too much. Such points are a nearly dark corner of the matrix (a band
// that grows to absorbance 2 or more late in the run: 1 % of the light);
// they carry little information, and the shared weights cannot describe
// them, so they are left out like blind points.
const overweighted = 100

// addOverweighted marks the points whose variance (from variance) exceeds
// overweighted/(a_i b_j) as blind, and says whether there were any.
func (b *Blind) addOverweighted(w *Weights, variance func(i int, out []float64)) bool {
	return b.addOverweightedIn(w, variance, nil)
}

// addOverweightedIn is addOverweighted over the rows whose bound peak[i] on
// w.Row[i]·w.Col[j]·variance does not rule an overweighted point out (every
// row when peak is nil).
func (b *Blind) addOverweightedIn(w *Weights, variance func(i int, out []float64), peak []float64) bool {
	n, m := len(w.Row), len(w.Col)
	added := make([]int, n) // per row, so that rows can be done in parallel
	bufs := newScratch(m)
	eachRowBlock(n, m, func(r0, r1 int) {
		buf := bufs.get()
		defer bufs.put(buf)
		for i := r0; i < r1; i++ {
			if peak != nil && peak[i] <= overweighted {
				continue // no product in the row can exceed it
			}
			variance(i, buf)
			// Membership is tested against the row's blind channels as they
			// were (ascending); the points added go after them.
			bl := b.Rows[i]
			next := 0
			for j, v := range buf {
				for next < len(bl) && bl[next] < j {
					next++
				}
				if w.Row[i]*w.Col[j]*v > overweighted && !(next < len(bl) && bl[next] == j) {
					b.Rows[i] = append(b.Rows[i], j)
					added[i]++
				}
			}
			if len(b.Rows[i]) > len(bl) {
				sort.Ints(b.Rows[i])
			}
		}
	})
	total := 0
	for _, k := range added {
		total += k
	}
	b.Count += total
	return total > 0
}

// raiseTo raises each entry of top to the block's maximum bt under mu: the
// largest of the blocks' maxima is the same whatever order they come in.
func raiseTo(mu *sync.Mutex, top, bt []float64) {
	mu.Lock()
	defer mu.Unlock()
	for j, x := range bt {
		if x > top[j] {
			top[j] = x
		}
	}
}

// ChannelNoiseWithout is the noise per channel the estimator of
// channelNoise finds in v (spectra at times, pre before the reaction, blind
// points left out) with the rows aside left out and, beside it, with them:
// a row left out is blind at every channel, so no difference in time that
// touches it counts (the estimator's own rule for points without data).
// A spectrum an outlier screen set aside (a bubble, gas lines) is no noise
// of the others: its differences are several times the noise in 3 of the
// n − 2 second differences of each channel, and move the median absolute
// value up. The ratio of the two is the caller's to apply to an estimate
// made before the screen. A pre-reaction spectrum set aside breaks the
// steps it is part of: each is taken to the next one kept
// (preRowsWithData), and with fewer than two kept the noise is the second
// differences' in time; keptSource says how kept was measured.
func ChannelNoiseWithout(v *mat.Dense, times []float64, pre int, blind *Blind, aside []int) (kept, all []float64, keptSource string) {
	n, m := v.Dims()
	line := lineWeights(times)
	all, _, _, _ = channelNoiseSpaced(v, line, pre, blind)
	out := &Blind{Rows: make([][]int, n)}
	if blind != nil {
		copy(out.Rows, blind.Rows)
	}
	every := make([]int, m)
	for j := range every {
		every[j] = j
	}
	for _, i := range aside {
		if i >= 0 && i < n {
			out.Rows[i] = every
		}
	}
	for _, cols := range out.Rows {
		out.Count += len(cols)
	}
	kept, _, keptSource, _ = channelNoiseSpaced(v, line, pre, out)
	return kept, all, keptSource
}
