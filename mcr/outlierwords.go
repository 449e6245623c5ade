package mcr

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
)

// roughLines is the roughness (see roughness) above which the largest
// feature is read as sharp lines: gas lines are one to a few points wide at
// the usual resolutions (common practice), so rough, the bands of a
// condensed sample tens of points wide and smooth (≈ 0.001 at 8 points).
const roughLines = 0.05

// unresolvedPoints and condensedBandWidth decide, on a wavenumber axis, that
// a feature too narrow for the second-difference test is still a line. A
// gas line at room pressure is about 0.2 cm⁻¹ wide (pressure broadening;
// from memory), narrower than a process spectrometer resolves, so it shows
// the instrument's own line shape: as wide as its resolution, which the
// axis samples at one or two points per resolution element (common
// practice), so two to three spacings at half height (the narrowest a
// sampled axis can show is two, Nyquist). At three spacings the
// second-difference test reads a line as smooth (a Gaussian three points
// wide has 4.7 % of its energy there, under roughLines): water-vapour lines
// 1.2 cm⁻¹ wide on the 0.48 cm⁻¹ axis of the real urethane series were
// called broad, while on a 2 cm⁻¹ axis the same lines were sharp. A feature
// that narrow in points is a line only when it is narrower in cm⁻¹ than a
// condensed sample's bands at room temperature, 5–30 cm⁻¹ at half height
// (common practice; values from memory): on a coarse axis three points span
// a band.
const (
	unresolvedPoints   = 3
	condensedBandWidth = 4.0 // cm⁻¹
)

// smoothOrder is the order of the polynomial along the axis that stands for
// the smooth part of a residual: scatter (rising as ν⁴ toward high
// wavenumber, Rayleigh) and a baseline jump are followed by it, bands tens
// of points wide are not.
const smoothOrder = 4

// residualShape measures the shape of residual rows along one axis.
type residualShape struct {
	axis    []float64
	q       *mat.Dense // m × (smoothOrder+1), orthonormal columns spanning the polynomials
	lo, hi  int        // the points at the low and high end of the axis
	step    float64    // the mean spacing of the axis (1 without one)
	scratch []float64
	fit     []float64
	r       *mat.Dense // k × k, upper triangular: V = Q R
}

func newResidualShape(axis, colScale []float64, m int) *residualShape {
	rs := &residualShape{scratch: make([]float64, m), fit: make([]float64, m), step: 1}
	if len(axis) == m {
		rs.axis = axis
		for j, a := range axis {
			if a < axis[rs.lo] {
				rs.lo = j
			}
			if a > axis[rs.hi] {
				rs.hi = j
			}
		}
		rs.step = math.Abs(axis[m-1]-axis[0]) / float64(m-1)
	} else {
		rs.hi = m - 1
	}
	// Powers of x on [−1, 1] are well conditioned to order 4; QR turns them
	// into an orthonormal basis, so the least-squares fit is Q Qᵀ e.
	k := min(smoothOrder+1, m)
	v := mat.NewDense(m, k, nil)
	x0, x1 := 0.0, float64(m-1)
	if rs.axis != nil {
		x0, x1 = axis[rs.lo], axis[rs.hi]
	}
	for j := 0; j < m; j++ {
		x := float64(j)
		if rs.axis != nil {
			x = axis[j]
		}
		u := 0.0
		if x1 > x0 {
			u = 2*(x-x0)/(x1-x0) - 1
		}
		w := 1.0
		if colScale != nil {
			w = colScale[j]
		}
		for c, p := 0, 1.0; c < k; c, p = c+1, p*u {
			v.Set(j, c, w*p)
		}
	}
	// The residual is in units of its noise (scaled by √b_j per point), so
	// the polynomial is fitted by weighted least squares: its coefficients
	// are then those of a curve in the data's own units, whose direction is
	// read from them (in units of the noise a curve looks highest where
	// the noise is least).
	// The thin factor (thinQR): mat.QR's QTo forms the whole m × m Q, 386 MB
	// for the 6950 points of the real urethane series, to keep k columns.
	rs.q, rs.r = thinQR(v)
	return rs
}

// residualFeatures are the measured features of one residual row.
type residualFeatures struct {
	peak     float64 // largest |e_j| in robust standard deviations of the row
	peakAt   int
	width    int // points of the largest feature at half height
	standing int // points beyond the sharp limit
	// features counts the separate features standing out (runs of points of
	// one sign beyond the sharp limit), narrow those narrower at half height
	// than condensedBandWidth, narrowest the width of the narrowest (points):
	// a forest of gas lines is many narrow ones.
	features, narrow, narrowest int
	smooth                      float64
	rising                      float64 // the smooth curve's value at 0.8 of the way up the axis less that at 0.2 (data units)
	rough                       float64 // roughness of the largest feature (roughness)
	restAt                      int     // the largest point of what the smooth curve leaves
	restW                       int
	negShare                    float64 // share of what the smooth curve leaves that lies below the fit
	step                        float64
	limit                       float64
	axis                        []float64
}

// measure reads the features of residual row e.
func (rs *residualShape) measure(e []float64) residualFeatures {
	limit := sharpLimit(len(e))
	f := residualFeatures{step: rs.step, axis: rs.axis, limit: limit}
	sd := robustSDInto(e, rs.scratch)
	for j, v := range e {
		if sd > 0 && math.Abs(v)/sd > f.peak {
			f.peak, f.peakAt = math.Abs(v)/sd, j
		}
		if sd > 0 && math.Abs(v)/sd > limit {
			f.standing++
		}
	}
	f.width = halfWidth(e, f.peakAt)
	f.featureWidths(standingFeatures(e, sd*limit))
	_, k := rs.q.Dims()
	coef := make([]float64, k)
	total := 0.0
	for j, v := range e {
		total += v * v
		for c := range coef {
			coef[c] += rs.q.At(j, c) * v
		}
	}
	rest := rs.scratch
	fitSS, negSS, restSS, big := 0.0, 0.0, 0.0, -1.0
	for j, v := range e {
		fj := 0.0
		for c, a := range coef {
			fj += rs.q.At(j, c) * a
		}
		rs.fit[j] = fj
		fitSS += fj * fj
		rest[j] = v - fj
		restSS += rest[j] * rest[j]
		if rest[j] < 0 {
			negSS += rest[j] * rest[j]
		}
		if math.Abs(rest[j]) > big {
			big, f.restAt = math.Abs(rest[j]), j
		}
	}
	if total > 0 {
		f.smooth = fitSS / total
		f.rising = rs.rise(coef)
	}
	f.rough = roughness(e, f.peakAt, f.width, sd)
	if restSS > 0 {
		f.negShare = negSS / restSS
	}
	f.restW = halfWidth(rest, f.restAt)
	return f
}

// rise is p(0.6) − p(−0.6) for the polynomial p(u) on the axis scaled to
// [−1, 1] whose weighted fit has coordinates coef on the orthonormal basis Q
// (p's coefficients solve R c = coef). The ends themselves are left out:
// there the noise is often largest and the curve least determined.
func (rs *residualShape) rise(coef []float64) float64 {
	k := len(coef)
	var c mat.VecDense
	if err := c.SolveVec(mat.NewTriDense(k, mat.Upper, mat.DenseCopyOf(rs.r).RawMatrix().Data), mat.NewVecDense(k, append([]float64(nil), coef...))); err != nil {
		return 0
	}
	at := func(u float64) float64 {
		v := 0.0
		for l := k - 1; l >= 0; l-- {
			v = v*u + c.AtVec(l)
		}
		return v
	}
	return at(0.6) - at(-0.6)
}

// roughness is the share of the largest feature's energy in its second
// differences, Σ(Δ²e)² / (6 Σe²) over a window of three widths either side,
// each sum less what noise of robust standard deviation sd adds: 1 for a
// single point or white noise (Δ² = e_{j−1} − 2e_j + e_{j+1} has 1 + 4 + 1 = 6
// times the variance of white noise), about 3/(24 s⁴) for a Gaussian band of
// standard deviation s points (its spectrum's fourth moment), so ≈ 0.001 for a
// band 8 points wide and tens of times more for lines one or two points wide.
func roughness(e []float64, at, width int, sd float64) float64 {
	half := 3*width + 4
	lo, hi := max(at-half, 1), min(at+half, len(e)-2)
	d2, ss := 0.0, 0.0
	for j := lo; j <= hi; j++ {
		v := e[j-1] - 2*e[j] + e[j+1]
		d2 += v * v
		ss += e[j] * e[j]
	}
	nw := float64(hi - lo + 1)
	signal := ss - nw*sd*sd
	if signal <= 0 {
		return 1
	}
	return max(d2-6*nw*sd*sd, 0) / (6 * signal)
}

// halfWidth is the number of points around e[at] of its sign and at least
// half its size: the width at half height of the feature there.
func halfWidth(e []float64, at int) int {
	h := e[at] / 2
	in := func(v float64) bool { return (h > 0 && v >= h) || (h < 0 && v <= h) }
	if h == 0 {
		return 1
	}
	lo, hi := at, at
	for lo > 0 && in(e[lo-1]) {
		lo--
	}
	for hi < len(e)-1 && in(e[hi+1]) {
		hi++
	}
	return hi - lo + 1
}

// standingFeatures gives the widths at half height (halfWidth at each run's
// largest point) of the runs of points of one sign beyond level in size,
// narrowest first.
func standingFeatures(e []float64, level float64) []int {
	if !(level > 0) {
		return nil
	}
	var widths []int
	for j := 0; j < len(e); {
		if math.Abs(e[j]) <= level {
			j++
			continue
		}
		top := j
		for j < len(e) && math.Abs(e[j]) > level && (e[j] > 0) == (e[top] > 0) {
			if math.Abs(e[j]) > math.Abs(e[top]) {
				top = j
			}
			j++
		}
		widths = append(widths, halfWidth(e, top))
	}
	slices.Sort(widths)
	return widths
}

// forestLines is the least count of separate features standing out, each
// narrower than a condensed sample's narrowest bands, that makes a forest
// of lines (forest): a gas's rotational lines come by the tens over a few
// hundred cm⁻¹ (water vapour's by the hundred over 1300–2000 and
// 3450–4000 cm⁻¹; common practice), while the loss of a bubble or a band
// out of place stands out at a condensed sample's bands, each wider.
const forestLines = 5

// forest says the residual is a forest of lines: at least forestLines
// separate features standing out narrower at half height than a condensed
// sample's narrowest bands (condensedBandWidth), whatever their count of
// points. Lines that overlap at the instrument's resolution merge, so the
// largest feature alone can be several lines wide: invented lines 3 cm⁻¹
// wide, 60 over 500 cm⁻¹, stood out as 14 features 2.9–12 cm⁻¹ wide, six
// of them under 4 cm⁻¹, the largest 4.8 cm⁻¹ (on a real series: "broad, not
// line-like … 5.79 cm⁻¹ (12 point(s)) wide"); a bubble's loss stood out as
// 7 features 11.6–25.5 cm⁻¹ wide. Only on a wavenumber axis.
func (f residualFeatures) forest(in OutlierInput) bool {
	return in.wavenumber() && f.axis != nil && f.narrow >= forestLines
}

// narrowFeature says the largest feature, standing out, is narrower than a
// condensed sample's narrowest bands (on a wavenumber axis).
func (f residualFeatures) narrowFeature(in OutlierInput) bool {
	return f.peak > f.limit && in.wavenumber() && f.axis != nil && float64(f.width)*f.step < condensedBandWidth
}

// featureWidths records the count of the features standing out and of those
// narrower than condensedBandWidth (widths in points, narrowest first).
func (f *residualFeatures) featureWidths(widths []int) {
	f.features = len(widths)
	if len(widths) > 0 {
		f.narrowest = widths[0]
	}
	for _, w := range widths {
		if float64(w)*f.step < condensedBandWidth {
			f.narrow++
		}
	}
}

// words say what the residual looks like, from its measured features.
func (f residualFeatures) words(in OutlierInput) string {
	limit := f.limit
	switch {
	case f.peak > limit && f.width <= 1 && f.standing <= 2:
		return fmt.Sprintf("one point standing out (%s, %.3g robust standard deviations of the row, its neighbours below half of it): a spike or a bad point", f.at(in, f.peakAt), f.peak)
	case f.peak > limit && f.rough >= roughLines:
		return fmt.Sprintf("sharp lines (the largest %s, %.3g robust standard deviations of the row, %d points standing out; %.0f %% of the energy around it is in its second differences, a smooth band has under %.0f %%): gas lines such as water vapour or CO₂", f.at(in, f.peakAt), f.peak, f.standing, 100*f.rough, 100*roughLines)
	case f.peak > limit && f.forest(in):
		return fmt.Sprintf("sharp lines (%d separate features standing out, %d of them narrower at half height than the %g cm⁻¹ of a condensed sample's narrowest bands, the narrowest %s; the largest %s, %.3g robust standard deviations of the row, %s wide at half height): gas lines such as water vapour or CO₂", f.features, f.narrow, condensedBandWidth, f.wide(in, f.narrowest), f.at(in, f.peakAt), f.peak, f.wide(in, f.width))
	case f.peak > limit && f.unresolved(in):
		return fmt.Sprintf("sharp lines (the largest %s, %.3g robust standard deviations of the row, %d points standing out; it is %s wide at half height, no wider than the axis resolves (%d spacings of %.3g cm⁻¹) and narrower than the %g cm⁻¹ of a condensed sample's narrowest bands): gas lines such as water vapour or CO₂", f.at(in, f.peakAt), f.peak, f.standing, f.wide(in, f.width), unresolvedPoints, f.step, condensedBandWidth)
	}
	// On an axis in nm its high end is low wavenumber.
	falls := in.fallsWithAxis()
	dir := "the high end of the axis"
	if f.rising < 0 {
		dir = "the low end of the axis"
	}
	if in.wavenumber() {
		dir = "low wavenumber"
		if f.rising >= 0 != falls {
			dir = "high wavenumber"
		}
	}
	// Below the limit the largest point is not a feature of its own: its
	// width says nothing of the residual ("broad, not line-like: its largest
	// feature is 0.482 cm⁻¹ (1 point) wide" read as a contradiction).
	head := fmt.Sprintf("broad, not line-like: its largest feature (%s) is %s wide at half height", f.at(in, f.peakAt), f.wide(in, f.width))
	if f.narrowFeature(in) {
		// "Broad" beside a width under a condensed band's read as a
		// contradiction (a real spectrum's feature 1.93 cm⁻¹ wide).
		head = fmt.Sprintf("not line-like as a whole (%.0f %% of the energy around its largest feature is in its second differences; lines have %.0f %% or more), though its largest feature (%s) is %s wide at half height, narrower than the %g cm⁻¹ of a condensed sample's narrowest bands", 100*f.rough, 100*roughLines, f.at(in, f.peakAt), f.wide(in, f.width), condensedBandWidth)
	}
	if f.peak <= limit {
		head = fmt.Sprintf("broad, not line-like, spread over the axis with no point standing out (the largest, %s, is %.3g robust standard deviations of the row, under the %.3g a line or a spike reaches)", f.at(in, f.peakAt), f.peak, limit)
	}
	s := fmt.Sprintf("%s; %.0f %% of it is a smooth curve along the axis (polynomial of order %d), higher toward %s; of what that leaves, %.0f %% lies below the fit, largest %s and %s wide", head, 100*f.smooth, smoothOrder, dir, 100*f.negShare, f.at(in, f.restAt), f.wide(in, f.restW))
	if co2 := f.co2(in); co2 != "" {
		return s + co2
	}
	loss := f.negShare >= 2.0/3
	scatter := f.smooth >= 0.2 && (f.rising > 0 && !falls || f.rising < 0 && falls) && in.wavenumber()
	switch {
	case loss && scatter:
		return s + ": less absorbance across the bands with scatter rising with wavenumber, what a bubble over the crystal or a film lifting off it gives"
	case loss:
		return s + ": less absorbance across the bands than the fit, what a bubble over the crystal or a film lifting off it gives"
	case f.smooth >= 0.5:
		return s + ": a smooth curve, such as scatter or a baseline jump"
	}
	if f.narrowFeature(in) {
		return s + ": a feature the model lacks, narrow at its largest: a single gas line, a spike the instrument's line shape spread, or a band out of place"
	}
	return s + ": a broad feature the model lacks, such as a bubble, a baseline jump or a band out of place"
}

// unresolved says the largest feature is a line the axis does not resolve:
// at most unresolvedPoints wide at half height and narrower in cm⁻¹ than a
// condensed sample's bands (unresolvedPoints). Only on a wavenumber axis,
// where the widths of bands and gas lines are known.
func (f residualFeatures) unresolved(in OutlierInput) bool {
	return in.wavenumber() && f.axis != nil && f.width <= unresolvedPoints && float64(f.width)*f.step < condensedBandWidth
}

// co2 says the largest feature lies where CO₂ in the beam path absorbs: its
// antisymmetric stretching band, 2349 cm⁻¹, whose P and R branches spread
// over about 2300–2390 cm⁻¹ (common practice); at a few cm⁻¹ resolution its
// lines merge into the two branches, which look like bands 15–20 cm⁻¹ wide.
func (f residualFeatures) co2(in OutlierInput) string {
	if !in.wavenumber() || f.axis == nil {
		return ""
	}
	at := in.Wavenumbers[f.peakAt]
	if at < 2290 || at > 2400 || float64(f.width)*f.step > 40 {
		return ""
	}
	return ": it lies where CO₂ in the beam path has its stretching band (2349 cm⁻¹, branches over about 2300–2390 cm⁻¹): the air's CO₂ changed, not the sample"
}

// at names point j: its place on the axis, or its index without one.
func (f residualFeatures) at(in OutlierInput, j int) string {
	if f.axis == nil {
		return fmt.Sprintf("at point %d", j+1)
	}
	if in.wavenumber() && in.Wavenumbers[j] == f.axis[j] {
		return fmt.Sprintf("at %.6g cm⁻¹", f.axis[j])
	}
	if in.wavenumber() {
		return fmt.Sprintf("at %.6g on the axis (%.6g cm⁻¹)", f.axis[j], in.Wavenumbers[j])
	}
	return fmt.Sprintf("at %.6g on the axis", f.axis[j])
}

// wide is a width of w points in the axis' units.
func (f residualFeatures) wide(in OutlierInput, w int) string {
	if f.axis == nil {
		return fmt.Sprintf("%d point(s)", w)
	}
	unit := ""
	if in.wavenumber() {
		unit = " cm⁻¹"
	}
	return fmt.Sprintf("%.3g%s (%d point(s))", float64(w)*f.step, unit, w)
}

// wavenumber says the axis's values in cm⁻¹ are known (Wavenumbers).
func (in OutlierInput) wavenumber() bool {
	return len(in.Wavenumbers) > 0 && len(in.Wavenumbers) == len(in.Axis)
}

// fallsWithAxis says the wavenumber falls as the axis value rises: an axis
// in nm.
func (in OutlierInput) fallsWithAxis() bool {
	m := len(in.Axis)
	return in.wavenumber() && m > 1 && (in.Wavenumbers[m-1]-in.Wavenumbers[0])*(in.Axis[m-1]-in.Axis[0]) < 0
}

// inWavenumbers makes the widths the shape measures widths in cm⁻¹, the
// unit of the rules on line and band widths, and says whether they are:
// on an axis in cm⁻¹ they are already; on one converted to it (from nm)
// the mean spacing in cm⁻¹ is each point's only when that spacing is even
// (evenlySpaced). An axis evenly spaced in nm is not (its spacing in cm⁻¹
// changes as 1/λ², sixfold over 4000–1650 cm⁻¹), and there a width in
// points has no single width in cm⁻¹, so the rules are left out.
func (rs *residualShape) inWavenumbers(wn []float64) bool {
	m := len(rs.axis)
	if m < 2 || len(wn) != m {
		return false
	}
	if slices.Equal(wn, rs.axis) {
		return true
	}
	if !evenlySpaced(wn) {
		return false
	}
	rs.step = math.Abs(wn[m-1]-wn[0]) / float64(m-1)
	return true
}

// evenlySpaced says that the steps of x, but for a tenth at either end of
// their sizes (the gaps an --exclude leaves), are within 5 % of their
// median.
func evenlySpaced(x []float64) bool {
	steps := make([]float64, len(x)-1)
	for j := range steps {
		steps[j] = math.Abs(x[j+1] - x[j])
	}
	slices.Sort(steps)
	k := len(steps)
	med, lo, hi := steps[k/2], steps[k/10], steps[k-1-k/10]
	return med > 0 && hi-med <= 0.05*med && med-lo <= 0.05*med
}
