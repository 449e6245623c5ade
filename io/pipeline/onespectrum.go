package pipeline

import (
	"fmt"
	"math"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"github.com/bandsolve/bandsolve/mcr"
)

// A misfit one spectrum carries. A fit whose residual is many times the
// noise is read as a model that lacks something (a species, a step) or a
// constraint the data break (closure); but one faulty spectrum the outlier
// test let pass (a bubble kept by a fitted baseline) raises the residual as
// much, and breaks closure alone. When one spectrum carries most of the
// misfit beyond the noise, the warnings name it, with its residual in units
// of the noise, before any constraint or missing species: dropping the
// bubble of an invented A → B → C series took the residual from 7.6 times
// the noise to 0.97, and the real urethane series with a bubble added from
// 4.7 to 1.2, where the warnings had said to try --closure off.

// oneSpectrum is the spectrum that carries most of a fit's misfit beyond
// the noise.
type oneSpectrum struct {
	Row          int
	Share        float64 // of the misfit beyond the noise, Σ rowSS − χ²/q²
	RMS, Typical float64 // its residual and the median spectrum's, per point in units of the noise
}

// mostMisfit is the share of the misfit beyond the noise above which one
// spectrum carries most of it: more than half (the word's meaning).
const mostMisfit = 0.5

// findOneSpectrum finds, among the rows kept (keep nil: all), the one
// spectrum that carries more than half of the misfit beyond the noise.
// rowSS are the rows' residual sums of squares and q = √(χ²/ν) the fit's
// residual over the noise: noise alone then leaves Σ rowSS / q² of the
// total, about the same in every spectrum of the same number of points, so
// a spectrum's misfit is rowSS_i less its share of that, and its residual
// in units of the noise √(rowSS_i · q² · n / Σ rowSS) (the spectra's points
// taken as alike). It needs q ≥ √2 (a misfit at least the noise's own size)
// and three spectra kept.
func findOneSpectrum(rowSS []float64, keep func(i int) bool, q float64) (oneSpectrum, bool) {
	var rows []int
	total := 0.0
	for i, v := range rowSS {
		if (keep == nil || keep(i)) && v >= 0 && !math.IsNaN(v) {
			rows = append(rows, i)
			total += v
		}
	}
	n := float64(len(rows))
	if len(rows) < 3 || !(q >= math.Sqrt2) || !(total > 0) || math.IsInf(total, 0) {
		return oneSpectrum{}, false
	}
	noise := total / (q * q) // what noise alone leaves, over all rows kept
	excess := total - noise
	best := rows[0]
	for _, i := range rows {
		if rowSS[i] > rowSS[best] {
			best = i
		}
	}
	rms := func(v float64) float64 { return math.Sqrt(v * n / noise) }
	var all []float64
	for _, i := range rows {
		all = append(all, rms(rowSS[i]))
	}
	slices.Sort(all)
	med := all[len(all)/2]
	if len(all)%2 == 0 {
		med = (all[len(all)/2-1] + all[len(all)/2]) / 2
	}
	share := (rowSS[best] - noise/n) / excess
	if !(share > mostMisfit) {
		return oneSpectrum{}, false
	}
	return oneSpectrum{Row: best, Share: share, RMS: rms(rowSS[best]), Typical: med}, true
}

// words name the spectrum, its residual and what to do.
func (o oneSpectrum) words(r *Result) string {
	name, drop := o.named(r)
	return fmt.Sprintf("%.0f %% of the misfit beyond the noise lies in one spectrum, %s, whose residual is %.3g times the noise per point against %.3g for the median spectrum: look at that spectrum first (a bubble, gas lines, a bad scan the outlier test let pass) and set it aside with --drop %s if it is faulty, before reading the misfit as a missing species or step or a constraint that does not hold", 100*o.Share, name, o.RMS, o.Typical, drop)
}

// constraintWords say, after a constraint's rise, that the one spectrum
// may break the constraint alone.
func (o oneSpectrum) constraintWords(r *Result) string {
	name, drop := o.named(r)
	return fmt.Sprintf("but one spectrum, %s, carries %.0f %% of the fit's misfit beyond the noise (%.3g times the noise against %.3g for the median spectrum) and may break it alone: look at it and set it aside (--drop %s) before dropping the constraint", name, 100*o.Share, o.RMS, o.Typical, drop)
}

// named is the spectrum's time (and file) and what --drop takes for it:
// its time in seconds, or its file name when experiments stacked share
// the time.
func (o oneSpectrum) named(r *Result) (name, drop string) {
	tu := shownTimeUnit(r.Settings)
	t := r.Times[o.Row]
	name = fmt.Sprintf("t = %s %s", tu.T(t), tu.Unit)
	drop = strconv.FormatFloat(t, 'g', -1, 64)
	if e := r.Experiments[r.ExpOfRow[o.Row]]; o.Row-e.FirstRow < len(e.Series.Names) {
		src := filepath.Base(e.Series.Names[o.Row-e.FirstRow])
		name += " (" + src + ")"
		if timeShared(r, o.Row) && !strings.Contains(src, " column ") {
			drop = "'" + src + "'"
		}
	}
	return name, drop
}

// timeShared says another spectrum has row i's time (experiments stacked),
// so that --drop needs its file name.
func timeShared(r *Result, i int) bool {
	for k, t := range r.Times {
		if k != i && t == r.Times[i] {
			return true
		}
	}
	return false
}

// resolutionRowSS is each spectrum's residual sum of squares of the fit
// C Sᵀ to r.D at its observed points, weighted by the noise weights when
// the run has them (else in the data's units); the rows set aside count 0.
func resolutionRowSS(r *Result, res *mcr.Result) []float64 {
	n, m := r.D.Dims()
	_, k := res.C.Dims()
	out := make([]float64, n)
	for i := 0; i < n; i++ {
		if setAside(r.SetAside, i) {
			continue
		}
		d, c := r.D.RawRowView(i)[:m], res.C.RawRowView(i)[:k]
		ss := 0.0
		for j, v := range d {
			if r.Blind != nil && r.Blind.Has(i, j) {
				continue
			}
			for a, ca := range c {
				v -= ca * res.S.At(j, a)
			}
			if weighted(r) {
				v *= math.Sqrt(r.Weights.Row[i] * r.Weights.Col[j])
			}
			ss += v * v
		}
		out[i] = ss
	}
	return out
}

// allRows puts values of the rows kept (keptRows, as the data fit takes
// them) into the rows of r.D, 0 for the rows set aside; values of every
// row are returned as they are.
func allRows(r *Result, kept []float64) []float64 {
	n, _ := r.D.Dims()
	if len(kept) == n {
		return kept
	}
	rows := keptRows(r)
	if len(rows) != len(kept) {
		return nil
	}
	out := make([]float64, n)
	for a, i := range rows {
		out[i] = kept[a]
	}
	return out
}
