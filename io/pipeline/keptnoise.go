package pipeline

import (
	"fmt"
	"io"
	"math"
	"slices"

	"github.com/bandsolve/bandsolve/io/spectra"
	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
)

// The noise model is measured at assembly, on every spectrum: it has to be,
// as the rank, the start and the outlier screen itself read the data in
// its units. A spectrum the screen then sets aside (a bubble, gas lines)
// had its share in that measure: its second differences in time, several
// times the noise, are 3 of the n − 2 of every channel, and they raise
// the median absolute value the estimate is taken from (for a contaminated
// share ε of a normal sample the median of |x| moves from the 0.5 to about
// the 0.5/(1 − ε) quantile; Huber, Robust Statistics, 1981, ch. 4, from
// memory): 5 % of 58 spectra raise σ by about 6 %. So once spectra are set
// aside the noise per channel is measured again, with the same estimator
// and their rows left out as it leaves blind points out
// (spectra.ChannelNoiseWithout), and the fit is made again with it.

// rememberAside records the rows of the spectra set aside as they are
// before their first filling.
func rememberAside(r *Result) {
	if r.asideOrig == nil {
		r.asideOrig = map[int][]float64{}
	}
	_, m := r.D.Dims()
	for _, sa := range r.SetAside {
		if _, ok := r.asideOrig[sa.Row]; !ok {
			r.asideOrig[sa.Row] = slices.Clone(r.D.RawRowView(sa.Row)[:m])
		}
	}
}

// noiseOfAll is the noise measured on every spectrum: the weights and each
// experiment's estimate.
type noiseOfAll struct {
	w      *spectra.Weights
	noise  []spectra.Noise
	source string // r.NoiseSource as it was
	notes  []string
}

// restoreNoise puts back the noise measured on every spectrum, for a
// resolution made again from the start (promoteMinor: the rows set aside
// are put back too, and the screen runs again). Left as measured without
// spectra no longer set aside, the weights were those of a screen that no
// longer holds: a series whose first five spectra (its three pre-reaction
// repeats among them) were set aside by a fit one species short kept the
// noise measured without them in the fit with that species, which set
// nothing aside.
func restoreNoise(r *Result) {
	b := r.noiseBase
	if b == nil {
		return
	}
	now := spectrumNoiseNotes(r)
	r.Weights = &spectra.Weights{Row: slices.Clone(b.w.Row), Col: slices.Clone(b.w.Col)}
	for e, ex := range r.Experiments {
		ex.Assembled.Noise = b.noise[e]
	}
	replaceNotes(r, now, b.notes)
	noiseOf(r)
	r.NoiseSource = b.source
	r.noiseBase = nil
	r.ahead.aheadSingular(r)
}

// keptNoise measures the noise again without the spectra set aside and
// sets r.Weights to the weights measured on every spectrum (r.noiseBase)
// with each channel's σ scaled by the ratio of the two measures, and each
// experiment's channel noise (the spectra's levels in summary.json are
// taken of it) likewise: the row effects (a spectrum's own level) stay. It
// reports whether the weights changed.
func keptNoise(r *Result, log io.Writer) bool {
	if !weighted(r) || len(r.SetAside) == 0 {
		return false
	}
	for _, ex := range r.Experiments {
		if ex.Assembled == nil {
			return false // no estimate to measure again
		}
	}
	notes := spectrumNoiseNotes(r)
	if r.noiseBase == nil {
		r.noiseBase = &noiseOfAll{w: &spectra.Weights{Row: slices.Clone(r.Weights.Row), Col: slices.Clone(r.Weights.Col)}, source: r.NoiseSource, notes: notes}
		for _, ex := range r.Experiments {
			r.noiseBase.noise = append(r.noiseBase.noise, ex.Assembled.Noise)
		}
	}
	_, m := r.D.Dims()
	logs := make([][]float64, len(r.Experiments)) // per experiment, 2 log(σ_all/σ_kept); nil: none aside
	for e, ex := range r.Experiments {
		if untouched(r, ex, r.noiseBase.noise[e]) {
			continue
		}
		logs[e] = experimentNoiseRatio(r, ex, m)
		ex.Assembled.Noise = scaledNoise(r.noiseBase.noise[e], logs[e])
	}
	replaceNotes(r, notes, spectrumNoiseNotes(r))
	w := scaledWeights(r.noiseBase.w, r.Experiments, logs, m)
	if slices.Equal(w.Row, r.Weights.Row) && slices.Equal(w.Col, r.Weights.Col) {
		return false
	}
	before := medianOf(r.Weights.ChannelSigma())
	r.Weights = w
	noiseOf(r)
	r.NoiseSource += fmt.Sprintf("; measured again without the %d spectrum(s) set aside (σ %.4g, %.4g with them)", len(r.SetAside), r.NoiseSigma, medianOf(r.noiseBase.w.ChannelSigma()))
	// The singular values' figure names the noise level: drawn ahead
	// again with this one, in place of the one drawn with the first.
	r.ahead.aheadSingular(r)
	fmt.Fprintf(log, "noise measured again without the spectra set aside: σ %.3g (was %.3g); resolving again\n", r.NoiseSigma, before)
	return true
}

// untouched says the noise of experiment ex was measured without any of
// its spectra set aside: single beams with --pre N ≥ 2 have the detector's
// noise from the steps between those repeats of the starting state alone
// (spectra.channelNoiseOwn; absorbance takes only its level from them, its
// shape along the axis from every spectrum), which no spectrum set aside
// after them touches. Scaled by the ratio of two measures of the whole
// series it would only move by their difference: the invented single-beam
// series with every fault (4 spectra aside, --pre 3) went from 1.009 to
// 1.038 times the true noise.
func untouched(r *Result, ex *Experiment, nz spectra.Noise) bool {
	pre := r.Settings.Pre
	if pre < 2 || nz.Unit != singleBeamUnits {
		return false
	}
	for _, sa := range r.SetAside {
		if i := sa.Row - ex.FirstRow; i >= 0 && i < min(pre, ex.Rows) {
			return false
		}
	}
	return true
}

// singleBeamUnits is spectra.Noise's unit for a noise measured on single
// beams.
const singleBeamUnits = "single-beam units"

// experimentNoiseRatio is 2 log(σ_all,j/σ_kept,j) per channel of
// experiment ex, its spectra as measured (those set aside as they were),
// nil when none of its spectra is set aside.
func experimentNoiseRatio(r *Result, ex *Experiment, m int) []float64 {
	var rows []int
	for _, sa := range r.SetAside {
		if i := sa.Row - ex.FirstRow; i >= 0 && i < ex.Rows {
			rows = append(rows, i)
		}
	}
	if len(rows) == 0 || !preStepsLeft(r.Settings.Pre, ex.Rows, rows) {
		return nil
	}
	slices.Sort(rows)
	v := mat.NewDense(ex.Rows, m, nil)
	for i := range ex.Rows {
		src := r.D.RawRowView(ex.FirstRow + i)[:m]
		if orig, ok := r.asideOrig[ex.FirstRow+i]; ok {
			src = orig
		}
		copy(v.RawRowView(i), src)
	}
	var blind *spectra.Blind
	if r.Blind != nil && r.Blind.Count > 0 {
		blind = &spectra.Blind{Rows: r.Blind.Rows[ex.FirstRow : ex.FirstRow+ex.Rows]}
	}
	kept, all := spectra.ChannelNoiseWithout(v, r.Times[ex.FirstRow:ex.FirstRow+ex.Rows], r.Settings.Pre, blind, rows)
	out := make([]float64, m)
	for j := range out {
		if kept[j] > 0 && all[j] > 0 && !math.IsInf(kept[j], 0) && !math.IsInf(all[j], 0) {
			out[j] = 2 * math.Log(all[j]/kept[j])
		}
	}
	return out
}

// preStepsLeft says whether the noise measured from the steps between the
// pre-reaction repeats (--pre N ≥ 2: the level of it, from single beams
// the whole of it) can be measured again with the rows aside left out: at
// least two repeats not aside, one step. With none left the estimator has
// no difference to take and returns its floor, the rounding step over √12:
// a series whose three repeats were all set aside read σ 3.3·10⁻⁸ for
// 8.8·10⁻⁴ and a fit 8·10⁴ times the noise. The noise is then the one
// measured with them.
func preStepsLeft(pre, rows int, aside []int) bool {
	if pre < 2 {
		return true
	}
	left := min(pre, rows)
	for _, i := range aside {
		if i < min(pre, rows) {
			left--
		}
	}
	return left >= 2
}

// replaceNotes puts each of now in place of the note in r.Notes equal to
// the one at its place in was (the spectra's levels, said before the
// noise was measured again).
func replaceNotes(r *Result, was, now []string) {
	for k, w := range was {
		if i := slices.Index(r.Notes, w); i >= 0 && k < len(now) {
			r.Notes[i] = now[k]
		}
	}
}

// scaledNoise is nz with σ_j divided by exp(logs_j/2) (nil: nz itself).
func scaledNoise(nz spectra.Noise, logs []float64) spectra.Noise {
	if logs == nil || len(nz.Channel) != len(logs) {
		return nz
	}
	ch := make([]float64, len(logs))
	for j, g := range logs {
		ch[j] = nz.Channel[j] * math.Exp(-g/2)
	}
	nz.Channel, nz.Level = ch, medianOf(ch)
	return nz
}

// differencesLeft is how many windows of width rows among the first upto
// rows of experiment ex (the differences of that width) touch no spectrum
// set aside: every window when the noise was not measured again without
// them.
func differencesLeft(r *Result, ex *Experiment, width, upto int) int {
	left := max(upto-width+1, 0)
	if r.noiseBase == nil {
		return left
	}
	for c := 0; c+width <= upto; c++ {
		for i := c; i < c+width; i++ {
			if setAside(r.SetAside, ex.FirstRow+i) {
				left--
				break
			}
		}
	}
	return left
}

// scaledWeights is base with experiment e's column weights times
// exp(logs[e]) (nil: unchanged), stacked as spectra.StackWeights stacks
// experiments: the columns take the row-weighted mean of the logs, each
// experiment's rows the mean over channels of what its own columns lose
// to that. One experiment: its columns alone change.
func scaledWeights(base *spectra.Weights, exps []*Experiment, logs [][]float64, m int) *spectra.Weights {
	n := len(base.Row)
	mean := make([]float64, m)
	for e, ex := range exps {
		for j, g := range logs[e] {
			mean[j] += float64(ex.Rows) * g / float64(n)
		}
	}
	out := &spectra.Weights{Row: slices.Clone(base.Row), Col: make([]float64, m)}
	for j, b := range base.Col {
		out.Col[j] = b * math.Exp(mean[j])
	}
	if len(exps) == 1 {
		return out
	}
	for e, ex := range exps {
		d := 0.0
		for j := range m {
			g := 0.0
			if logs[e] != nil {
				g = logs[e][j]
			}
			d += g - mean[j]
		}
		f := math.Exp(d / float64(m))
		for i := ex.FirstRow; i < ex.FirstRow+ex.Rows; i++ {
			out.Row[i] *= f
		}
	}
	return out
}

// refitKeptNoise resolves again, warm, with the weights keptNoise set:
// the data rebuilt with them, the fit made, and the rows set aside
// refilled from it (refillSetAside).
func refitKeptNoise(r *Result, data mcr.Data, res *mcr.Result, shapes *mat.Dense, opt mcr.Options, log io.Writer) (*mcr.Result, mcr.Data, error) {
	var err error
	switch data.(type) {
	case mcr.WeightedCompressed:
		// Made again of √A D √B with the new weights.
		if data, err = refreshData(r, mcr.WeightedCompressed{Row: r.Weights.Row, Col: r.Weights.Col}); err != nil {
			return nil, nil, err
		}
	default:
		data = mcr.WeightedDense{D: r.D, Row: r.Weights.Row, Col: r.Weights.Col}
	}
	if res, err = mcr.Resolve(data, res.C, opt); err != nil {
		return nil, nil, explainResolveError(r, err)
	}
	return refillSetAside(r, data, res, shapes, opt, log)
}
