package mcr

import (
	"fmt"
	"math"

	"github.com/bandsolve/bandsolve/internal/product"
	"gonum.org/v1/gonum/mat"
)

// Outlier spectra (PRIMER §8): water-vapour or CO₂ lines from a purge that failed, a
// bubble over an ATR crystal, a cosmic spike. Such a spectrum has a residual far above
// the others' and structured along the axis, where the residual of a good spectrum is
// the noise. The test is robust, so the outliers cannot hide by inflating the scale:
//
//  1. far: the root-mean-square residual r_i of spectrum i exceeds
//     median(r) + OutlierK · 1.4826 · MAD(r) (the Hampel identifier; Davies & Gather,
//     J. Am. Stat. Assoc. 1993; 1.4826 makes the MAD a standard deviation for normal
//     data), and, when the noise level σ is known, 2σ; and r_i exceeds by as
//     much the median of its neighbours in time (neighbourMedian: the Hampel
//     filter's moving window; Pearson, IEEE Trans. Control Syst. Technol. 2002),
//     so that an outlier is a spectrum unlike those beside it. A run of spectra
//     whose residual follows a smooth trend in time (a background the model
//     lacks, whose misfit changes as the species do) is model misfit, not
//     outliers: with the typical residual a hundred times the noise the robust
//     spread of r is a few per cent of it, and the threshold cut such a run at
//     1.05 times the median;
//  2. structured: either a point standing out of the row (the largest |e_ij| exceeds
//     √(2 ln m) + 3 robust standard deviations of the row's own residual, where √(2 ln m)
//     is the usual largest value of m normal draws; Cramér, Mathematical Methods of
//     Statistics, 1946) or a smooth residual (the lag-1 autocorrelation along the axis
//     exceeds the median over spectra by 3 robust standard deviations and 0.2, or lies
//     nearer 1 than the median by half the room left: when every spectrum's residual is
//     smooth, as without a baseline model, the spread of the lags is wide and only a
//     residual that is smooth almost throughout stands out).
//
// With noise weights the residual is taken in units of its noise, e_ij √(a_i b_j): in
// absorbance the noise grows many times where little light reaches the detector, and
// those points would otherwise decide both the size and the shape of every residual.
//
// What the residual looks like is measured, not assumed (describeResidual): the width
// at half height of its largest feature, its sign, and how much of it a smooth curve
// along the axis (a polynomial of order 4) carries.
//
// OutlierK = 5: with a few hundred spectra a normal scale would flag none by chance,
// and gas lines or a bubble sit tens of robust deviations out.
const OutlierK = 5

// Outlier is one spectrum set aside.
type Outlier struct {
	Row    int
	RMS    float64 // root-mean-square residual of the spectrum
	Typ    float64 // median over spectra of the same
	Reason string
}

// OutlierInput is what the test needs besides the fit.
type OutlierInput struct {
	Axis []float64
	// Wavenumbers is the axis in cm⁻¹ (Axis itself on a wavenumber axis,
	// 10⁷/λ on one in nm), nil when its unit is not known. The rules that
	// know in cm⁻¹ how wide gas lines and condensed bands are and where CO₂
	// absorbs read it, and a curve is named as rising with wavenumber on
	// it; without it they say nothing.
	Wavenumbers []float64
	// Sigma > 0 is the per-point noise level in the test's units (1 with
	// weights; 0 = unknown).
	Sigma float64
	// Row, Col are the noise weights a_i, b_j (1/σ²; nil: none).
	Row, Col []float64
	// Skip marks rows not to test (already set aside).
	Skip []bool
}

// FindOutliers applies the test to the residual D − C Sᵀ − B Pᵀ (b, p may be nil)
// without noise weights. sigma > 0 is the per-point noise level (0 = unknown); skip
// marks rows not to test (already set aside). Rows are returned in order.
func FindOutliers(d, c, s, b, p *mat.Dense, axis []float64, sigma float64, skip []bool) []Outlier {
	return FindOutliersIn(d, c, s, b, p, OutlierInput{Axis: axis, Sigma: sigma, Skip: skip})
}

// FindOutliersIn is FindOutliers with the residual in units of the noise when in
// carries weights.
func FindOutliersIn(d, c, s, b, p *mat.Dense, in OutlierInput) []Outlier {
	n, m := d.Dims()
	if n < 5 || m < 8 {
		return nil
	}
	scale, colScale := rowScale(in, n, m)
	rms := make([]float64, n)
	lag := make([]float64, n)
	// Each row's residual in a pass of its own, rows in fixed blocks on up
	// to GOMAXPROCS workers (a row's figures do not depend on the others').
	_, k := c.Dims()
	rmsD := rms // the data's own units: the same without weights
	if colScale != nil {
		rmsD = make([]float64, n)
	}
	product.InBlocks(n, n*m*(k+1), 8, func(i0, i1 int) {
		e := make([]float64, m)
		for i := i0; i < i1; i++ {
			residualRow(e, d, c, s, b, p, i)
			var ss, num float64
			if colScale != nil {
				var ssD float64
				ssD, ss, num = scaledSquaresAndLag(e, colScale, rowFactor(in, i))
				rmsD[i] = math.Sqrt(ssD / float64(m))
			} else {
				ss, num = squaresAndLag(e)
			}
			rms[i] = math.Sqrt(ss / float64(m))
			if ss > 0 {
				lag[i] = num / ss
			}
		}
	})
	kept := func(x []float64) []float64 {
		var out []float64
		for i, v := range x {
			if in.Skip == nil || !in.Skip[i] {
				out = append(out, v)
			}
		}
		return out
	}
	medR, sdR := medianMAD(kept(rms))
	medD, sdD := medianMAD(kept(rmsD))
	medL, sdL := medianMAD(kept(lag))
	nearR, nearD := neighbourMedian(rms, in.Skip), neighbourMedian(rmsD, in.Skip)
	smoothLag := func(l float64) bool {
		return (l > medL+3*sdL && l > medL+0.2) || l > medL+0.5*(1-medL)
	}
	var out []Outlier
	var shape *residualShape // made for the first far row only
	e := make([]float64, m)
	for i := 0; i < n; i++ {
		if in.Skip != nil && in.Skip[i] {
			continue
		}
		// Far in units of the noise, or in the data's own and clearly above
		// the typical in units of the noise too: weighting hides a loss
		// spread over well-measured bands when the model's own misfit there
		// varies from spectrum to spectrum (a bubble 19.7 robust deviations
		// out in absorbance, 4.9 in units of the noise), while a spectrum far
		// only in the data's own units owes it to the points where little
		// light reaches the detector, whose noise swamps the rest.
		farNoise := rms[i] > medR+OutlierK*sdR && rms[i] > nearR[i]+OutlierK*sdR
		farData := rmsD[i] > medD+OutlierK*sdD && rmsD[i] > nearD[i]+OutlierK*sdD && rms[i] > medR+2*sdR
		far := (farNoise || farData) && rms[i] > 2*in.Sigma && rms[i] > 0
		if !far {
			continue
		}
		if shape == nil {
			shape = newResidualShape(in.Axis, colScale, m)
			if !shape.inWavenumbers(in.Wavenumbers) {
				in.Wavenumbers = nil
			}
		}
		residualRow(e, d, c, s, b, p, i)
		scale(e, i)
		f := shape.measure(e)
		if !(f.peak > sharpLimit(m) || smoothLag(lag[i])) {
			continue
		}
		out = append(out, Outlier{Row: i, RMS: rms[i], Typ: medR, Reason: fmt.Sprintf("residual %.3g× the typical spectrum's, %s", max(rms[i]/medR, rmsD[i]/medD), f.words(in))})
	}
	return out
}

// neighbourHalf is how many kept spectra on each side of a spectrum its
// neighbours in time take: a window of 7 with the spectrum itself keeps its
// median among the ordinary spectra for runs of up to three outliers (a
// bubble lasting a few spectra).
const neighbourHalf = 3

// neighbourMedian returns, for each row not skipped, the median of x over
// the window of neighbourHalf kept rows either side of it and the row itself
// (cut short at the ends of the series); skipped rows take no part and get 0.
// Rows are taken as in time order. For a residual that changes smoothly and
// monotonically in time the median of a centred window is the row's own
// value, so only a row that departs from its neighbours stands above it.
func neighbourMedian(x []float64, skip []bool) []float64 {
	var idx []int
	for i := range x {
		if skip == nil || !skip[i] {
			idx = append(idx, i)
		}
	}
	out := make([]float64, len(x))
	win := make([]float64, 0, 2*neighbourHalf+1)
	for p, i := range idx {
		win = win[:0]
		for q := max(p-neighbourHalf, 0); q <= min(p+neighbourHalf, len(idx)-1); q++ {
			win = append(win, x[idx[q]])
		}
		out[i] = medianInPlace(win)
	}
	return out
}

// sharpLimit is √(2 ln m) + 3: the usual largest of m normal draws
// (Cramér 1946) with a margin of three standard deviations.
func sharpLimit(m int) float64 { return math.Sqrt(2*math.Log(float64(m))) + 3 }

// rowScale returns what puts row i of the residual in units of its noise,
// √(a_i b_j) per point (nothing without weights), and the √b_j (nil without).
func rowScale(in OutlierInput, n, m int) (func(e []float64, i int), []float64) {
	if len(in.Row) != n || len(in.Col) != m {
		return func([]float64, int) {}, nil
	}
	col := make([]float64, m)
	for j, v := range in.Col {
		col[j] = math.Sqrt(math.Max(v, 0))
	}
	return func(e []float64, i int) {
		a := rowFactor(in, i)
		for j := range e {
			e[j] *= a * col[j]
		}
	}, col
}

// rowFactor is √a_i, the factor rowScale's scaling takes from row i's weight.
func rowFactor(in OutlierInput, i int) float64 { return math.Sqrt(math.Max(in.Row[i], 0)) }

// squaresAndLag returns Σ e_j² and Σ e_j e_{j+1} (len(e) ≥ 1), each summed
// in index order.
func squaresAndLag(e []float64) (ss, num float64) {
	last := len(e) - 1
	next := e[1:]
	for j, v := range e[:last] {
		ss += v * v
		num += v * next[j]
	}
	v := e[last]
	ss += v * v
	return ss, num
}

// scaledSquaresAndLag returns squaresAndLag(e)'s Σ e_j² as ssD and
// squaresAndLag's two sums of x_j = e_j·(a·col_j), e scaled as rowScale
// scales it, without writing x: the three sums in one pass, each adding its
// terms in index order as squaresAndLag does, so their bits are the same,
// and their additions, each waiting on its own previous one, overlap
// instead of taking two passes and a scaling pass between them.
func scaledSquaresAndLag(e, col []float64, a float64) (ssD, ss, num float64) {
	col = col[:len(e)]
	prev := e[0] * (a * col[0])
	ssD, ss = e[0]*e[0], prev*prev
	for j := 1; j < len(e); j++ {
		v := e[j]
		x := v * (a * col[j])
		ssD += v * v
		ss += x * x
		num += prev * x
		prev = x
	}
	return ssD, ss, num
}

// residualRow sets e to row i of D − C Sᵀ − B Pᵀ (b, p may be nil), each
// entry's terms subtracted in the order of the components, then of the
// baseline terms.
func residualRow(e []float64, d, c, s, b, p *mat.Dense, i int) {
	_, k := c.Dims()
	rs := s.RawMatrix()
	subtractTerms(e, d.RawRowView(i)[:len(e)], c.RawRowView(i)[:k], rs.Data, rs.Stride)
	if b != nil {
		_, nb := b.Dims()
		rp := p.RawMatrix()
		subtractTerms(e, e, b.RawRowView(i)[:nb], rp.Data, rp.Stride)
	}
}

// subtractTerms sets dst[j] = src[j] − x₀y_j0 − x₁y_j1 − … (dst may be
// src), the products subtracted one at a time in index order, with y_jl =
// y[j·stride + l]. Up to six terms the row of x is held in registers: the
// loop over x cost more than its work at a few components.
func subtractTerms(dst, src, x, y []float64, stride int) {
	dst = dst[:len(src)]
	switch len(x) {
	case 1:
		x0 := x[0]
		for j, v := range src {
			dst[j] = v - x0*y[j*stride]
		}
	case 2:
		x0, x1 := x[0], x[1]
		for j, v := range src {
			q := y[j*stride : j*stride+2 : j*stride+2]
			v -= x0 * q[0]
			dst[j] = v - x1*q[1]
		}
	case 3:
		x0, x1, x2 := x[0], x[1], x[2]
		for j, v := range src {
			q := y[j*stride : j*stride+3 : j*stride+3]
			v -= x0 * q[0]
			v -= x1 * q[1]
			dst[j] = v - x2*q[2]
		}
	case 4:
		x0, x1, x2, x3 := x[0], x[1], x[2], x[3]
		for j, v := range src {
			q := y[j*stride : j*stride+4 : j*stride+4]
			v -= x0 * q[0]
			v -= x1 * q[1]
			v -= x2 * q[2]
			dst[j] = v - x3*q[3]
		}
	case 5:
		x0, x1, x2, x3, x4 := x[0], x[1], x[2], x[3], x[4]
		for j, v := range src {
			q := y[j*stride : j*stride+5 : j*stride+5]
			v -= x0 * q[0]
			v -= x1 * q[1]
			v -= x2 * q[2]
			v -= x3 * q[3]
			dst[j] = v - x4*q[4]
		}
	case 6:
		x0, x1, x2, x3, x4, x5 := x[0], x[1], x[2], x[3], x[4], x[5]
		for j, v := range src {
			q := y[j*stride : j*stride+6 : j*stride+6]
			v -= x0 * q[0]
			v -= x1 * q[1]
			v -= x2 * q[2]
			v -= x3 * q[3]
			v -= x4 * q[4]
			dst[j] = v - x5*q[5]
		}
	default:
		k := len(x)
		for j, v := range src {
			q := y[j*stride : j*stride+k : j*stride+k]
			for l, xl := range x {
				v -= xl * q[l]
			}
			dst[j] = v
		}
	}
}

// medianMAD returns the median and 1.4826·MAD (a robust standard deviation).
func medianMAD(x []float64) (float64, float64) {
	if len(x) == 0 {
		return 0, 0
	}
	med := median(x)
	dev := make([]float64, len(x))
	for i, v := range x {
		dev[i] = math.Abs(v - med)
	}
	return med, 1.4826 * median(dev)
}

// robustSDInto is 1.4826·MAD of x about its median, worked in scratch
// (len(x) values) instead of two new slices per call: the outlier test
// takes one per spectrum, 0.9 GB of short-lived slices at 20 000 × 3000,
// whose churn let the heap grow to the collector's goal. The values are
// those of medianMAD bit for bit (the same selection on the same values in
// the same order).
func robustSDInto(x, scratch []float64) float64 {
	if len(x) == 0 {
		return 0
	}
	s := scratch[:len(x)]
	copy(s, x)
	med := medianInPlace(s)
	for i, v := range x {
		s[i] = math.Abs(v - med)
	}
	return 1.4826 * medianInPlace(s)
}

// median is the sample median of x (x is not changed). It selects the
// middle order statistic in linear expected time (Hoare's selection, pivot
// the median of three) instead of sorting: the outlier test takes one
// median and one MAD per spectrum, which sorting made the largest cost of a
// default run after the uniqueness ranges. The value is the same as from a
// sort.
func median(x []float64) float64 {
	if len(x) == 0 {
		return 0
	}
	return medianInPlace(append([]float64(nil), x...))
}

// medianInPlace is the sample median of s, reordering s.
func medianInPlace(s []float64) float64 {
	if len(s) == 0 {
		return 0
	}
	h := len(s) / 2
	selectKth(s, h)
	if len(s)%2 == 1 {
		return s[h]
	}
	lower := s[0]
	for _, v := range s[1:h] {
		lower = math.Max(lower, v)
	}
	return 0.5 * (lower + s[h])
}

// selectKth reorders s so that s[k] holds the value a sort would put there,
// every element before it is ≤ s[k] and every element after it ≥ s[k]. The
// three-way partition keeps it linear when many values are equal (an export
// rounded to few digits, a MAD whose deviations are mostly zero).
func selectKth(s []float64, k int) {
	lo, hi := 0, len(s)-1
	for hi > lo {
		a, b, c := s[lo], s[lo+(hi-lo)/2], s[hi]
		pivot := max(min(a, b), min(max(a, b), c)) // median of three
		lt, i, gt := lo, lo, hi
		for i <= gt {
			switch {
			case s[i] < pivot:
				s[lt], s[i] = s[i], s[lt]
				lt++
				i++
			case s[i] > pivot:
				s[i], s[gt] = s[gt], s[i]
				gt--
			default:
				i++
			}
		}
		switch {
		case k < lt:
			hi = lt - 1
		case k > gt:
			lo = gt + 1
		default:
			return
		}
	}
}
