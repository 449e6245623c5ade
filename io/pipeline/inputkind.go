package pipeline

import (
	"fmt"
	"math"
	"slices"
	"sort"

	"github.com/bandsolve/bandsolve/io/report"
	"github.com/bandsolve/bandsolve/io/spectra"
	"gonum.org/v1/gonum/mat"
)

// absorbanceLook says why a series with no declared kind, about to be read
// as single beams, looks like absorbance instead, or "" when it does not.
// The range alone is no evidence: single beams in arbitrary units can lie
// in 0…2 as well. What tells them apart (Beer–Lambert, A = −log10(I/I0),
// common practice):
//   - a single beam is a positive intensity, absorbance dips below zero in
//     noise around its baseline;
//   - a single beam is an instrument's throughput curve, well above zero
//     over most of the axis, absorbance is a baseline near zero with bands;
//   - single beams of one series differ by the light the reaction absorbs,
//     a few tens of per cent at most at a typical point, while absorbance
//     spectra ratioed to the first change by large factors where the first
//     is near zero.
//
// Counts or volts beyond −1…5 are never taken for absorbance (above A ≈ 3
// almost no light is left; common practice).
//
// sure is true when two signs agree: values at or below zero and a first
// spectrum lying near zero. Either alone can come from single beams (an
// opaque range leaves counts at zero in noise; an axis reaching past the
// source's range leaves most of it dark), both together not from a
// throughput curve, so the caller refuses to guess rather than resolve
// absorbance as if it were light.
func absorbanceLook(ser *spectra.Series) (why string, sure bool) {
	n, m := ser.Values.Dims()
	if n == 0 || m == 0 {
		return "", false
	}
	// One value beyond −1…5 settles it: counts and volts stop the scan at
	// once (a full pass cost 60 ms on 2000 × 3001 single beams).
	lo, hi, nonPositive := math.Inf(1), math.Inf(-1), 0
	for i := 0; i < n; i++ {
		for _, v := range ser.Values.RawRowView(i)[:m] {
			switch {
			case v != v || v-v != 0: // NaN or ±Inf
				continue
			case v < -1 || v > 5:
				return "", false
			}
			if v < lo {
				lo = v
			}
			if v > hi {
				hi = v
			}
			if v <= 0 {
				nonPositive++
			}
		}
	}
	if !(lo < 1) {
		return "", false
	}
	first := ser.Values.RawRowView(0)[:m]
	med, top := middle(first), maxOf(first)
	nearZero := med <= 0 || med < 0.1*top
	if nonPositive > 0 {
		why = fmt.Sprintf("%d of their values are zero or negative (%.3g at the lowest), which an intensity cannot be, and all lie between %.3g and %.3g", nonPositive, lo, lo, hi)
		if nearZero {
			why += fmt.Sprintf(", and the first spectrum lies near zero (median %.3g, largest %.3g)", med, top)
		}
		return why, nearZero
	}
	if nearZero {
		return fmt.Sprintf("the first spectrum lies near zero (median %.3g, maximum %.3g) with bands rising from it, where a single beam is a throughput curve well above zero over most of the axis", med, top), false
	}
	if n > 1 {
		last := ser.Values.RawRowView(n - 1)[:m]
		logs := make([]float64, m)
		for j := range logs {
			logs[j] = math.Abs(math.Log10(last[j] / first[j]))
		}
		if f := middle(logs); f > 0.3 {
			return fmt.Sprintf("the last spectrum differs from the first by a factor of %.3g at the median point, where single beams differ only by the light the reaction absorbs", math.Pow(10, f)), false
		}
	}
	return "", false
}

// transmittanceLook says why a series with no declared kind, about to be
// read as single beams, looks like transmittance instead, or "" when it does
// not. A transmittance T = I/I0 is at most 1 (100 %) but for noise, by
// definition (IUPAC Gold Book, "transmittance"), and near 1 wherever the
// sample absorbs nothing, which is most of an infrared axis between its
// bands (common practice): every value within 0…1.5 (or 0…200 per cent,
// percentAbove and percentMost as --kind transmittance takes them) with the
// first spectrum's median at least transmittanceLevel of full scale.
// Single beams in counts are not confined to 0…1, and a throughput curve
// scaled to its peak lies far below it over most of the axis. Read as single
// beams, transmittance still gives the right differences (−log10(T/T0) is
// A − A0), so this is a warning, not a refusal: what is lost is the absolute
// absorbance that species mode resolves.
func transmittanceLook(ser *spectra.Series) string {
	n, m := ser.Values.Dims()
	if n == 0 || m == 0 {
		return ""
	}
	// One value beyond what any transmittance scale allows settles it:
	// counts stop the scan at once, as in absorbanceLook.
	lo, hi := math.Inf(1), math.Inf(-1)
	for i := 0; i < n; i++ {
		for _, v := range ser.Values.RawRowView(i)[:m] {
			if v > spectra.PercentMost || v < -transmittanceSlack*100 {
				return ""
			}
			if v == v && v-v == 0 { // finite
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
	}
	full, words := 1.0, "a fraction at most 1"
	if hi > spectra.PercentAbove {
		full, words = 100, "per cent at most 100"
	}
	if hi > spectra.PercentMost || lo < -transmittanceSlack*full {
		return ""
	}
	med := middle(finiteOf(ser.Values.RawRowView(0)[:m]))
	if !(med >= transmittanceLevel*full) {
		return ""
	}
	return fmt.Sprintf("all of them lie between %.4g and %.4g and the first spectrum's median is %.4g, as a transmittance's do (%s, near it where nothing absorbs)", lo, hi, med, words)
}

// transmittanceLevel is the least median, as a share of full transmission,
// of a first spectrum taken for transmittance; transmittanceSlack how far
// below zero noise may take a transmittance at points without light (as a
// share of full scale). The urethane ATR series as transmittance: median
// 0.980, smallest 0.430, largest 1.010.
const (
	transmittanceLevel = 0.7
	transmittanceSlack = 0.05
)

// notTransmittance says why values given as transmittance (--kind
// transmittance) are no transmittance, or "": the largest, on the scale
// they were taken in (largest already divided by 100 when percent), below
// transmittanceTop, so that nowhere on the axis does even that share of the
// light pass. A transmittance is near 1 where the sample absorbs nothing
// (IUPAC Gold Book, "transmittance"); absorbance lies near 0 there.
func notTransmittance(largest float64) string {
	if !(largest < transmittanceTop) {
		return ""
	}
	return fmt.Sprintf("their largest value, %.4g of full transmission, is below %.2g: a transmittance is near 1 (100 %%) wherever the sample absorbs nothing, an absorbance near 0", largest, transmittanceTop)
}

// transmittanceTop: below it, no point of the spectrum passes half the
// light (absorbance above 0.3 everywhere), which no spectrum with a
// baseline between its bands does (common practice).
const transmittanceTop = 0.5

func finiteOf(v []float64) []float64 {
	out := make([]float64, 0, len(v))
	for _, x := range v {
		if x == x && x-x == 0 {
			out = append(out, x)
		}
	}
	return out
}

// beamsAbove is the median value above which spectra given as absorbance
// or differences are taken for single beams: an absorbance of 10 leaves
// 10⁻¹⁰ of the light, and measured absorbance seldom exceeds 3 to 4 before
// the detector's noise takes over (common practice).
const beamsAbove = 10

// singleBeamLook says why a series given as absorbance or differences looks
// like single-beam intensities instead, or "" when it does not: every
// finite value positive and their median above beamsAbove (the first
// spectrum's, as absorbanceLook takes it).
func singleBeamLook(ser *spectra.Series) string {
	n, m := ser.Values.Dims()
	if n == 0 || m == 0 {
		return ""
	}
	first := make([]float64, 0, m)
	for _, v := range ser.Values.RawRowView(0)[:m] {
		switch {
		case math.IsNaN(v) || math.IsInf(v, 0):
		case v <= 0:
			return ""
		default:
			first = append(first, v)
		}
	}
	if len(first) == 0 {
		return ""
	}
	if med := middle(first); med > beamsAbove {
		return fmt.Sprintf("the first spectrum is positive everywhere with a median of %.3g (largest %.3g), and an absorbance of even %d would leave 10^-%d of the light", med, maxOf(first), beamsAbove, beamsAbove)
	}
	return ""
}

// saturationWarning names the ranges where the absolute absorbance of a
// species-mode run exceeds 2, so that it reaches the terminal and
// summary.json and not only the report.
func saturationWarning(r *Result) string {
	// A channel is over the limit when its largest absorbance is: one pass
	// along the rows for the largest per channel, rather than the report's
	// scan down every column (a cache miss per value at 20 000 spectra).
	n, m := r.D.Dims()
	// The assembly took each experiment's largest values as it formed
	// them (D is their absolute matrices stacked); else one pass here.
	if taken := assembledTops(r, m); taken != nil {
		return report.HighAbsorbanceWarning(r.Axis, r.AxisName, [][]float64{taken})
	}
	top := make([]float64, m)
	for j := range top {
		top[j] = math.Inf(-1)
	}
	for i := 0; i < n; i++ {
		for j, v := range r.D.RawRowView(i)[:m] {
			if v > top[j] {
				top[j] = v
			}
		}
	}
	return report.HighAbsorbanceWarning(r.Axis, r.AxisName, [][]float64{top})
}

// assembledTops is the largest absolute absorbance per channel of D from
// the experiments' assembly (spectra.Assembled.AbsoluteTop), nil unless
// every experiment has it.
func assembledTops(r *Result, m int) []float64 {
	var top []float64
	for _, e := range r.Experiments {
		t := e.Assembled.AbsoluteTop
		if len(t) != m {
			return nil
		}
		if top == nil {
			top = slices.Clone(t)
			continue
		}
		for j, v := range t {
			if v > top[j] {
				top[j] = v
			}
		}
	}
	return top
}

func middle(v []float64) float64 {
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	k := len(s) / 2
	if len(s)%2 == 1 {
		return s[k]
	}
	return (s[k-1] + s[k]) / 2
}

func maxOf(v []float64) float64 {
	top := math.Inf(-1)
	for _, x := range v {
		top = math.Max(top, x)
	}
	return top
}

// kindWords is how a warning names the kind the values were taken as.
func kindWords(k spectra.Kind) string {
	if k == spectra.Difference {
		return "difference spectra"
	}
	return "absorbance"
}

// looksLikeBeams says the common spectrum is too large for absorbance
// (singleBeamLook says so to the user, and what is asked of them is
// single beams, not absorbances).
func looksLikeBeams(mean []float64) bool {
	return len(mean) > 0 && middle(mean) > beamsAbove
}

// staticMost is how many times the largest change between spectra their
// common part may be before spectra given as differences are taken for
// absorbances, and negativeLeast the least negative part of that common
// spectrum (its negative sum over its positive sum) that clears them.
// Differences against a state of the series have a ratio of at most 1 (that
// state's own row is zero, as far from the mean as the mean is from zero);
// absorbances carry every species present from the start, and are positive
// wherever there is a band. The ATR exports of the urethane series
// (jevandezande/spectra, ../shared/real-data) read as differences: ratios
// 3.66 and 2.51, no negative part; their true differences against the
// first spectrum: 1.00 and 0.82, negative parts 0.34 and 0.031.
const (
	staticMost    = 1.5
	negativeLeast = 0.01
)

// staticDifferences warns when spectra given as differences (--kind
// difference) look like absorbances: a common part more than staticMost
// times the largest change between them, with almost no negative band (less
// than negativeLeast). Absolute absorbances read as differences resolve the
// spectrum present throughout as one more "reaction". "" otherwise.
// Non-finite values are left out of the sums.
func staticDifferences(source string, d *mat.Dense) string {
	if d == nil {
		return ""
	}
	n, m := d.Dims()
	if n < 2 {
		return ""
	}
	mean := make([]float64, m)
	count := make([]float64, m)
	for i := 0; i < n; i++ {
		for j, v := range d.RawRowView(i) {
			if !math.IsNaN(v) && !math.IsInf(v, 0) {
				mean[j] += v
				count[j]++
			}
		}
	}
	var common, pos, neg float64
	for j := range mean {
		if count[j] > 0 {
			mean[j] /= count[j]
		}
		common += mean[j] * mean[j]
		if mean[j] > 0 {
			pos += mean[j]
		} else {
			neg -= mean[j]
		}
	}
	change := 0.0
	for i := 0; i < n; i++ {
		dev := 0.0
		for j, v := range d.RawRowView(i) {
			if !math.IsNaN(v) && !math.IsInf(v, 0) {
				dev += (v - mean[j]) * (v - mean[j])
			}
		}
		change = math.Max(change, dev)
	}
	ratio := math.Sqrt(common / change)
	if !(ratio > staticMost) || !(neg < negativeLeast*pos) || looksLikeBeams(mean) {
		return ""
	}
	return fmt.Sprintf("%s: the spectra given as differences (--kind difference) look like absorbances: they share a common spectrum %.3g times larger than the largest change between them, "+
		"with no negative band, where differences against a state of the series vary about zero; if they are absorbances (against a blank, the empty crystal or air), give --kind absorbance: "+
		"the spectrum present throughout is otherwise resolved as one more reaction", source, ratio)
}
