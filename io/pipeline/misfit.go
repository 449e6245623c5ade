package pipeline

import (
	"fmt"
	"math"
	"strings"

	"github.com/bandsolve/bandsolve/internal/pvalue"
	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/spectra"
	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// The misfit test: is the fit's residual above what the noise alone leaves?
//
// The figure tested is the one the fit line shows and the resolution
// minimises, q = √(χ²/ν): the noise-weighted residual sum of squares over
// ν = observed − k(n + m − k) degrees of freedom (without weights, every
// point weighted 1/σ²). The unweighted lack of fit is not: channels where
// little light reaches the detector carry most of its noise, so its ratio
// to the noise's value stays small beside a misfit many times the noise
// where the chemistry is.
//
// When the model holds, χ² is σ² times a χ²_ν variable, but σ² is itself
// estimated, from ν_σ differences in time; q² is then the ratio of two
// independent mean squares and follows the F(ν, ν_σ) law (Snedecor's F;
// e.g. Mood, Graybill & Boes, Introduction to the Theory of Statistics,
// 1974, §VI.4.3, from memory). The test is one-sided at --alpha: a misfit
// only raises q. With ν in the hundred thousands the estimate's own error
// sets the limit: a fit within a few per cent of the noise passes when
// the noise level came from a few spectra.
//
// ν_σ: the noise level is the median absolute difference in time per
// channel (spectra.Noise), whose variance is that of the standard
// deviation of 1/0.37 times fewer values (the MAD's efficiency at the
// normal, 37 %; Rousseeuw & Croux, JASA 1993, from memory), and
// neighbouring differences share a spectrum, which leaves their absolute
// values correlated: N differences of coefficients c count as N/κ
// independent ones, κ the median's (spectra.MADKappa: 1.21 for
// successive, 1.45 for second differences; a sum of squares' 1 + 2 Σ ρ_h²,
// 1.5 and 1.94, taken before, overstated a median's variance).
//
// Noise correlated along the axis (apodisation, interpolation) leaves the
// mean of each χ² as it is but makes its variance larger: m correlated
// points count as m/τ independent ones (Bayley & Hammersley 1946), the
// allowance the --baseline F-test makes (svd.AxisCorrelation). τ is
// measured here on second differences in time of the weighted data, which
// cancel the chemistry and keep the noise; it bounds Σ ρ_h², the exact
// factor, from above, so the limit errs towards silence. Both degrees of
// freedom are divided by it.
//
// The weights are estimates too, channel by channel and, when the spectra
// differ in noise, spectrum by spectrum: 1/σ̂² with a log error ε of
// variance s² has the mean e^{2s²}/σ² (E e^{−2ε} for a normal ε), so a
// right model's χ² is that much above ν even with the level right
// (Jensen's inequality; its size the estimates' own sampling variance,
// spectra.Noise.Sampling and SpectrumNoise.Sampling). The limit and P take
// q²/(1 + g), g = e^{2s²} − 1. Left out it made the test reject a right
// model in 10 of 16 invented absorbance series (noise constant in counts,
// three noise levels, no --pre; g there 2–3 %, the limit 1.4 %).

// misfitCheck is the test's outcome.
type misfitCheck struct {
	Ratio, Limit  float64 // q and the largest q noise alone gives at --alpha
	Dof, NoiseDof float64 // ν and ν_σ, before the division by Tau
	Tau           float64 // correlation along the axis, ≥ 1
	Allowance     float64 // g: the weights' own sampling error's rise of E q²
	P             float64 // probability that noise alone gives q or more
	Alpha         float64
}

// noiseDof is ν_σ: each experiment's count of differences its noise level
// came from (spectra.Noise's source; once measured again without the
// spectra set aside, those that touch none), as independent values of a
// standard deviation. +Inf when no experiment says (the figure is then
// taken as exact).
func noiseDof(r *Result) float64 {
	_, m := r.D.Dims()
	var dof float64
	for _, e := range r.Experiments {
		if e.Assembled == nil {
			return math.Inf(1)
		}
		src := e.Assembled.Noise.Source
		var count, kappa float64
		switch {
		case strings.HasPrefix(src, "successive differences of the"):
			count, kappa = float64(differencesLeft(r, e, 2, min(r.Settings.Pre, e.Rows))), spectra.MADKappa([]float64{1, -1})
		case strings.HasPrefix(src, "second differences in time"):
			count, kappa = float64(differencesLeft(r, e, 3, e.Rows)), spectra.MADKappa([]float64{1, -2, 1})
		case strings.HasPrefix(src, "fourth differences along the axis"):
			count, kappa = 1, spectra.MADKappa([]float64{1, -4, 6, -4, 1})
		default:
			return math.Inf(1)
		}
		dof += spectra.MADEfficiency * count * float64(m) / kappa
	}
	if !(dof > 0) {
		return math.Inf(1)
	}
	return dof
}

// misfitLimit is the largest q = √(χ²/ν) noise alone gives at level alpha
// when σ² was estimated on nuNoise degrees of freedom (+Inf: known): the
// 1 − alpha point of F(ν, ν_σ), or of χ²_ν/ν for a known σ², square-rooted.
func misfitLimit(nu, nuNoise, alpha float64) float64 {
	if math.IsInf(nuNoise, 1) {
		return math.Sqrt(distuv.ChiSquared{K: nu}.Quantile(1-alpha) / nu)
	}
	return math.Sqrt(distuv.F{D1: nu, D2: nuNoise}.Quantile(1 - alpha))
}

// misfitP is the probability that noise alone gives q or more.
func misfitP(q, nu, nuNoise float64) float64 {
	if math.IsInf(nuNoise, 1) {
		return distuv.ChiSquared{K: nu}.Survival(q * q * nu)
	}
	return pvalue.FUpper(q*q, nu, nuNoise)
}

// checkMisfit tests the resolution's residual against the noise; ok is
// false when there is no noise level or no degrees of freedom to test on.
func checkMisfit(r *Result, s *mat.Dense) (misfitCheck, bool) {
	q, ok := residualToNoise(r)
	if !ok || !(q > 0) || !(r.fitDof > 0) {
		return misfitCheck{}, false
	}
	c := misfitCheck{Ratio: q, Dof: r.fitDof, NoiseDof: noiseDof(r), Tau: 1, Alpha: r.Settings.Alpha}
	if r.NoiseDOF > 0 {
		c.Dof = r.NoiseDOF // q's own ν (the reference's pattern counted once)
	}
	if !(c.Alpha > 0 && c.Alpha < 1) {
		c.Alpha = 0.05
	}
	if weighted(r) {
		c.Tau = timeDiffAxisNoise(r, s).Inflation
	}
	nu, nuNoise := c.Dof/c.Tau, c.NoiseDof/c.Tau
	if weighted(r) {
		c.Allowance = weightSampling(r)
		nuNoise = withAllowance(nuNoise, c.Allowance)
	}
	c.Limit = misfitLimit(nu, nuNoise, c.Alpha) * math.Sqrt(1+c.Allowance)
	c.P = misfitP(q/math.Sqrt(1+c.Allowance), nu, nuNoise)
	return c, c.Limit > 0 && !math.IsNaN(c.Limit)
}

// withAllowance counts the allowance g's own uncertainty, taken as g
// itself, as the noise level's: 2/ν_σ is the variance of log σ̂², to which
// g² adds. The counts behind g leave out part of the smoothing's bias where
// the noise changes within a window (a narrow band's 10^A, a step in the
// scans co-added): on invented absorbance exports with noise constant in
// counts the weights' true excess was up to twice g.
func withAllowance(nuNoise, g float64) float64 {
	if !(g > 0) {
		return nuNoise
	}
	return 1 / (1/nuNoise + g*g/2)
}

// weightSampling is g = e^{2s²} − 1, s² the weights' log sampling variance
// (the channels' and, where the weights follow them, the spectra's), each
// experiment's counted by its rows.
func weightSampling(r *Result) float64 {
	var sum, rows float64
	for _, e := range r.Experiments {
		if e.Assembled == nil {
			continue
		}
		s2 := e.Assembled.Noise.Sampling
		if sn := e.Assembled.Noise.Spectra; sn != nil && sn.Varies {
			s2 += sn.Sampling
		}
		sum += float64(e.Rows) * s2
		rows += float64(e.Rows)
	}
	if !(rows > 0) || !(sum > 0) {
		return 0
	}
	return math.Expm1(2 * sum / rows)
}

// timeDiffAxisNoise measures the noise's correlation along the axis on
// second differences in time of the weighted data, √(a_i b_j)(d_{i+1} −
// 2d_i + d_{i−1}) (rows with a weight of zero, the spectra set aside, whose
// rows hold the model, not data, and blind points left out), with the
// resolved spectra's directions projected out: a change smooth in time
// cancels, a fast one lies in those directions, and the noise stays.
func timeDiffAxisNoise(r *Result, s *mat.Dense) svd.AxisNoise {
	n, m := r.D.Dims()
	if n < 3 {
		return svd.AxisNoise{Inflation: 1, Points: m, Effective: float64(m)}
	}
	w := r.Weights
	aside := asideRows(r)
	rows := min(n-2, max(16, (1<<16+m-1)/max(m, 1)))
	e := mat.NewDense(rows, m, nil)
	for k := 0; k < rows; k++ {
		i := 1 + k*(n-2)/rows
		if !(w.Row[i-1] > 0 && w.Row[i] > 0 && w.Row[i+1] > 0) {
			continue // a row of zeros counts for nothing
		}
		if aside != nil && (aside[i-1] || aside[i] || aside[i+1]) {
			continue
		}
		fillSecondDiff(e.RawRowView(k), r.D, i, w, r.Blind)
	}
	g := weightedBasis(s, w.Col)
	if g != nil {
		var p, q mat.Dense
		p.Mul(e, g)
		q.Mul(&p, g.T())
		e.Sub(e, &q)
	}
	return svd.AxisCorrelation(quietRows(e), g)
}

// quietRows zeroes the rows of e whose mean square is above what noise of unit
// variance gives (twice it, or the 99.9 % point of χ²_m/m, as the --pre step
// check allows): a change the model lacks (a spike, a jump, fast chemistry
// beyond the resolved spectra) is smooth along the axis and would be read as
// correlated noise. When every row is above, e is kept whole: τ then includes
// the misfit, which only raises the limit.
func quietRows(e *mat.Dense) *mat.Dense {
	n, m := e.Dims()
	limit := math.Max(2, distuv.ChiSquared{K: float64(m)}.Quantile(0.999)/float64(m))
	var loud []int
	for i := 0; i < n; i++ {
		row := e.RawRowView(i)
		var ss float64
		cnt := 0
		for _, v := range row {
			if v != 0 {
				ss += v * v
				cnt++
			}
		}
		if cnt > 0 && ss/float64(cnt) > limit {
			loud = append(loud, i)
		}
	}
	if len(loud) == 0 {
		return e
	}
	if len(loud) == n {
		return e
	}
	q := mat.DenseCopyOf(e)
	for _, i := range loud {
		clear(q.RawRowView(i))
	}
	return q
}

// fillSecondDiff writes row i's weighted second difference in time into dst,
// 0 where a point is blind.
func fillSecondDiff(dst []float64, d *mat.Dense, i int, w *spectra.Weights, blind *spectra.Blind) {
	a, b, c := d.RawRowView(i-1), d.RawRowView(i), d.RawRowView(i+1)
	f := math.Sqrt(w.Row[i] / 6) // the variance of x₊ − 2x + x₋ is 6σ²
	for j := range dst {
		if blind.Has(i-1, j) || blind.Has(i, j) || blind.Has(i+1, j) {
			continue
		}
		dst[j] = f * math.Sqrt(w.Col[j]) * (c[j] - 2*b[j] + a[j])
	}
}

// misfitWarning says when the fit's residual is above what the noise alone
// leaves, with the figure it tested and the limit it was tested against (and
// the one spectrum that carries most of it, findOneSpectrum): a
// warning when the misfit is at least the noise's own size (q ≥ √2), a note
// when smaller (a blank's noise clipped by non-negative spectra, a noise
// level a few per cent low: real, but no reason to distrust the figures).
func misfitWarning(r *Result, res *mcr.Result) (warn, note []string) {
	c, ok := checkMisfit(r, res.S)
	if !ok {
		return nil, nil
	}
	r.misfit = c
	if c.Ratio <= c.Limit {
		return nil, nil
	}
	w := fmt.Sprintf("the fit's residual is %.3g times the noise (√(χ²/ν) weighted by the noise, ν = %.0f, the figure of the fit line), above the %.3g that noise alone stays under at --alpha %g (%s; %s): %s",
		c.Ratio, c.Dof, c.Limit, c.Alpha, misfitLimitWords(c), pvalue.Text(c.P), output.FitVerdict(c.Ratio, c.Limit))
	if c.Ratio < math.Sqrt2 {
		return nil, []string{w}
	}
	if one, ok := findOneSpectrum(resolutionRowSS(r, res), nil, c.Ratio); ok {
		r.misfitSpectrum = &one
		return []string{w + "; " + one.words(r)}, nil
	}
	return []string{w + "; a component may be missing, a constraint (closure?) may not hold, or the noise level is set too low"}, nil
}

// misfitLimitWords says what the limit is.
func misfitLimitWords(c misfitCheck) string {
	w := "the χ²_ν point"
	if !math.IsInf(c.NoiseDof, 1) {
		w = fmt.Sprintf("the F(ν, ν_σ) point, the noise level itself estimated on about %.0f degrees of freedom", c.NoiseDof)
	}
	if c.Tau > 1 {
		w += fmt.Sprintf(", both divided by %.3g for noise correlated along the axis", c.Tau)
	}
	if c.Allowance > 0 {
		w += fmt.Sprintf(", and χ² allowed %.2g %% more for the noise levels' own sampling error", 100*c.Allowance)
	}
	return w
}
