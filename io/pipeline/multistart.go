package pipeline

import (
	"fmt"
	"math"

	"github.com/bandsolve/bandsolve/internal/fanout"
	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
)

// switchMargin: the second start replaces the first only when its final
// fit is better by more than rounding; ties keep purest variables, whose
// picks are reported in the summary and easy to check against the spectra.
const switchMargin = 1e-9

// noiseModelSlack is the noise model's variance uncertainty allowed for when
// a weighted fit is judged against the noise (see moreStarts).
const noiseModelSlack = 1.25

// startALS runs ALS from the initial estimate. With --init auto (the
// default) it runs ALS to the end from purest variables and again from
// evolving factor analysis, and keeps the better final fit. ALS with closure
// and non-negativity has local minima and very flat valleys; which start
// falls into one depends on the data (purest variables can pick two channels
// of one species; EFA windows can be cut short at the ends), and a short
// trial run does not tell them apart reliably: a start that fits better
// after 25 iterations can end worse. Two complete deterministic runs cost
// twice the iterations and make a stuck answer much rarer.
//
// Before hard–soft ALS that starts from the fit of the data matrix
// (startsFromDataFit), a first start that fits within the noise is kept
// alone: the second start and the random ones could only find a fit no
// better by more than the noise (mcr.FitsWithinNoise, the test
// mcr.SearchStarts stops at), and hard–soft takes neither its start nor its
// map from this resolution: it then supplies only the spectra set aside as
// outliers and the fit of the soft profiles reported beside the others,
// which a fit within the noise serves. On the six-species chain at
// 2000 × 3001 the second start was 809 ALS iterations, 40 % of the soft
// resolution, and fitted worse.
func startALS(r *Result, data mcr.Data, c0 *mat.Dense, opt mcr.Options) (*mcr.Result, error) {
	opt.FreeSplitFirst = opt.BaselineAnchors != nil // cold starts
	if r.Settings.Init != "auto" {
		return mcr.Resolve(data, c0, opt)
	}
	// The second start (EFA, its windows, ALS from them) needs nothing of
	// the first: it runs on a goroutine beside it (each keeps about one
	// core busy), unless the first may be kept alone, which only its end
	// can tell. The progress bar follows the first.
	var second func() secondStart
	if !startsFromDataFit(r, opt) {
		quiet := opt
		quiet.Observe = nil
		second = beginSecondStart(r, data, quiet)
	}
	best, err := mcr.Resolve(data, c0, opt)
	if second == nil {
		if err != nil {
			return best, err
		}
		if noiseSS, _ := startNoise(r); mcr.FitsWithinNoise(best, noiseSS) {
			r.Init += " (one start: it fits within the noise, and hard–soft starts from the fit of the data matrix)"
			return best, nil
		}
		second = beginSecondStart(r, data, opt)
	}
	alt := second() // waited for on every path: no goroutine outlives the start
	if err != nil {
		return best, err
	}
	if !alt.apply(r) {
		return best, nil
	}
	switch err := alt.err; {
	case err == nil && alt.res.ResidualSS < (1-switchMargin)*best.ResidualSS && !sameFitWiderSplit(r, opt, alt.res, best):
		r.Init = "evolving factor analysis windows (a better final fit than from " + r.Init + ")"
		best = alt.res
	case err == nil && sameFitWiderSplit(r, opt, best, alt.res):
		r.Init = "evolving factor analysis windows (the same fit as from " + r.Init + ", with the species spectra nearer zero between bands and the rest in the baseline)"
		best = alt.res
	default:
		r.Init += " (a better final fit than from evolving factor analysis windows)"
	}
	return moreStarts(r, data, best, opt), nil
}

// secondStart is startALS's start from evolving factor analysis: the EFA
// report (or why there is none) and the ALS from its windows, when it ran.
type secondStart struct {
	efa    *EFAReport
	efaErr error
	ran    bool
	res    *mcr.Result
	err    error
}

// beginSecondStart runs the second start on a goroutine and returns the
// function that waits for it, or panics with its panic (on its goroutine
// it would end the program, past a batch's recovery per run, cmd/bandsolve
// runOne). The goroutine reads r (the factors, D, the
// weights) and writes nothing of it: apply records its EFA afterwards.
func beginSecondStart(r *Result, data mcr.Data, opt mcr.Options) func() secondStart {
	var out secondStart
	done := make(chan struct{})
	var fault fanout.Fault // the second start's panic, raised again by the waiter
	go func() {
		defer close(done)
		defer fault.Catch(nil)
		if out.efa = r.EFA; out.efa == nil {
			out.efa, out.efaErr = efaReport(r)
		}
		if out.efa == nil {
			return
		}
		if ce := startProfilesOf(r, out.efa, r.Components); ce != nil {
			out.res, out.err = mcr.Resolve(data, ce, opt)
			out.ran = true
		}
	}()
	return func() secondStart { <-done; fault.Raise(); return out }
}

// apply records the EFA as computeEFA would have and reports whether the
// second start's ALS ran.
func (s secondStart) apply(r *Result) bool {
	if s.efaErr != nil {
		efaSkipped(r, s.efaErr)
	}
	r.EFA = s.efa
	r.ahead.aheadEFA(r)
	return s.ran
}

// sameFitWiderSplit reports whether, with a baseline fitted, a and b fit the data
// equally well (their residual sums of squares differ by less than one noise variance:
// the weighted sums are in units of the noise, the unweighted ones are divided by the
// rank step's σ²) while a's species spectra hold more of a baseline than b's
// (mcr.SplitSpread larger by more than rounding). Such fits differ only in the split
// between species and baseline, which the fit cannot tell; zero absorbance between
// bands can.
func sameFitWiderSplit(r *Result, opt mcr.Options, a, b *mcr.Result) bool {
	if opt.Baseline == nil || a == nil || b == nil {
		return false
	}
	unit := 1.0
	if !weighted(r) {
		if r.Rank == nil || !(r.Rank.Sigma > 0) {
			return false
		}
		unit = r.Rank.Sigma * r.Rank.Sigma
	}
	if math.Abs(a.ResidualSS-b.ResidualSS) >= unit {
		return false
	}
	return mcr.SplitSpread(a.S) > (1+1e-6)*mcr.SplitSpread(b.S)
}

// moreStarts runs mcr.SearchStarts (seeded random rotations of the SVD
// basis) when the best of the two starts still fits worse than the noise
// allows or lost a component; the seed is --seed, so runs repeat exactly.
func moreStarts(r *Result, data mcr.Data, best *mcr.Result, opt mcr.Options) *mcr.Result {
	k := r.Components
	if r.Factors == nil || r.Factors.U == nil || r.Rank == nil {
		return best
	}
	if _, cols := r.Factors.U.Dims(); cols < k {
		return best
	}
	noiseSS, gain := startNoise(r)
	got, improved, err := mcr.SearchStarts(data, best, opt, mcr.StartSearch{Basis: startBasis(r, k), Seed: r.Settings.Seed, NoiseSS: noiseSS, MinGain: gain})
	if err != nil || improved == 0 {
		return best
	}
	r.Init += fmt.Sprintf("; %d of the seeded random starts fitted better, the best kept", improved)
	return got
}

// startNoise returns the residual sum of squares noise alone leaves at the
// true solution of a rank-k fit (0 when the rank step gave no noise level)
// and the least drop of it that makes another start's fit better.
func startNoise(r *Result) (noiseSS, gain float64) {
	if r.Rank == nil {
		return 0, 0
	}
	n, m := r.D.Dims()
	k := r.Components
	obs := n * m
	if r.Blind != nil {
		obs -= r.Blind.Count
	}
	if dof := float64(obs - k*(n+m-k)); dof > 0 {
		noiseSS = r.Rank.Sigma * r.Rank.Sigma * dof
		if weighted(r) {
			// With noise weights the residual is in units of the noise
			// (weights 1/σ², scaled to unit variance): ν is what noise
			// alone leaves, known only as well as the noise model's σ.
			// That σ is a median of at least 400 absolute differences
			// per channel window, whose standard error is about
			// 1.17σ/√N (the MAD's asymptotic variance for normal data,
			// Rousseeuw & Croux, JASA 1993, from memory): 5.8 % at
			// N = 400. A fit within two standard errors (σ² × 1.25) fits
			// to the noise; on the demo (residual 1.03 × the noise) the
			// bare ν sent eight more ALS runs after a fit they could not
			// better, and the run took 13 times as long.
			noiseSS = noiseModelSlack * dof
		}
	}
	// A start counts as better only by more than one noise variance (see
	// mcr.StartSearch.MinGain; the unit of sameFitWiderSplit): with noise
	// weights the residual is in units of the noise, and on the real
	// urethane series (catalyst 0.01) a start better by 0.014 of one
	// replaced the fit and moved the split between species and baseline
	// (lack of fit 0.67 → 1.77 %, the same χ² to nine digits).
	gain = 1.0
	if !weighted(r) {
		gain = r.Rank.Sigma * r.Rank.Sigma
	}
	return noiseSS, gain
}

// startBasis is the basis the random starts rotate: the leading left
// singular vectors of D, or with noise weights those of the scaled matrix
// √A D √B mapped back to the data's rows, (1/√A) U_k. The weighted fit's
// profiles lie in the span of the latter (the maximum-likelihood rank-k
// model, Wentzell et al., J. Chemometrics 1997); D's own leading vectors
// can be led by the noisiest channels.
func startBasis(r *Result, k int) *mat.Dense {
	f := r.ScaledFactors
	if !weighted(r) || f == nil || f.U == nil {
		return r.Factors.U
	}
	n, p := f.U.Dims()
	if p < k {
		return r.Factors.U
	}
	b := mat.NewDense(n, k, nil)
	for i := 0; i < n; i++ {
		g := invSqrt(r.Weights.Row[i])
		for l := 0; l < k; l++ {
			b.Set(i, l, f.U.At(i, l)*g)
		}
	}
	return b
}

// rankDeficientBands marks every uniqueness range not determined when more
// components were resolved than the data's rank estimate, and returns the
// one warning that says why ("" when the ranges stand). The ranges are rotations C T, S T⁻ᵀ of the solution; with
// k components on data of rank r < k other resolutions fit as well that
// are no rotation of it: C v ≈ 0 for some v, so S + w vᵀ fits for any w
// that keeps S non-negative, and closed subsystems (A → B → C beside
// D → E, the usual cause) admit exact non-negative resolutions whose
// spectra are sums of one species from each subsystem
// (mcr.TestClosedSubsystemsAdmitPairResolution). The search cannot bound
// those, so it must not call any range unique.
func rankDeficientBands(r *Result, b *mcr.BandsResult) string {
	if r.Rank == nil || r.Rank.Estimate <= 0 || r.Components <= r.Rank.Estimate {
		return ""
	}
	why := fmt.Sprintf("%d components on data of rank %d: resolutions that are no rotation of this one fit as well", r.Components, r.Rank.Estimate)
	for j := range b.Bands {
		b.Bands[j].Feasible, b.Bands[j].Reason = false, why
	}
	return fmt.Sprintf("uniqueness ranges not determined: %d components on data whose rank estimate is %d, so resolutions that are no rotation of this one fit as well: closed subsystems (e.g. A -> B -> C beside D -> E) admit exact non-negative resolutions whose spectra are sums of one species from each subsystem, whatever the bands, and non-negativity and closure cannot tell them from the truth; a kinetic model (--model with --hard-model) or known spectra (--known-spectrum) can", r.Components, r.Rank.Estimate)
}
