package pipeline

import (
	"fmt"
	"io"
	"math"
	"slices"
	"strings"

	"github.com/bandsolve/bandsolve/io/output"
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
	// keptNote is the note keptNoise added when too few spectra were kept
	// for the estimate it was first made with ("" for none).
	keptNote string
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
	if i := slices.Index(r.Notes, b.keptNote); b.keptNote != "" && i >= 0 {
		r.Notes = slices.Delete(r.Notes, i, i+1)
	}
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
	var said []string
	for e, ex := range r.Experiments {
		if untouched(r, ex, r.noiseBase.noise[e]) {
			continue
		}
		if !keptDifferences(r, ex) {
			said = append(said, noDifferencesWords(r, ex))
			continue // the noise measured with them stays
		}
		var src string
		logs[e], src = experimentNoiseRatio(r, ex, m)
		ex.Assembled.Noise = scaledNoise(r.noiseBase.noise[e], logs[e])
		if logs[e] != nil && r.Settings.Pre >= 2 && preKept(r, ex) < 2 {
			// Its noise is now the second differences': the source says so,
			// and noiseDof counts their degrees of freedom.
			ex.Assembled.Noise.Source = src
			said = append(said, fewRepeatsWords(r, ex))
		}
	}
	if r.noiseBase.keptNote == "" && len(said) > 0 {
		r.noiseBase.keptNote = "noise: " + strings.Join(said, "; ")
		r.Notes = append(r.Notes, r.noiseBase.keptNote)
	}
	replaceNotes(r, notes, spectrumNoiseNotes(r))
	w := scaledWeights(r.noiseBase.w, r.Experiments, logs, m)
	if slices.Equal(w.Row, r.Weights.Row) && slices.Equal(w.Col, r.Weights.Col) {
		return false
	}
	before := medianOf(r.Weights.ChannelSigma())
	r.Weights = w
	noiseOf(r)
	r.NoiseSource += fmt.Sprintf("; measured again without the %d spectrum(s) set aside%s (σ %.4g, %.4g with them)", len(r.SetAside), bridgedWords(r), r.NoiseSigma, medianOf(r.noiseBase.w.ChannelSigma()))
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
// experiment ex, its spectra as measured (those set aside as they were,
// before any filling: rememberAside), nil when none of its spectra is set
// aside, and how σ_kept was measured (spectra.ChannelNoiseWithout: the
// steps between the pre-reaction repeats kept, or second differences in
// time when fewer than two are kept).
func experimentNoiseRatio(r *Result, ex *Experiment, m int) ([]float64, string) {
	rows := asideIn(r, ex)
	if len(rows) == 0 {
		return nil, ""
	}
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
	kept, all, src := spectra.ChannelNoiseWithout(v, r.Times[ex.FirstRow:ex.FirstRow+ex.Rows], r.Settings.Pre, blind, rows)
	out := make([]float64, m)
	for j := range out {
		if kept[j] > 0 && all[j] > 0 && !math.IsInf(kept[j], 0) && !math.IsInf(all[j], 0) {
			out[j] = 2 * math.Log(all[j]/kept[j])
		}
	}
	return out, src
}

// asideIn are the rows of experiment ex (from its first) set aside,
// ascending.
func asideIn(r *Result, ex *Experiment) []int {
	var rows []int
	for _, sa := range r.SetAside {
		if i := sa.Row - ex.FirstRow; i >= 0 && i < ex.Rows {
			rows = append(rows, i)
		}
	}
	slices.Sort(rows)
	return rows
}

// preKept is how many of the spectra --pre counts as before the reaction
// in experiment ex are not set aside: the repeats whose successive
// differences give the noise (spectra.ChannelNoiseWithout). A row set
// aside breaks the steps it is part of, each taken to the next repeat
// kept; with fewer than two kept there is none, and the noise comes from
// second differences in time instead. Before, a repeat set aside left a
// step of nothing: the first three of a series with the middle one set
// aside (gas lines) read σ 5.1·10⁻¹⁰ for 8·10⁻⁵ and a fit 1.8·10⁵ times
// the noise; dropped (--drop), filled from its neighbours, it left a step
// of zero (its first) or across the reaction's start (its last).
func preKept(r *Result, ex *Experiment) int {
	top := min(r.Settings.Pre, ex.Rows)
	left := top
	for _, i := range asideIn(r, ex) {
		if i < top {
			left--
		}
	}
	return left
}

// preAside are the times of the spectra --pre counts as before the
// reaction in experiment ex that are set aside, in words ("30, 60 s").
func preAside(r *Result, ex *Experiment) (string, int) {
	var ts []string
	for _, i := range asideIn(r, ex) {
		if i < min(r.Settings.Pre, ex.Rows) {
			ts = append(ts, output.Float(r.Times[ex.FirstRow+i]))
		}
	}
	return strings.Join(ts, ", ") + " s", len(ts)
}

// fewRepeatsWords says that experiment ex kept too few pre-reaction
// repeats for the noise to be measured from their steps.
func fewRepeatsWords(r *Result, ex *Experiment) string {
	at, k := preAside(r, ex)
	where := ""
	if len(r.Experiments) > 1 {
		where = " of " + ex.Source
	}
	are := "are"
	if k == 1 {
		are = "is"
	}
	return fmt.Sprintf("%d of the %d spectra%s counted as before the reaction (--pre %d) %s set aside (t = %s), leaving %d, and the noise from differences between repeats needs 2; so it is measured from second differences in time of the spectra kept (x_{i+1} − 2x_i + x_{i−1}: a change linear over three spectra cancels), a row set aside breaking every difference it is part of",
		k, min(r.Settings.Pre, ex.Rows), where, r.Settings.Pre, are, at, preKept(r, ex))
}

// keptDifferences says whether the spectra of experiment ex not set aside
// leave a difference to measure the noise on: a step between two
// pre-reaction repeats kept, else three spectra in a row kept (a second
// difference in time). With none the estimator would return its floor (the
// rounding step over √12: σ 10⁻⁸ where it is 10⁻³), so the noise measured
// with them stays, and a note says why (noDifferencesWords).
func keptDifferences(r *Result, ex *Experiment) bool {
	if len(asideIn(r, ex)) == 0 || r.Settings.Pre >= 2 && preKept(r, ex) >= 2 {
		return true
	}
	return differencesLeft(r, ex, 3, ex.Rows) > 0
}

// noDifferencesWords says that the spectra of experiment ex kept leave no
// difference to measure the noise on again (keptDifferences).
func noDifferencesWords(r *Result, ex *Experiment) string {
	where, repeats := "", ""
	if len(r.Experiments) > 1 {
		where = " of " + ex.Source
	}
	if r.Settings.Pre >= 2 {
		repeats = fmt.Sprintf("no two of the spectra counted as before the reaction (--pre %d) and ", r.Settings.Pre)
	}
	return fmt.Sprintf("the %d spectra%s set aside leave %sno three spectra in a row to measure it on without them, so it is the one measured with them", len(asideIn(r, ex)), where, repeats)
}

// bridgedWords says, for the noise measured again, that the steps
// between the pre-reaction repeats were taken over those set aside ("" when
// none was, or when too few were kept for steps: fewRepeatsWords says so).
func bridgedWords(r *Result) string {
	for _, ex := range r.Experiments {
		if _, k := preAside(r, ex); r.Settings.Pre >= 2 && k > 0 && preKept(r, ex) >= 2 {
			return fmt.Sprintf(", each step between the pre-reaction repeats (--pre %d) taken to the next one kept", r.Settings.Pre)
		}
	}
	return ""
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
// them. The steps between pre-reaction repeats (width 2) are taken over a
// repeat set aside to the next one kept (preKept): one fewer than those
// kept.
func differencesLeft(r *Result, ex *Experiment, width, upto int) int {
	left := max(upto-width+1, 0)
	if r.noiseBase == nil {
		return left
	}
	if width == 2 && upto == min(r.Settings.Pre, ex.Rows) {
		return max(preKept(r, ex)-1, 0)
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
