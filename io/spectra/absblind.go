package spectra

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Blind points of absorbance, transmittance (read as absorbance) and
// difference input. An export knows nothing of the light behind its values,
// yet where none reached the detector the values still say so:
//
//   - the export's cap: where no light arrives an instrument writes a fixed
//     largest absorbance rather than −log10 of noise, so the matrix's largest
//     value comes back exactly, over neighbouring channels of a spectrum (a
//     flat top, as the single beams' ceiling) or in several spectra of one
//     channel, which measured values never do. Only a cap at or above
//     capLeast counts, so that a broad band's top rounded to a few digits is
//     not taken for one;
//   - a value that is not finite (−log10 of a beam at or below zero);
//   - a channel where a quarter of the spectra or more are at the cap or not
//     finite: a beam at or below zero that often has light of at most
//     0.67 σ_I (the normal distribution's quartile), and the channel's other
//     values are −log10 of noise too (the single beams' rule that more than
//     a quarter of unusable values is no data, per channel);
//   - a channel without light: where the beam is within weakSigmas·σ_I of
//     zero, propagation of error through A = −log10(I/I₀) gives
//     σ_A = σ_I/(I ln 10) ≥ 1/(weakSigmas·ln 10) ≈ 0.145 — the single
//     beams' 3σ rule (addWeakBelow) seen in absorbance, judged on the
//     channel's own scatter in time;
//   - a channel whose own scatter is more than √overweighted times the σ
//     its weight is given (the noise model smooths σ along the axis, and a
//     band edge that goes dark is narrower than its window): the single
//     beams' overweighted rule, per channel since these inputs have one σ
//     per channel.
//
// Such points are missing (weight zero), filled from the low-rank model
// like the single beams' blind points. Without them a capped channel is
// constant, its σ falls to the noise model's floor (a thousandth of the
// typical one) and its weight is a million times the typical weight, while
// channels of −log10(noise) pass for data.

// capLeast is the smallest absorbance taken for an export's cap: 2, where
// 1 % of the light is left (weakBeamFraction; Beer–Lambert), beyond which the
// single-beam path already warns of a saturated band. Caps in exports sit
// well above (common practice; from memory, 3 to 6 or more).
var capLeast = -math.Log10(weakBeamFraction)

// noLightSigma is σ_A at which the light left is within weakSigmas·σ_I of
// zero (above).
var noLightSigma = 1 / (weakSigmas * math.Ln10)

// ownLeast is the fewest differences a channel's own scatter is judged on:
// the median of n independent |N(0, σ)| values, 0.674σ, has the asymptotic
// standard error 1/(2f√n) with f = 2φ(0.674)/σ = 0.636/σ its density there
// (the variance of a sample median; common statistics), 21 % of it at
// n = 30: far from the factor of 10 tested, near enough to 0.145.
const ownLeast = 30

// capRepeats: the largest value this many times in a row along the axis or
// in time is a cap, as the single beams' flat top.
const capRepeats = 3

// absorbanceNoise finds the blind points of absorbance or difference values
// v and the noise model over the rest: σ per channel, the rounding step and
// the source in words. blind is nil when there are none; then σ has the
// bits of channelNoise(v, pre, nil).
func absorbanceNoise(v *mat.Dense, times []float64, pre int) (blind *Blind, sigma []float64, q float64, src string, sampling float64) {
	n, m := v.Dims()
	b := capBlind(v)
	// Whether a channel saw light is a matter of all its spectra, not only
	// of those before the reaction: its own scatter from second differences
	// in time of all of them (the model's own scales when it takes those).
	line := lineWeights(times)
	own, cnt := channelScales(timeDiffs{v: v, blind: b, line: line})
	q = quantum(v, b)
	if pre >= 2 {
		sigma, q, src, sampling = channelNoiseOwn(v, line, pre, b, q, nil, nil, false)
	} else {
		sigma, q, src, sampling = channelNoiseOwn(v, line, pre, b, q, own, cnt, false)
	}
	added := false
	for j, k := range capsPerChannel(b, m) {
		if k*4 >= n {
			added = b.addChannel(j) || added
		}
	}
	typical, plain := typicalOwn(own, cnt), plainAbsorbance(v)
	for j := 0; j < m; j++ {
		if cnt[j] < ownLeast {
			continue
		}
		if (plain && own[j] >= noLightSigma && own[j] > darkOverTypical*typical) || own[j] > darkAnyUnits*typical {
			added = b.addChannel(j) || added
		}
	}
	if runs := opaqueBands(v, b, own, cnt, typical, sigma, plain); len(runs) > 0 {
		b.Opaque, added = runs, true
	}
	if added {
		// The channels left out no longer raise their neighbours' σ.
		sigma, q, src, sampling = channelNoiseSpaced(v, line, pre, b)
	}
	raiseToOwn(sigma, own, cnt, b)
	if b.Count == 0 {
		return nil, sigma, q, src, sampling
	}
	return b, sigma, q, src, sampling
}

// darkOverTypical is how far above the typical channel's scatter a channel's
// own must lie, besides noLightSigma, to be taken for one without light in
// absorbance's own units (plainAbsorbance); values in other units
// (milli-absorbance) have every channel's scatter above noLightSigma and are
// judged by darkAnyUnits alone. Ten times, the single beams' overweighted
// rule in σ.
const darkOverTypical = 10

// darkAnyUnits is how far above the typical channel's scatter a channel's
// own must lie to be taken for one without light whatever the units: σ_A ∝
// 1/I, so a hundredth of the typical channel's light, the single beams'
// weak-beam fraction (1 %; Beer–Lambert, first-order error propagation).
const darkAnyUnits = 100

// plainAbsorbance says whether v's finite values all lie within ±10, as
// absorbance in its own units does (an absorbance of 10 leaves 10⁻¹⁰ of the
// light): only then is noLightSigma, a σ in absorbance, a level to judge by.
func plainAbsorbance(v *mat.Dense) bool {
	n, m := v.Dims()
	for i := 0; i < n; i++ {
		for _, x := range v.RawRowView(i)[:m] {
			if x-x == 0 && math.Abs(x) > 10 {
				return false
			}
		}
	}
	return true
}

// typicalOwn is the median of the channels' own scatter, over the channels
// judged on enough differences (ownLeast); 0 when none is.
func typicalOwn(own []float64, cnt []int) float64 {
	var v []float64
	for j, k := range cnt {
		if k >= ownLeast {
			v = append(v, own[j])
		}
	}
	if len(v) == 0 {
		return 0
	}
	return median(v)
}

// raiseToOwn gives a channel whose own scatter over
// all spectra is more than √overweighted times its σ that scatter as σ: the
// noise model smooths σ along the axis (and with --pre takes it from the
// spectra before the reaction), so a band edge that goes dark, or a band
// that grows strongly and lets less light through, would keep a weight its
// noise does not allow. The channel is weighted down, not left out: it still
// holds the band (the single beams' overweighted rule, which blinds points,
// has a σ per point to judge them by; these inputs have one per channel).
func raiseToOwn(sigma, own []float64, cnt []int, b *Blind) {
	for j := range sigma {
		if cnt[j] >= ownLeast && own[j] > math.Sqrt(overweighted)*sigma[j] {
			sigma[j] = own[j]
		}
	}
}

// mostlyBlind refuses absorbance or difference values of which more than a
// quarter hold no information, as the single-beam path refuses data that
// are mostly not intensities: not a few dark channels but the wrong kind or
// units of data, which a resolution of the rest would hide.
func mostlyBlind(s *Series, b *Blind) error {
	n, m := s.Values.Dims()
	if b == nil || b.Count*4 <= n*m {
		return nil
	}
	return inputErr(s.Source, 0, "check --kind and the export's units (absorbance, not per cent or milli-absorbance), or cut dark ranges with --exclude LO:HI",
		"%d of %d values hold no information as absorbance (an export's cap, or channels without light)", b.Count, n*m)
}

// capBlind marks the values that are not finite and, when the largest
// finite value is an export's cap (above), every value equal to it.
func capBlind(v *mat.Dense) *Blind {
	n, m := v.Dims()
	b := &Blind{Rows: make([][]int, n)}
	top := math.Inf(-1)
	for i := 0; i < n; i++ {
		for _, x := range v.RawRowView(i)[:m] {
			if x > top && !math.IsInf(x, 1) {
				top = x
			}
		}
	}
	isCap := top >= capLeast && repeatsTop(v, top)
	for i := 0; i < n; i++ {
		for j, x := range v.RawRowView(i)[:m] {
			if math.IsNaN(x) || math.IsInf(x, 0) || (isCap && x == top) {
				b.Rows[i] = append(b.Rows[i], j)
				b.Count++
			}
		}
	}
	return b
}

// repeatsTop says whether top comes capRepeats times in a row along the axis
// of a spectrum or in capRepeats spectra of one channel.
func repeatsTop(v *mat.Dense, top float64) bool {
	n, m := v.Dims()
	inTime := make([]int, m)
	for i := 0; i < n; i++ {
		row := v.RawRowView(i)[:m]
		if hasRunOf(row, top, capRepeats) {
			return true
		}
		for j, x := range row {
			if x == top {
				if inTime[j]++; inTime[j] >= capRepeats {
					return true
				}
			}
		}
	}
	return false
}

// capsPerChannel counts the blind points of each of m channels.
func capsPerChannel(b *Blind, m int) []int {
	out := make([]int, m)
	for _, r := range b.Rows {
		for _, j := range r {
			out[j]++
		}
	}
	return out
}

// observedReference averages the observed values of the reference rows per
// channel into ref; a channel where every one is blind has no reference and
// becomes blind in every spectrum (as a single-beam reference without light
// makes it). It says whether any channel was added.
func observedReference(v *mat.Dense, rows []int, b *Blind, ref []float64) bool {
	cnt := make([]float64, len(ref))
	meanObserved(v, rows, b, ref, cnt)
	added := false
	for j, c := range cnt {
		if c == 0 {
			added = b.addChannel(j) || added
		}
	}
	return added
}

// absorbanceBlindNotes is BlindNotes for absorbance or difference input.
func absorbanceBlindNotes(s *Series, b *Blind) []string {
	var notes []string
	if b != nil && len(b.Opaque) > 0 {
		// The opaque bands have a note of their own; the other blind
		// points keep theirs.
		notes = append(notes, opaqueNote(s.shown(), s.AxisName, s.Axis, b.Opaque))
		b = outsideRuns(b, b.Opaque)
	}
	return append(notes, blindNotes(s.shown(), s.AxisName, s.Axis, s.Times, b, fmt.Sprintf(
		"a value at the export's cap or not finite, or in a channel whose scatter in time says no light reached it (σ ≥ %.3g absorbance: the beam within 3σ of zero) or that is ten times noisier than its weight allows",
		noLightSigma))...)
}
