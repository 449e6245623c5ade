package pipeline

import (
	"fmt"
	"io"
	"math"
	"sort"
	"strings"

	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// Noise weighting wires the noise model made at assembly (spectra.Weights,
// spectra.Blind) into the factor analysis and the resolution: the rank,
// EFA and purest variables work on the scaled matrix √A D √B whose noise has
// unit variance, ALS on the weighted data (mcr.Weighted), and blind points
// are filled from the low-rank model (docs/measurement.md).

// imputeTol and imputeIter bound the filling of blind points: a pass that
// moves no filled value by more than a tenth of the noise's standard
// deviation ends it.
const (
	imputeTol  = 0.1
	imputeIter = 50
)

// weighted reports whether the analysis uses the noise weights.
func weighted(r *Result) bool { return r.Weights != nil && r.Settings.Weights != "off" }

// weightedFactors decomposes the scaled matrix, estimates its rank with the
// noise level known (σ = 1 after scaling) and fills the blind points from
// the rank-k model, where k is the estimate or --components.
func weightedFactors(r *Result, maxF, refRow int, log io.Writer) (*svd.Factors, *svd.RankReport, error) {
	s := r.Settings
	r.Scaled = svd.Scale(r.D, r.Weights.Row, r.Weights.Col)
	dopt := svd.DecomposeOptions{MaxFactors: maxF, Seed: s.Seed}
	f, err := svd.Decompose(r.Scaled, dopt)
	if err != nil {
		return nil, nil, fmt.Errorf("factor analysis: %w", err)
	}
	ropt := svd.RankOptions{Sigma: 1, SigmaFrom: weightedSigma, Alpha: s.Alpha, ReferenceRow: refRow, PatternTime: sqrts(r.Weights.Row)}
	ropt.Blank, ropt.Closed = blankPattern(r)
	rank, err := svd.EstimateRank(r.Scaled, f, ropt)
	if err != nil {
		return nil, nil, fmt.Errorf("rank: %w", err)
	}
	if r.Blind != nil && r.Blind.Count > 0 {
		// The rank that fills the blind points comes from the channels
		// without any: the placeholders (interpolated in time) are not
		// data, and a rank counted with them counts their errors too.
		k := max(rank.Estimate, 1)
		lit, nlit := litRank(r, ropt)
		if lit != nil {
			k = max(lit.Estimate, 1)
		}
		if s.Components != "auto" {
			fmt.Sscan(s.Components, &k)
		}
		var passes int
		f, passes, err = svd.ImputeMissing(r.Scaled, r.Blind.Rows, k, dopt, imputeTol, imputeIter)
		if err != nil {
			return nil, nil, fmt.Errorf("blind points: %w", err)
		}
		fmt.Fprintf(log, "filled %d blind point(s) from the rank-%d model (%d passes)\n", r.Blind.Count, k, passes)
		unscaleBlind(r)
		if rank, err = svd.EstimateRank(r.Scaled, f, ropt); err != nil {
			return nil, nil, fmt.Errorf("rank: %w", err)
		}
		if lit != nil {
			// The count stands on the channels the filling did not touch:
			// a block filled by extrapolating a noisy low-rank fit can hold
			// errors that look like one more smooth factor.
			lit.Reason = fmt.Sprintf("counted on the %d channels without blind points: %s", nlit, lit.Reason)
			rank = lit
		}
	}
	rank.SigmaSource = "noise model from the data (" + r.NoiseSource + "); the matrix is scaled so that its noise has σ = 1"
	return f, rank, nil
}

// unscaleBlind copies the filled blind points of the scaled matrix back into
// D: d_ij = d̃_ij/√(a_i b_j).
func unscaleBlind(r *Result) {
	for i, cols := range r.Blind.Rows {
		for _, j := range cols {
			r.D.Set(i, j, r.Scaled.At(i, j)/math.Sqrt(r.Weights.Row[i]*r.Weights.Col[j]))
		}
	}
}

// fillDifferenceBlind gives the difference matrix of species mode the
// filled absorbance at its blind points: within one experiment ΔA_ij =
// A_ij − A_ref,j, and A_ref,j = A_lj − ΔA_lj for any observed row l.
func fillDifferenceBlind(r *Result, dd *mat.Dense) {
	if r.Blind == nil || r.Blind.Count == 0 {
		return
	}
	for _, e := range r.Experiments {
		lo, hi := e.FirstRow, e.FirstRow+e.Rows
		offset := map[int]float64{}
		for i := lo; i < hi; i++ {
			for _, j := range r.Blind.Rows[i] {
				off, ok := offset[j]
				if !ok {
					for l := lo; l < hi; l++ {
						if !r.Blind.Has(l, j) {
							off, ok = r.D.At(l, j)-dd.At(l, j), true
							break
						}
					}
					if !ok {
						continue
					}
					offset[j] = off
				}
				dd.Set(i, j, r.D.At(i, j)-off)
			}
		}
	}
}

// alsData is the matrix ALS works on: the weighted data (dense, or the
// truncated SVD of the scaled matrix on large data), or without weights
// the data itself.
func alsData(r *Result, k int) mcr.Data {
	n, m := r.D.Dims()
	large := largeData(n, m) && len(r.Factors.S) >= k
	rr := min(len(r.Factors.S), k+8)
	switch {
	case weighted(r) && large:
		// The compressed weighted form needs the factors of √A D √B; the
		// factor analysis decomposed D itself.
		f := r.Factors
		if r.Scaled == nil && r.ScaledFactors != nil && len(r.ScaledFactors.S) >= rr {
			f = r.ScaledFactors // decomposed for the rank
		} else if r.Scaled == nil {
			fs, err := svd.Decompose(svd.Scale(r.D, r.Weights.Row, r.Weights.Col), svd.DecomposeOptions{MaxFactors: rr, Seed: r.Settings.Seed})
			if err != nil || len(fs.S) < rr {
				return mcr.WeightedDense{D: r.D, Row: r.Weights.Row, Col: r.Weights.Col}
			}
			f = fs
		}
		r.Compressed = true
		return mcr.WeightedCompressed{U: sliceCols(f.U, rr), Sigma: f.S[:rr], V: sliceCols(f.V, rr),
			FrobSq: f.FrobeniusSq, Row: r.Weights.Row, Col: r.Weights.Col}
	case weighted(r):
		return mcr.WeightedDense{D: r.D, Row: r.Weights.Row, Col: r.Weights.Col}
	case large:
		r.Compressed = true
		return mcr.Compressed{U: sliceCols(r.Factors.U, rr), Sigma: r.Factors.S[:rr], V: sliceCols(r.Factors.V, rr), FrobSq: r.Factors.FrobeniusSq}
	}
	return mcr.Dense{D: r.D}
}

// fitFigures computes, at the observed points of the spectra kept, the
// lack of fit (as before, unweighted, against the data as given:
// 100 ‖D − C Sᵀ − B Pᵀ‖/‖D‖), the explained variance, the residual relative
// to the noise (√(χ²/ν)) and the lack of fit the noise alone would give,
// both against ν, the χ² noise alone leaves after this model. A spectrum
// set aside is no data: its row holds the model's own values, so it would
// add nothing to the residual and its share to ‖D‖ and to ν (on the real
// urethane series with one spectrum of 58 aside, 1.518 % for 1.531 % and
// 1.210 for 1.221 times the noise).
func fitFigures(r *Result, res *mcr.Result) {
	n, m := r.D.Dims()
	k := r.Components
	var row, col []float64
	if weighted(r) {
		row, col = r.Weights.Row, r.Weights.Col
	}
	fit := mcr.FitWeighted(r.D, res.C, res.S, row, col, blindPoints(r))
	// The uniqueness ranges' allowance counts every row of the matrix the
	// rotations act on, the rows filled by the model among them.
	r.PlainRSS = sq(fit.LackOfFitPercent/100) * fit.DataSS
	kept := n - len(r.SetAside)
	if kept < n {
		fit = mcr.FitWeighted(r.D, res.C, res.S, row, col, unobserved(r))
	}
	if r.DataSS > 0 {
		// D here is less its fitted baseline; the figures are of the data
		// as given, whatever share of it the baseline took.
		rss := sq(fit.LackOfFitPercent/100) * fit.DataSS
		fit.DataSS = r.DataSS
		fit.LackOfFitPercent = 100 * math.Sqrt(rss/r.DataSS)
	}
	r.LackOfFit = fit.LackOfFitPercent
	r.Explained = 100 * (1 - sq(r.LackOfFit/100))
	dof := float64(fit.Observed) - float64(k)*float64(kept+m-k)
	if !(dof > 0) || !(fit.DataSS > 0) {
		return
	}
	r.fitDof = dof
	if row != nil {
		// What noise alone leaves after this model, with the reference's
		// common pattern counted as one (referenceDOF).
		r.ReferenceShift = referenceDOF(r, res.C, res.S)
		nu := dof + r.ReferenceShift
		if !(nu > 0) {
			nu, r.ReferenceShift = dof, 0
		}
		r.NoiseDOF = nu
		r.ResidualToNoise = math.Sqrt(fit.WeightedSS / nu)
		r.NoiseLOF = 100 * math.Sqrt(fit.NoiseSS*nu/float64(fit.Observed)/fit.DataSS)
	} else if r.Rank.Sigma > 0 {
		r.NoiseLOF = 100 * math.Sqrt(r.Rank.Sigma*r.Rank.Sigma*dof/fit.DataSS)
	}
}

// blindPoints says which points hold no data (nil when none do).
func blindPoints(r *Result) func(i, j int) bool {
	if r.Blind != nil && r.Blind.Count > 0 {
		return r.Blind.Has
	}
	return nil
}

// unobserved says which points the fit's figures leave out: blind points
// and every point of a spectrum set aside (nil when there are none).
func unobserved(r *Result) func(i, j int) bool {
	blind := blindPoints(r)
	if len(r.SetAside) == 0 {
		return blind
	}
	aside := asideRows(r)
	if blind == nil {
		return func(i, _ int) bool { return aside[i] }
	}
	return func(i, j int) bool { return aside[i] || blind(i, j) }
}

// asideRows marks the rows of the spectra set aside (nil when none are).
func asideRows(r *Result) []bool {
	if len(r.SetAside) == 0 {
		return nil
	}
	n, _ := r.D.Dims()
	out := make([]bool, n)
	for _, sa := range r.SetAside {
		out[sa.Row] = true
	}
	return out
}

// asideList is the rows of the spectra set aside in ascending order, which
// ALS leaves out of the lack of fit it reports (mcr.Options.AsideRows):
// nil when none are.
func asideList(r *Result) []int {
	var out []int
	for i, a := range asideRows(r) {
		if a {
			out = append(out, i)
		}
	}
	return out
}

// startProfiles gives EFA's initial profiles in the data's rows: with noise
// weights EFA ran on the scaled matrix, whose profiles have rows √a_i c_i.
func startProfiles(r *Result, k int) *mat.Dense { return startProfilesOf(r, r.EFA, k) }

// startProfilesOf is startProfiles from the EFA report rep.
func startProfilesOf(r *Result, rep *EFAReport, k int) *mat.Dense {
	if rep == nil {
		return nil
	}
	if !rep.NoiseUnits {
		return rep.Windows.InitialProfiles(r.D, k)
	}
	c := rep.Windows.FactorProfiles(k)
	if c == nil {
		return nil
	}
	n, kk := c.Dims()
	for i := 0; i < n; i++ {
		f := invSqrt(r.Weights.Row[i])
		for j := 0; j < kk; j++ {
			c.Set(i, j, c.At(i, j)*f)
		}
	}
	return c
}

// purestSource is what purest variables are picked from: D, or with noise
// weights the rank-k model of the scaled matrix mapped back to the data's
// units, P Qᵀ with P = (1/√A) Ũ_k S̃_k and Q = (1/√B) Ṽ_k, held as its
// factors (svd.PurestLowRank; no n × m matrix). A channel made noisy by
// strong absorption has a large standard deviation over its mean and would
// look pure (SIMPLISMA's purity is σ_j/μ_j); the truncated SVD of the
// scaled matrix is the maximum-likelihood rank-k model for this noise
// (Wentzell et al., J. Chemometrics 1997) and holds the chemistry without
// that noise.
type purestSource struct {
	d    *mat.Dense
	p, q *mat.Dense
}

func purestSourceOf(r *Result, k int) purestSource {
	f := r.ScaledFactors
	if !weighted(r) || f == nil || len(f.S) < k {
		return purestSource{d: r.D}
	}
	n, m := r.D.Dims()
	p := mat.NewDense(n, k, nil)
	for i := 0; i < n; i++ {
		g := invSqrt(r.Weights.Row[i])
		for l := 0; l < k; l++ {
			p.Set(i, l, f.U.At(i, l)*f.S[l]*g)
		}
	}
	q := mat.NewDense(m, k, nil)
	for j := 0; j < m; j++ {
		g := invSqrt(r.Weights.Col[j])
		for l := 0; l < k; l++ {
			q.Set(j, l, f.V.At(j, l)*g)
		}
	}
	return purestSource{p: p, q: q}
}

// pick returns the k purest channels.
func (src purestSource) pick(k int, signed bool) ([]int, error) {
	if src.d != nil {
		return svd.Purest(src.d, k, 5, signed)
	}
	return svd.PurestLowRank(src.p, src.q, k, 5, signed)
}

// column returns channel j of the source over time.
func (src purestSource) column(j int) []float64 {
	if src.d != nil {
		return mat.Col(nil, j, src.d)
	}
	var c mat.VecDense
	c.MulVec(src.p, src.q.RowView(j))
	return c.RawVector().Data
}

// noiseOf sets the typical noise level of D and says where it came from
// (the first experiment's estimate names the method).
func noiseOf(r *Result) {
	if r.Weights == nil || len(r.Experiments) == 0 {
		return
	}
	sig := r.Weights.ChannelSigma()
	r.NoiseSigma = medianOf(sig)
	nz := r.Experiments[0].Assembled.Noise
	from := nz.Source
	if len(r.Experiments) > 1 {
		// Each experiment has its own estimate, from its own spectra: say
		// each, where the first one's words alone read as the whole stack's.
		var each []string
		for i, e := range r.Experiments {
			en := e.Assembled.Noise
			if en.Unit == "single-beam units" {
				each = append(each, fmt.Sprintf("experiment %d: %.3g from %s", i+1, en.Level, en.Source))
				continue
			}
			each = append(each, fmt.Sprintf("experiment %d: %s", i+1, en.Source))
		}
		from = "each experiment's own spectra (" + strings.Join(each, "; ") + ")"
	}
	switch {
	case nz.Unit == "single-beam units":
		level := fmt.Sprintf(" %.3g", nz.Level)
		if len(r.Experiments) > 1 {
			level = "" // each experiment's is in from
		}
		r.NoiseSource = fmt.Sprintf("detector noise%s in single-beam units from %s; absorbance noise σ_I/(I ln 10) per point", level, from)
	default:
		r.NoiseSource = fmt.Sprintf("absorbance noise per channel from %s", from)
	}
	if weightsPerSpectrum(r) {
		common := ""
		if r.Settings.Pre >= 2 {
			common = ", their common level from the whole series, not from the pre-reaction spectra"
		}
		r.NoiseSource += "; each spectrum's own level from the robust scale of its time difference over the axis" + common + " (the spectra differ in noise)"
	}
}

func medianOf(v []float64) float64 {
	if len(v) == 0 {
		return 0
	}
	c := append([]float64(nil), v...)
	sort.Float64s(c)
	if len(c)%2 == 1 {
		return c[len(c)/2]
	}
	return (c[len(c)/2-1] + c[len(c)/2]) / 2
}

// invSqrt is 1/√w, 0 for a weight of zero (a point with no information
// contributes nothing rather than an infinity).
func invSqrt(w float64) float64 {
	if !(w > 0) {
		return 0
	}
	return 1 / math.Sqrt(w)
}

func sqrts(v []float64) []float64 {
	out := make([]float64, len(v))
	for i, x := range v {
		out[i] = math.Sqrt(x)
	}
	return out
}

// litRank estimates the rank of the scaled matrix on the channels that hold
// no blind point, when they are at least half of them (nil otherwise), and
// says how many channels that is.
func litRank(r *Result, ropt svd.RankOptions) (*svd.RankReport, int) {
	n, m := r.Scaled.Dims()
	lit := make([]bool, m)
	for j := range lit {
		lit[j] = true
	}
	for _, cols := range r.Blind.Rows {
		for _, j := range cols {
			lit[j] = false
		}
	}
	var idx []int
	for j, ok := range lit {
		if ok {
			idx = append(idx, j)
		}
	}
	if len(idx) < max(2, m/2) || len(idx) == m {
		return nil, 0
	}
	sub := mat.NewDense(n, len(idx), nil)
	for i := 0; i < n; i++ {
		row, dst := r.Scaled.RawRowView(i), sub.RawRowView(i)
		for c, j := range idx {
			dst[c] = row[j]
		}
	}
	rk, err := svd.EstimateRank(sub, nil, ropt)
	if err != nil {
		return nil, 0
	}
	return rk, len(idx)
}

// refineBlind resolves again with the blind points refilled from the
// resolved model until they settle (mcr.RefineMissing), on data held in
// full; the compressed path of large data keeps the filling made at the
// factor analysis.
func refineBlind(r *Result, data mcr.Data, res *mcr.Result, opt mcr.Options, log io.Writer) (*mcr.Result, error) {
	if r.Blind == nil || r.Blind.Count == 0 || r.Compressed {
		return res, nil
	}
	var row, col []float64
	if weighted(r) {
		row, col = r.Weights.Row, r.Weights.Col
	}
	out, passes, err := mcr.RefineMissing(r.D, row, col, r.Blind.Rows, res, opt, imputeTol, refinePasses)
	if err != nil {
		return nil, err
	}
	fmt.Fprintf(log, "blind points refilled from the resolved model (%d passes)\n", passes)
	return out, nil
}

// refinePasses bounds the resolutions of refineBlind.
const refinePasses = 30

// unmeasuredChannels marks the channels blind in every spectrum the fit
// takes (an opaque band, a range every spectrum has at the cap): nothing
// was measured there, so nothing determines the resolved spectra, and the
// values the fit leaves (the baseline's lowering moves the solver's zeros
// by a smooth polynomial; the refill takes them back) are no measurement.
// The notes promise these channels are written as 0; nil when there are
// none. A fresh slice on every call.
func unmeasuredChannels(r *Result) []bool {
	rows := blindRowsKept(r)
	if rows == nil {
		return nil
	}
	every := everywhereBlind(rows)
	if every == nil {
		return nil
	}
	out := make([]bool, len(r.Axis))
	for _, j := range every[0] {
		if j < len(out) {
			out[j] = true
		}
	}
	return out
}

// writtenSpectra is the resolved spectra as the result files give them:
// r.ALS.S, with the unmeasured channels (unmeasuredChannels) set to 0 in a
// copy; nil when nothing was resolved (a run that found no change).
func writtenSpectra(r *Result) mat.Matrix {
	if r.ALS == nil || r.ALS.S == nil {
		return nil
	}
	un := unmeasuredChannels(r)
	if un == nil {
		return r.ALS.S
	}
	s := mat.DenseCopyOf(r.ALS.S)
	_, k := s.Dims()
	for i, u := range un {
		if u {
			for j := 0; j < k; j++ {
				s.Set(i, j, 0)
			}
		}
	}
	return s
}
