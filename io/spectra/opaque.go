package spectra

import (
	"fmt"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// An opaque band in absorbance input: where the sample (or an added band,
// a cell window, a solvent) leaves the detector next to no light, the
// detector's noise, about constant in counts, becomes σ_A = σ_I/(I ln 10)
// by propagation of error through A = −log10(I/I₀): at an absorbance 3
// above the rest the noise is 1000 times theirs, and far from normal
// (−log10 of a few counts, values at the export's cap). The single beams
// show the counts and mark such points blind (addWeakBelow); an export of
// absorbance hides them, yet the channels still say so, by a scatter in
// time far above the typical channel's at an absorbance far above its.
// Such a band is taken as nearly blind whole, core and flanks: its flanks
// are strongly absorbing too, and the band's height there sets the scale
// against which weaker bands are judged (a refit's "band of its own"), so
// a constant opaque band left with its flanks turns the sample's weak
// bands into "no band" and a change of their shape into a species
// (urethane ATR series with a band of absorbance 3.5 added at 2000 cm⁻¹:
// rank 3, where cutting 1900–2100 cm⁻¹ gives 2).

// opaqueOverTypical is how far above the typical channel's scatter in time
// a channel's own must lie to be the core of an opaque band: 30 times, 3 %
// of the typical channel's light when the noise is constant in counts.
const opaqueOverTypical = 30

// opaqueRise is how far above the typical channel's absorbance the core's
// must lie besides: one absorbance unit (a tenth of the light; Beer–Lambert),
// so that a channel noisy for another reason (a gas line in the beam path,
// CO₂'s at 667 cm⁻¹ in real ATR series is 20–30 times noisier at an
// absorbance of 0.04) is not taken for a dark one.
const opaqueRise = 1

// opaqueLeast is the fewest differences in time a core channel is judged
// on: the median of n of them has a relative standard error of about
// 1.17/√n (see ownLeast), 37 % at n = 10, far from the factor of 30
// tested. Fewer than ownLeast are allowed because a channel with values at
// the cap loses the differences that touch them.
const opaqueLeast = 10

// opaqueFlank is where an opaque band's flank ends: where the noise model's
// σ is back within twice the typical channel's (half its light).
const opaqueFlank = 2

// opaqueBands marks the channels of opaque bands in b, whole, and returns
// the runs of channels so marked (nil when there is none). own and cnt are
// each channel's scatter in time and its count of differences, typical
// their typical value (typicalOwn), sigma the noise model's σ per channel.
// Values other than absorbance in its own units (plain false) have no level
// to judge by, and nothing is marked.
func opaqueBands(v *mat.Dense, b *Blind, own []float64, cnt []int, typical float64, sigma []float64, plain bool) [][2]int {
	m := len(own)
	if !plain || !(typical > 0) {
		return nil
	}
	var core []int
	for j := 0; j < m; j++ {
		if cnt[j] >= opaqueLeast && own[j] > opaqueOverTypical*typical {
			core = append(core, j)
		}
	}
	if len(core) == 0 {
		return nil
	}
	level := channelLevels(v, b)
	typLevel := median(finiteOnly(level))
	typSigma := median(sigma)
	// A channel blind in every spectrum already (at the cap throughout) is
	// part of the band it lies in: the growth goes on through it.
	gone := b.Everywhere(m)
	mark := make([]bool, m)
	dark := func(j int) bool { return level[j] >= typLevel+opaqueRise }
	flank := func(j int) bool {
		return !mark[j] && (gone[j] || sigma[j] > opaqueFlank*typSigma && level[j] > typLevel)
	}
	for _, j := range core {
		if mark[j] || !dark(j) {
			continue
		}
		mark[j] = true
		for l := j - 1; l >= 0 && flank(l); l-- {
			mark[l] = true
		}
		for r := j + 1; r < m && flank(r); r++ {
			mark[r] = true
		}
	}
	runs := runsOf(m, func(j int) bool { return mark[j] })
	for _, r := range runs {
		for j := r[0]; j <= r[1]; j++ {
			b.addChannel(j)
		}
	}
	return runs
}

// channelLevels is each channel's mean absorbance over its observed finite
// values (NaN when it has none).
func channelLevels(v *mat.Dense, b *Blind) []float64 {
	n, m := v.Dims()
	sum, k := make([]float64, m), make([]float64, m)
	for i := 0; i < n; i++ {
		for j, x := range v.RawRowView(i)[:m] {
			if x-x == 0 && !b.Has(i, j) {
				sum[j] += x
				k[j]++
			}
		}
	}
	for j := range sum {
		sum[j] /= k[j] // 0/0 is NaN: no level
	}
	return sum
}

func finiteOnly(v []float64) []float64 {
	var out []float64
	for _, x := range v {
		if x-x == 0 {
			out = append(out, x)
		}
	}
	return out
}

// opaqueNote names the opaque bands and says why they were set aside, in
// one note; "" when there are none.
func opaqueNote(source, axisName string, axis []float64, runs [][2]int) string {
	if len(runs) == 0 {
		return ""
	}
	var where []string
	for _, r := range runs {
		where = append(where, fmt.Sprintf("%s %g–%g", axisName, axis[r[0]], axis[r[1]]))
	}
	return fmt.Sprintf("%s: %s taken as nearly blind in every spectrum, an opaque band: its scatter in time is over %d times the typical channel's at an absorbance over %g above the typical channel's (the detector saw next to no light there: σ_A = σ_I/(I ln 10)), with its flanks out to where the noise is back within %d times the typical; these channels count neither toward the rank nor toward the outlier screen, and the fit leaves them out (weight zero), as single beams' points near zero counts are; the resolved spectra are not determined there (written as 0, which is not a measured zero); --exclude LO:HI cuts such a range from the results",
		source, strings.Join(where, ", "), opaqueOverTypical, float64(opaqueRise), opaqueFlank)
}

// outsideRuns is b without the channels of runs (b itself when runs is
// empty), for the note on the other blind points.
func outsideRuns(b *Blind, runs [][2]int) *Blind {
	if b == nil || len(runs) == 0 {
		return b
	}
	in := func(j int) bool {
		for _, r := range runs {
			if j >= r[0] && j <= r[1] {
				return true
			}
		}
		return false
	}
	out := &Blind{Rows: make([][]int, len(b.Rows))}
	for i, row := range b.Rows {
		for _, j := range row {
			if !in(j) {
				out.Rows[i] = append(out.Rows[i], j)
				out.Count++
			}
		}
	}
	return out
}
