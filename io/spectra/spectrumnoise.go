package spectra

import (
	"fmt"
	"math"
	"slices"

	"github.com/bandsolve/bandsolve/internal/product"
	"github.com/bandsolve/bandsolve/internal/pvalue"
	"gonum.org/v1/gonum/mat"
)

// Noise per spectrum of absorbance and difference input.
//
// The channel noise σ_j (channelNoise) pools every spectrum's differences in
// time, so it is one level for the whole series. Spectra differ when the
// number of scans co-added changes with the interval, a detector warms up
// or a purge settles; a fit that gives them one weight over-trusts the
// noisy ones. Each spectrum's level is measured from the same differences:
// e_ij = r_ij/σ_j, r the time difference rowDiff gives (spectrum i less the
// straight line through its neighbours), its second difference along the
// axis h_ij (alongAxis: what is not noise in r, a reaction fast beside the
// sampling, a baseline or water-vapour course, is smooth along the axis),
// and s_ib = 1.4826·median |h_ij| over each of spectrumBlocks blocks of
// channels.
// A robust scale of m independent points has the relative standard error
// 1/√(0.37·2m) = 1.17/√m: the median absolute deviation has 37 % of the
// standard deviation's Gaussian efficiency (Rousseeuw & Croux, JASA 88,
// 1993), whose relative error is 1/√(2m). A spectrum's level is the median
// over the blocks of its scale against each block's median over the spectra
// (rowLevels), which leaves out what is not noise in fewer than half the
// blocks at the price of the median's efficiency (at least 2/π): 1.47/√m,
// and 1.39 times that for the correlation the second difference along the
// axis brings (alongAxis), 2.5 % at m = 6950 channels, 5 % in the weight,
// which costs the fit about the square of it, 0.25 % of its variance (common
// practice: weights with relative error δ lose about δ² of the efficiency of
// the exact ones; from memory). So the levels are
// pooled over the whole axis and need no smoothing in time for precision;
// they take the running median of five spectra (medianInTime) for
// robustness: one spectrum unlike the rest would otherwise set its own
// noise, and a series with fewer than diffsWanted channels is not judged.
//
// The residual of spectrum i mixes its neighbours' noise: for white noise
// of variance v_k in spectrum k, E s_i² = (a²v_{i−1} + v_i + (1−a)²v_{i+1})/
// (1 + a² + (1−a)²), a the line weight (½ at equal intervals). The v_i are
// found from the s_i² by solving that tridiagonal system, with the first
// and last spectrum taken as noisy as their neighbour (they enter one
// residual each); the system is strictly diagonally dominant, so the
// solution is unique and the elimination stable.
//
// Equal levels are the rule, and then every output keeps its bits: the row
// weights change only when a test says the spectra differ. The test is the
// analysis of variance of log scales (Bartlett & Kendall, J. R. Stat. Soc.
// Suppl. 8, 1946: the log of a sample scale has a variance that does not
// depend on the scale): y_ib = log s_ib, and the F-test of the spectra's
// effect in the two-way layout of spectra by blocks without replication
// (row mean square over the interaction mean square, (k−1, (k−1)(B−1))
// degrees of freedom; Fisher; e.g. Montgomery, Design and Analysis of
// Experiments, ch. 5; from memory). The interaction measures the sampling
// error from the data, so noise correlated along the axis (which lowers the
// effective number of points) does not fake a difference. Neighbouring
// residuals share spectra and so are correlated; the test takes every third
// spectrum, whose residuals share none, in each of the three ways, at level
// spectrumAlpha/3 each (Bonferroni). The second difference along the axis
// keeps a reaction's curvature in time out of the test as well as out of
// the levels: on invented series whose reaction moves the bands by several
// times the noise between spectra the test keeps its level.

// spectrumBlocks is the number of blocks of channels the test of equal
// levels cuts the axis into.
const spectrumBlocks = 8

// spectrumAlpha is the level of that test: a false alarm changes every
// output of data whose spectra are equally noisy, so the level is strict.
const spectrumAlpha = 0.001

// spectrumLeast is the smallest ratio of the noisiest to the quietest
// spectrum's σ for which the weights follow the spectra: for two equal
// groups with σ ratio r the unweighted mean has 4r²/(1 + r²)² of the
// weighted one's efficiency (Aitken's weighted least squares), 99 % at
// r = 1.1, so a smaller difference is not worth new output.
const spectrumLeast = 1.1

// SpectrumNoise is the noise level of each spectrum of absorbance or
// difference input and the test of equal levels.
type SpectrumNoise struct {
	// Factor is σ_i/σ_j per spectrum: the noise of spectrum i is Factor[i]
	// times the channel noise the model pools over all spectra.
	Factor []float64
	// F, DF1, DF2 and P are the test of equal levels (the subset of every
	// third spectrum with the smallest P; P already × 3, Bonferroni).
	F, DF1, DF2, P float64
	// Varies says the weights follow Factor (P < spectrumAlpha and the
	// noisiest spectrum at least spectrumLeast times the quietest).
	Varies bool
	// Sampling is the variance of log Factor[i] about the truth from the
	// estimate's own sampling (factorSampling), when Varies (0 otherwise,
	// where the weights do not follow Factor): the spectra's weights are
	// estimates, and their scatter raises the expected χ² of a right
	// model (the misfit test's allowance).
	Sampling float64
}

// Ratio is the noisiest spectrum's σ over the quietest's.
func (s *SpectrumNoise) Ratio() float64 {
	lo, hi := math.Inf(1), 0.0
	for _, f := range s.Factor {
		lo, hi = math.Min(lo, f), math.Max(hi, f)
	}
	if !(lo > 0) {
		return 0
	}
	return hi / lo
}

// Test says in words how the levels were compared.
func (s *SpectrumNoise) Test() string {
	return fmt.Sprintf("F-test of equal noise in every spectrum (analysis of variance of log noise scales by spectrum and by %d blocks of channels; Bartlett & Kendall 1946), F = %.3g on (%g, %g) degrees of freedom, %s", spectrumBlocks, s.F, s.DF1, s.DF2, pvalue.Text(s.P))
}

// measureSpectrumNoise measures each spectrum's noise level of v (n × m,
// times for the line weights, blind points left out) against the channel
// noise sigma, which was pooled over the differences of rows [0, pre) when
// pre ≥ 2, else over all rows' second differences. nil when the series is
// too small to judge (fewer than 8 spectra or diffsWanted points a
// spectrum) or a spectrum has no noise (rounded to constant).
func measureSpectrumNoise(v *mat.Dense, times, sigma []float64, blind *Blind, pre int) *SpectrumNoise {
	n, m := v.Dims()
	if n < 8 || m < diffsWanted || len(sigma) != m {
		return nil
	}
	d := timeDiffs{v: v, blind: blind, line: lineWeights(times)}
	rows := n - 2
	logs := make([][spectrumBlocks]float64, rows)
	var plain [][spectrumBlocks]float64
	if pre >= 2 {
		plain = make([][spectrumBlocks]float64, rows)
	}
	ok := make([]bool, rows)
	product.FixedBlocks(rows, 4, func(r0, r1 int) {
		e, use, abs := make([]float64, m), make([]bool, m), make([]float64, 0, m)
		for r := r0; r < r1; r++ {
			ok[r] = rowScales(d, r+1, sigma, e, use, abs, &logs[r]) &&
				(plain == nil || plainScales(e, use, abs, &plain[r]))
		}
	})
	for _, good := range ok {
		if !good {
			return nil
		}
	}
	out := &SpectrumNoise{P: math.Inf(1)}
	for first := range 3 {
		if f, d1, d2, p := equalScaleTest(logs, first); p < out.P {
			out.F, out.DF1, out.DF2, out.P = f, d1, d2, p
		}
	}
	out.P = math.Min(1, 3*out.P)
	centre := blockCentres(logs)
	vars := medianInTime(unmixVariances(levelsAgainst(logs, centre), d.line), 2)
	var c float64
	if pre >= 2 {
		c = seriesScale(logs, plain, centre)
	} else {
		c = pooledScale(vars, d.line)
	}
	out.Factor = make([]float64, n)
	for i, x := range vars {
		out.Factor[i] = c * math.Sqrt(x)
	}
	out.Varies = out.P < spectrumAlpha && out.Ratio() >= spectrumLeast
	if out.Varies {
		out.Sampling = factorSampling(logs, centre, d.line)
	}
	return out
}

// factorSampling is the sampling variance of a spectrum's log noise factor,
// measured by splitting the blocks of channels in two (even and odd): each
// half gives every spectrum's level as measureSpectrumNoise does (relative
// to the block centres, unmixed, the running median in time), and the
// difference of the two halves' log factors has four times the variance
// of the whole's (each half has half the blocks; a scale's variance goes
// as one over its values; split-half reliability, common practice). The
// robust variance (madScale × the median absolute deviation, squared)
// keeps a spectrum unlike its neighbours out.
func factorSampling(logs [][spectrumBlocks]float64, centre [spectrumBlocks]float64, line []float64) float64 {
	var half [2][]float64
	for p := range half {
		lv := make([]float64, len(logs))
		row := make([]float64, 0, spectrumBlocks/2)
		for r, l := range logs {
			row = row[:0]
			for b := p; b < spectrumBlocks; b += 2 {
				row = append(row, l[b]-centre[b])
			}
			lv[r] = math.Exp(medianInPlace(row))
		}
		half[p] = medianInTime(unmixVariances(lv, line), 2)
	}
	diff := make([]float64, len(half[0]))
	for i := range diff {
		diff[i] = 0.5 * math.Log(half[0][i]/half[1][i])
	}
	return robustVariance(diff) / 4
}

// screenWindow is the width of each of the spectrumBlocks windows of
// channels spectraMayDiffer reads: 8 × 62 channels, 60 second differences
// along the axis each, 480 in all, above the diffsWanted a row's scales
// need.
const screenWindow = 62

// screenRows bounds the spectra spectraMayDiffer reads to about 200 (every
// third, or fewer on a long series): the test's power grows with them, its
// cost too.
const screenRows = 600

// screenAlpha is the level at which spectraMayDiffer lets the full measure
// run: looser than the measure's own test (spectrumAlpha after Bonferroni),
// so that a series the full measure would find differing is not screened
// out for the screen's lesser power.
const screenAlpha = 0.01

// spectraMayDiffer is a cheap first look, for single beams, at whether
// spectra differ in noise: the test of measureSpectrumNoise (equalScaleTest)
// on every third spectrum (at most about 200) and on spectrumBlocks windows of screenWindow
// channels spread over the axis, about a twentieth of its work on a series
// of thousands of channels (on 2000 × 3001 beams the full measure took
// about 0.1 s of CPU, a fifth of the whole run). Only where this rejects at
// screenAlpha is the full measure made; its own test then decides. A series
// with blind points, or too few channels for the windows, is not screened.
func spectraMayDiffer(v *mat.Dense, times, sigma []float64, blind *Blind) bool {
	n, m := v.Dims()
	if blind != nil && blind.Count > 0 || m < spectrumBlocks*screenWindow || n < 8 {
		return true
	}
	cols := make([]int, 0, spectrumBlocks*screenWindow)
	for b := 0; b < spectrumBlocks; b++ {
		start := (2*b + 1) * m / (2 * spectrumBlocks)
		for c := start - screenWindow/2; c < start+screenWindow/2; c++ {
			cols = append(cols, c)
		}
	}
	sig := make([]float64, len(cols))
	for k, c := range cols {
		sig[k] = sigma[c]
		if k%screenWindow == 0 || k%screenWindow == screenWindow-1 {
			sig[k] = 0 // a window's edges: no second difference across windows
		}
	}
	// The three rows of each difference, the windows' channels only.
	three := mat.NewDense(3, len(cols), nil)
	line := lineWeights(times)
	e, use, abs := make([]float64, len(cols)), make([]bool, len(cols)), make([]float64, 0, len(cols))
	var logs [][spectrumBlocks]float64
	stride := 3 * max(1, n/screenRows) // rows whose differences share no spectrum
	for i := 1; i+1 < n; i += stride {
		for r := 0; r < 3; r++ {
			src, dst := v.RawRowView(i-1+r), three.RawRowView(r)
			for k, c := range cols {
				dst[k] = src[c]
			}
		}
		d := timeDiffs{v: three}
		if line != nil {
			d.line = line[i-1 : i]
		}
		var l [spectrumBlocks]float64
		if !rowScales(d, 1, sig, e, use, abs, &l) {
			return true
		}
		logs = append(logs, l)
	}
	// The rows are every third or further apart already: equalScaleTest's
	// own stride of 3 over a list of them, from each of its three starts,
	// covers them all.
	best := 1.0
	for first := range 3 {
		if _, _, _, p := equalScaleTest(logs, first); p < best {
			best = p
		}
	}
	return best < screenAlpha && segmentRatio(rowLevels(logs)) >= spectrumLeast
}

// segmentRatio is the largest over the least of the median levels of
// screenSegments runs of consecutive rows: the scans co-added change in
// steps that last, which each run's median keeps while it averages the
// rows' own scatter (about 7 % each from 480 channels) to about 1.5 %. A
// few rows unlike the rest leave it, which the full measure would weigh:
// the screen lets pass only what lasts.
func segmentRatio(levels []float64) float64 {
	k := len(levels)
	if k < screenSegments {
		return math.Inf(1)
	}
	lo, hi := math.Inf(1), 0.0
	for g := 0; g < screenSegments; g++ {
		run := slices.Clone(levels[g*k/screenSegments : (g+1)*k/screenSegments])
		x := medianInPlace(run)
		lo, hi = math.Min(lo, x), math.Max(hi, x)
	}
	if !(lo > 0) {
		return math.Inf(1)
	}
	return hi / lo
}

// screenSegments is how many runs of rows segmentRatio compares.
const screenSegments = 8

// medianInTime is the running median of each spectrum's noise variance
// and its h neighbours on each side (fewer at the ends). A detector's noise
// changes in steps where the scans co-added change, which the median keeps;
// one spectrum unlike the rest would otherwise set its own weight: a bubble
// or a dilution (the sample's bands scaled, whose sharp curvature a second
// difference along the axis keeps) raises its noise and hides it behind a
// lower weight from the outlier screen (a bubble at 0.22 absorbance on a
// real series read 1.57 times its neighbours' noise), and a level read low
// by chance sets a good spectrum aside (the real catalyst-1.00 series' at
// 2095 s, 0.485 between 0.533 and 0.516, at 1.84 times the typical residual).
func medianInTime(v []float64, h int) []float64 {
	out := make([]float64, len(v))
	w := make([]float64, 0, 2*h+1)
	for i := range v {
		w = append(w[:0], v[max(0, i-h):min(len(v), i+h+1)]...)
		out[i] = medianInPlace(w)
	}
	return out
}

// rowScales sets, for spectrum i, the log of the robust scale of its time
// difference in units of the channel noise, high-passed along the axis
// (alongAxis), over each block of channels; false when fewer than
// diffsWanted points are left or a scale is zero. e, use and abs are the
// caller's buffers of m values (abs: capacity); e is left divided by sigma
// where use says.
func rowScales(d timeDiffs, i int, sigma, e []float64, use []bool, abs []float64, logs *[spectrumBlocks]float64) bool {
	d.rowDiff(i, e)
	for j, s := range sigma {
		use[j] = s > 0 && !d.blind.Has(i-1, j) && !d.blind.Has(i, j) && !d.blind.Has(i+1, j)
		if use[j] {
			e[j] /= s
		}
	}
	abs = alongAxis(e, use, abs[:0])
	return blockLogScales(abs, logs)
}

// plainScales sets the log of the robust scale of e where use says, not
// high-passed, over each block of channels (seriesScale).
func plainScales(e []float64, use []bool, abs []float64, logs *[spectrumBlocks]float64) bool {
	abs = abs[:0]
	for j, u := range use {
		if u {
			abs = append(abs, math.Abs(e[j]))
		}
	}
	return blockLogScales(abs, logs)
}

// blockLogScales sets the log of madScale × the median of abs over each of
// spectrumBlocks consecutive blocks; false when fewer than diffsWanted
// values are given or a scale is zero.
func blockLogScales(abs []float64, logs *[spectrumBlocks]float64) bool {
	cnt := len(abs)
	if cnt < diffsWanted {
		return false
	}
	for b := range logs {
		s := madScale * medianInPlace(abs[b*cnt/spectrumBlocks:(b+1)*cnt/spectrumBlocks])
		if !(s > 0) {
			return false
		}
		logs[b] = math.Log(s)
	}
	return true
}

// alongAxis appends to dst |e_{j−1} − 2e_j + e_{j+1}| for every channel j
// whose neighbours are used too, in axis order. A time difference holds,
// besides noise, what is not linear in time over three spectra: a reaction
// fast beside the sampling, a water-vapour or baseline course. Those are
// smooth along the axis (bands tens of points wide: the second difference of
// a band w points wide is about 1/w² of it), noise is not, so the second
// difference along the axis keeps the noise and drops them. It changes the
// noise's scale by one factor for every spectrum (√6 for white noise,
// otherwise set by the noise's correlation along the axis, the instrument's
// and the same in every spectrum), which pooledScale's normalisation takes
// out; it makes neighbouring values correlated (−2/3 and 1/6 at lags 1 and
// 2 for white noise), which raises a scale's sampling variance by at most
// 1 + 2(4/9 + 1/36) = 1.94 (the variance of a sample variance of a moving
// average; Bartlett 1946, from memory).
func alongAxis(e []float64, use []bool, dst []float64) []float64 {
	for j := 1; j+1 < len(e); j++ {
		if use[j-1] && use[j] && use[j+1] {
			dst = append(dst, math.Abs(e[j-1]-2*e[j]+e[j+1]))
		}
	}
	return dst
}

// equalScaleTest is the F-test of equal levels on the spectra first+1,
// first+4, … (rows first, first+3, … of logs, the log block scales): F, its
// degrees of freedom and P(F' > F); zero degrees of freedom with fewer than
// two such spectra.
func equalScaleTest(logs [][spectrumBlocks]float64, first int) (f, d1, d2, p float64) {
	var y [][spectrumBlocks]float64
	for r := first; r < len(logs); r += 3 {
		y = append(y, logs[r])
	}
	k, nb := len(y), spectrumBlocks
	if k < 2 {
		return 0, 0, 0, 1
	}
	rowMean := make([]float64, k)
	var colMean [spectrumBlocks]float64
	all := 0.0
	for r, l := range y {
		for b, x := range l {
			rowMean[r] += x / float64(nb)
			colMean[b] += x / float64(k)
			all += x / float64(k*nb)
		}
	}
	ssRow, ssRes := 0.0, 0.0
	for r, l := range y {
		ssRow += float64(nb) * (rowMean[r] - all) * (rowMean[r] - all)
		for b, x := range l {
			e := x - rowMean[r] - colMean[b] + all
			ssRes += e * e
		}
	}
	d1, d2 = float64(k-1), float64((k-1)*(nb-1))
	if !(ssRes > 0) {
		return 0, 0, 0, 1
	}
	f = (ssRow / d1) / (ssRes / d2)
	return f, d1, d2, pvalue.FUpper(f, d1, d2)
}

// rowLevels are the spectra's log noise scales robust to a reaction's
// curvature in part of the axis (blockClip): each block's scales taken
// relative to its median over the spectra, then each spectrum's median over
// the blocks (one sweep of a median polish; Tukey, Exploratory Data
// Analysis, 1977), returned as scales.
func rowLevels(logs [][spectrumBlocks]float64) []float64 {
	return levelsAgainst(logs, blockCentres(logs))
}

// blockCentres are each block's median log scale over the spectra.
func blockCentres(logs [][spectrumBlocks]float64) [spectrumBlocks]float64 {
	var centre [spectrumBlocks]float64
	col := make([]float64, len(logs))
	for b := range centre {
		for r := range logs {
			col[r] = logs[r][b]
		}
		centre[b] = medianInPlace(col)
	}
	return centre
}

// levelsAgainst is each row's median over the blocks of its log scale less
// the block's centre, as a scale.
func levelsAgainst(logs [][spectrumBlocks]float64, centre [spectrumBlocks]float64) []float64 {
	out := make([]float64, len(logs))
	var row [spectrumBlocks]float64
	for r, l := range logs {
		for b, x := range l {
			row[b] = x - centre[b]
		}
		out[r] = math.Exp(medianInPlace(row[:]))
	}
	return out
}

// unmixVariances solves s_i² = (a²v_{i−1} + v_i + (1−a)²v_{i+1})/(1 + a² +
// (1−a)²) for the variances v of the n = len(s)+2 spectra, v_0 = v_1 and
// v_{n−1} = v_{n−2} (the ends enter one residual each), by elimination down
// the tridiagonal system (strictly diagonally dominant: no pivoting needed).
// A variance below a tenth of the smallest s_i² (the noise of one spectrum
// read from its noisier neighbours' sampling error) is raised to it.
func unmixVariances(s, line []float64) []float64 {
	k := len(s)
	lo, diag, up, rhs := make([]float64, k), make([]float64, k), make([]float64, k), make([]float64, k)
	least := math.Inf(1)
	for r, x := range s {
		a := 0.5
		if line != nil {
			a = line[r]
		}
		norm := 1 + a*a + (1-a)*(1-a)
		lo[r], diag[r], up[r], rhs[r] = a*a/norm, 1/norm, (1-a)*(1-a)/norm, x*x
		least = math.Min(least, x*x)
	}
	diag[0] += lo[0]
	diag[k-1] += up[k-1]
	for r := 1; r < k; r++ {
		w := lo[r] / diag[r-1]
		diag[r] -= w * up[r-1]
		rhs[r] -= w * rhs[r-1]
	}
	v := make([]float64, k+2)
	v[k] = rhs[k-1] / diag[k-1]
	for r := k - 2; r >= 0; r-- {
		v[r+1] = (rhs[r] - up[r]*v[r+2]) / diag[r]
	}
	for i := 1; i <= k; i++ {
		v[i] = math.Max(v[i], least/10)
	}
	v[0], v[k+1] = v[1], v[k]
	return v
}

// pooledScale is c such that c²·v_i are the spectra's variances in units of
// the channel noise σ_j when σ_j was pooled from the second differences in
// time of all spectra: σ_j is 1.4826 × the median of those differences, so
// c makes the median of that mixture of normal scales 1/1.4826 —
// Σ_i (2Φ(q/(c·√u_i)) − 1) = N/2 with q = Φ⁻¹(3/4) and u_i the variance of
// the i-th difference in units of v (the mixed s_i² of unmixVariances) —
// solved by bisection on log c.
func pooledScale(v, line []float64) float64 {
	var u []float64
	for i := 1; i+1 < len(v); i++ {
		a := 0.5
		if line != nil {
			a = line[i-1]
		}
		u = append(u, (a*a*v[i-1]+v[i]+(1-a)*(1-a)*v[i+1])/(1+a*a+(1-a)*(1-a)))
	}
	q := 1 / madScale
	lo, hi := math.Inf(1), 0.0
	for _, x := range u {
		lo, hi = math.Min(lo, x), math.Max(hi, x)
	}
	// At c = 0.01/√max u every term is near 1, at 100/√min u near 0.
	a, b := math.Log(0.01/math.Sqrt(hi)), math.Log(100/math.Sqrt(lo))
	for range 100 {
		mid := (a + b) / 2
		c, sum := math.Exp(mid), 0.0
		for _, x := range u {
			sum += math.Erf(q / (c * math.Sqrt(x)) / math.Sqrt2) // 2Φ(z) − 1
		}
		if sum > float64(len(u))/2 {
			a = mid
		} else {
			b = mid
		}
	}
	return math.Exp((a + b) / 2)
}

// seriesScale is c such that c²·v_i are the spectra's variances in units of
// the channel noise σ_j when σ_j came from the few steps before the
// reaction (pre ≥ 2): the level of the whole series' differences in time,
// not of those first spectra.
//
// Each residual's block scales, high-passed along the axis (logs) and not
// (plain), differ by the high-pass's gain: √6 for noise white along the
// axis, less for the instrument's correlated noise, the same in every
// spectrum; where the chemistry's curvature in time adds to the plain
// scale the ratio falls, so the gain is the median over the spectra of
// each one's median ratio over the blocks. A residual's level, its
// high-passed scale over the gain and over √6 (rowDiff's scale), in units
// of σ_j, against its level relative to the block centres (levelsAgainst)
// gives c; the median over the spectra.
//
// Matching σ_j at the first spectra instead (their unmixed levels against
// the steps σ_j was pooled from) anchored every spectrum's noise to two or
// three residuals beside the reaction's start and the unmixing's end: on
// 20 invented series (451 channels, three noise levels, noise constant in
// counts, three spectra before the reaction) the whole series read 0.86
// to 1.20 times the true noise (log standard deviation 0.088); taken from
// every spectrum, 0.97 to 1.02 (0.015). σ_j's own level, from few steps,
// cancels from c·√v_i·σ_j; its shape along the axis stays.

func seriesScale(logs, plain [][spectrumBlocks]float64, centre [spectrumBlocks]float64) float64 {
	ratio := make([]float64, len(logs))
	var row [spectrumBlocks]float64
	for r := range logs {
		for b := range row {
			row[b] = logs[r][b] - plain[r][b]
		}
		ratio[r] = medianInPlace(row[:])
	}
	gain := medianInPlace(slices.Clone(ratio))
	rel := levelsAgainst(logs, centre)
	each := make([]float64, len(logs))
	for r := range logs {
		row = logs[r]
		each[r] = medianInPlace(row[:]) - math.Log(rel[r]) - gain - 0.5*math.Log(6)
	}
	return math.Exp(medianInPlace(each))
}

// robustVariance is (madScale × the median absolute deviation from the
// median)² of x, which it reorders.
func robustVariance(x []float64) float64 {
	mid := medianInPlace(slices.Clone(x))
	for i, v := range x {
		x[i] = math.Abs(v - mid)
	}
	sd := madScale * medianInPlace(x)
	return sd * sd
}

// spectrumWeights are the weights of absorbance or difference input whose
// spectra differ in noise: σ_ij = f_i·σ_j.
func spectrumWeights(sigma, factor []float64, blind *Blind) *Weights {
	return fitWeights(len(factor), len(sigma), blind, func(i int, out []float64) {
		f := factor[i]
		for j, s := range sigma {
			out[j] = f * s * f * s
		}
	})[0]
}
