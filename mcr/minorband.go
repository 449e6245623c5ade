package mcr

import (
	"fmt"

	"github.com/bandsolve/bandsolve/internal/pvalue"
	"gonum.org/v1/gonum/mat"
)

// Where the extra component lowers the fit. A species with a band of its own lowers the
// fit at channels where the other spectra have no band; a change of band shape (a shift,
// broadening, hydrogen bonding) lowers it only under their bands. The split is made on the
// fits themselves, C Sᵀ (+ baseline), which no rotation of the components changes, unlike
// the new spectrum alone (a refit of real data gave two factors the same drop, to seven
// digits, and new spectra 15 % and 53 % outside the bands).

// fitTerms returns, per channel j, b_j (s_jᵀ Cᵀ A C s_j − 2 s_jᵀ (Dᵀ A C)_j): the channel's
// weighted RSS less its constant ‖d_j‖²_A, so that two fits' differences are the drop per
// channel. Only the products of the Data interface are needed (compressed data too).
func fitTerms(d Data, c, s *mat.Dense) []float64 {
	m, k := s.Dims()
	row, col := weightsOf(d)
	g := d.MulProfiles(c) // m × k: Dᵀ A C
	var gs mat.Dense
	gs.Mul(s, gramW(c, row)) // m × k: S Cᵀ A C
	out := make([]float64, m)
	for j := 0; j < m; j++ {
		sj, gj, hj := s.RawRowView(j)[:k], g.RawRowView(j)[:k], gs.RawRowView(j)[:k]
		v := 0.0
		for a := range sj {
			v += sj[a] * (hj[a] - 2*gj[a])
		}
		if col != nil {
			v *= col[j]
		}
		out[j] = v
	}
	return out
}

// withBaseline returns [C | B] and [S | P] for a fit with baseline coefficients B and
// shapes P (C and S when there is none).
func withBaseline(res *Result, shapes *mat.Dense) (c, s *mat.Dense) {
	if res.Baseline == nil || shapes == nil {
		return res.C, res.S
	}
	n, k := res.C.Dims()
	m, nb := shapes.Dims()
	c, s = mat.NewDense(n, k+nb, nil), mat.NewDense(m, k+nb, nil)
	c.Slice(0, n, 0, k).(*mat.Dense).Copy(res.C)
	c.Slice(0, n, k, k+nb).(*mat.Dense).Copy(res.Baseline)
	s.Slice(0, m, 0, k).(*mat.Dense).Copy(res.S)
	s.Slice(0, m, k, k+nb).(*mat.Dense).Copy(shapes)
	return c, s
}

// inBands marks the channels where a column of s reaches a tenth of its largest
// magnitude (a band of that spectrum; common practice for where a band "is"). The
// largest is taken over the channels with weight (all when col is nil): a channel of
// weight zero (blind in every spectrum, an opaque band) holds no measured value, and
// what the fit put there would set the scale for every band measured.
func inBands(s *mat.Dense, col []float64) []bool {
	m, k := s.Dims()
	in := make([]bool, m)
	for a := 0; a < k; a++ {
		top := 0.0
		for j := 0; j < m; j++ {
			if col == nil || col[j] > 0 {
				top = max(top, abs(s.At(j, a)))
			}
		}
		for j := 0; j < m; j++ {
			in[j] = in[j] || top > 0 && abs(s.At(j, a)) >= 0.1*top
		}
	}
	return in
}

func abs(x float64) float64 {
	if x < 0 {
		return -x
	}
	return x
}

// outOfBand fills the Out* fields: the drop from without (k components) to with (k + 1)
// summed over the channels outside the bands of s (the k-component spectra), judged
// against the largest noise eigenvalue of a (rows − k − b) × (those channels) matrix. The
// extra component is fitted to every channel, so on a subset it takes no more from noise
// than a free rank-one term fitted there: the test is conservative.
func (t *MinorTest) outOfBand(d Data, s *mat.Dense, without, with *Result, opt Options, alpha float64) {
	t.OutBandSignificance = 1
	if t.DF2 < 1 || !(t.ResidualSSWith > 0) {
		return
	}
	cw, sw := withBaseline(without, opt.Baseline)
	before := fitTerms(d, cw, sw)
	cw, sw = withBaseline(with, opt.Baseline)
	after := fitTerms(d, cw, sw)
	_, col := weightsOf(d)
	in := inBands(s, col)
	s2 := t.ResidualSSWith / t.DF2
	t.InBand, t.ChannelDrop = in, make([]float64, len(in))
	drop, q := 0.0, 0
	for j := range in {
		t.ChannelDrop[j] = (before[j] - after[j]) / s2
		if in[j] || col != nil && !(col[j] > 0) {
			continue
		}
		drop += before[j] - after[j]
		q++
	}
	t.OutBandChannels = q
	t.OutBandPeak = outBandPeak(t.ChannelDrop, in, col)
	n, _ := d.Dims()
	rows := n
	if row, _ := weightsOf(d); row != nil {
		rows = countPositive(row)
	}
	_, k := s.Dims()
	nb := 0
	if opt.Baseline != nil {
		_, nb = opt.Baseline.Dims()
	}
	t.col, t.freeRows = col, rows-k-nb
	if q == 0 {
		return
	}
	t.OutBandDrop = drop / s2
	t.OutBandEdge = largestNoiseEigen(t.freeRows, q)
	t.OutBandSignificance = edgeSignificance(t.OutBandDrop, t.freeRows, q)
}

// BandBeyond is ownBand's question asked again with more channels set apart
// than the other spectra's bands (OwnBandBeyond).
type BandBeyond struct {
	Share        float64 // of the whole drop, at the channels left
	Peak         float64 // largest drop per channel there (5-point mean) over the largest anywhere
	Significance float64 // that noise alone gives the drop there (the Tracy–Widom law)
	Channels     int
	Own          bool // the three limits of ownBand hold there
}

// OwnBandBeyond asks whether what the extra component explains still has a band
// of its own once the channels skip marks are set apart as well as the other
// spectra's bands: where a known nuisance has lines of its own (the beam
// path's water vapour), a drop says no more of a new species than under the
// others' bands. The limits are ownBand's, on the channels left, and the
// share is of the whole drop, as OutBandShare: a component that is mostly the
// nuisance needs a band of its own the size a species needs anywhere. (The
// share of the drop off the nuisance's channels alone would let any reshaping
// of a weak band outside the 10 % bands, as hydrogen bonding of an N–H
// stretch, pass for one.)
func (t *MinorTest) OwnBandBeyond(skip []bool, alpha float64) BandBeyond {
	b := BandBeyond{Significance: 1}
	if len(skip) != len(t.ChannelDrop) || t.Drop() <= 0 {
		return b
	}
	left := make([]bool, len(skip)) // marked as in a band: outBandPeak's mask
	drop := 0.0
	for j, dr := range t.ChannelDrop {
		left[j] = t.InBand[j] || skip[j]
		if left[j] || t.col != nil && !(t.col[j] > 0) {
			continue
		}
		drop += dr
		b.Channels++
	}
	b.Peak = outBandPeak(t.ChannelDrop, left, t.col)
	if b.Channels == 0 {
		return b
	}
	b.Share = drop / t.Drop()
	b.Significance = edgeSignificance(drop, t.freeRows, b.Channels)
	b.Own = b.Significance < alpha && b.Share >= minorOutBand && b.Peak >= minorOutPeak
	return b
}

// OutBandShare is the out-of-band drop over the whole drop (0 when there is none).
func (t *MinorTest) OutBandShare() float64 {
	if d := t.Drop(); d > 0 {
		return t.OutBandDrop / d
	}
	return 0
}

// outBandPeak returns the largest 5-point mean of drop at channels outside the bands over
// the largest anywhere (channels of zero weight left out; 0 when nothing drops).
func outBandPeak(drop []float64, in []bool, col []float64) float64 {
	sm := smooth5(drop)
	var all, out float64
	for j, v := range sm {
		if col != nil && !(col[j] > 0) {
			continue
		}
		all = max(all, v)
		if !in[j] {
			out = max(out, v)
		}
	}
	if !(all > 0) {
		return 0
	}
	return out / all
}

// ownBand reports whether the drop shows a band of its own: significant on the channels
// outside the other spectra's bands, at least a quarter of the whole drop there, and
// peaking there at least half as high as anywhere. A band shift or broadening leaves only
// its wings outside (3–7 % of a Gaussian's shift or broadening energy lies beyond its
// tenth-height points, 1–2 % of a Lorentzian's: integrals of the derivatives); drift
// spread thinly over a long axis can add up to a share but has no peak.
func (t *MinorTest) ownBand(alpha float64) bool {
	return t.OutBandSignificance < alpha && t.OutBandShare() >= minorOutBand && t.OutBandPeak >= minorOutPeak
}

// ownBandWords says where the drop lies, for the verdict.
func (t *MinorTest) ownBandWords() string {
	return fmt.Sprintf("%.0f %% of the drop lies outside the other spectra's bands (%.3g σ² on %d channels, where noise alone gives about %.3g σ², %s; a species needs ≥ %.0f %%), and per channel it reaches there %.0f %% of its largest value (needs ≥ %.0f %%)",
		100*t.OutBandShare(), t.OutBandDrop, t.OutBandChannels, t.OutBandEdge, pvalue.Text(t.OutBandSignificance), 100*minorOutBand, 100*t.OutBandPeak, 100*minorOutPeak)
}

// ownBandRule states the limits of ownBand with the noise edge outside the bands, which
// every refit from one fit shares.
func (t *MinorTest) ownBandRule(alpha float64) string {
	return fmt.Sprintf("≥ %.0f %% of the drop outside the other spectra's bands, significant there (on %d channels noise alone gives about %.3g σ², p < %g), and reaching there, per channel, ≥ %.0f %% of its largest value",
		100*minorOutBand, t.OutBandChannels, t.OutBandEdge, alpha, 100*minorOutPeak)
}

// ownBandFigures gives this factor's figures of ownBand.
func (t *MinorTest) ownBandFigures() string {
	return fmt.Sprintf("%.0f %% of the drop lies outside the other spectra's bands (%.3g σ², %s), and per channel it reaches there %.0f %% of its largest value",
		100*t.OutBandShare(), t.OutBandDrop, pvalue.Text(t.OutBandSignificance), 100*t.OutBandPeak)
}

// NoiseEdgeSS is what one more component would take from noise alone beside the k of
// res, in the units of res.ResidualSS: largestNoiseEigen on the rows and channels with
// weight, times σ̂² = RSS/(N − k(n + m − k)). Two fits closer than that cannot be told
// apart by the data.
func NoiseEdgeSS(d Data, res *Result) float64 {
	n, m := d.Dims()
	if row, col := weightsOf(d); row != nil {
		n, m = countPositive(row), countPositive(col)
	}
	_, k := res.C.Dims()
	df := float64(n*m - k*(n+m-k))
	if df < 1 {
		return 0
	}
	return largestNoiseEigen(n-k, m-k) * res.ResidualSS / df
}
