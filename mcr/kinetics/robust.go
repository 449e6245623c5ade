package kinetics

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// ClusterCovariance is the covariance of least-squares parameters that does not assume the
// model fits to the noise: the sandwich B M B (White, Econometrica 1980), with B = (JᵀJ)⁺ and
// the middle M summed over clusters, here the spectra, whose residuals r_i (one block of
// width rows of the residual vector, in order) share their misfit: with g_i = J_iᵀ r_i,
//
//	M = Σ_i g_i g_iᵀ + Σ_{l=1…L} (1 − l/(L+1)) Σ_i (g_i g_{i−l}ᵀ + g_{i−l} g_iᵀ).
//
// With serial the Bartlett weights of Newey & West (Econometrica 1987) carry the correlation
// of neighbouring spectra in time, L = ⌊4 (G/100)^{2/9}⌋ for G clusters (Newey & West, Review
// of Economic Studies 1994); without it L = 0, the cluster sandwich of Liang & Zeger
// (Biometrika 1986) for independent clusters. The lags are not free when the spectra are
// independent: the scores sum to zero at the fit (Jᵀr = 0), so those of neighbours are
// negatively correlated, E g_i g_lᵀ ≈ −J_iᵀJ_i B J_lᵀJ_l, and the window takes about
// 2 Σ_l w_l / N of the variance away when N spectra carry a parameter's information (measured:
// 13 % of the standard error of the faster constant of an invented A → B → C series with noise
// correlated along the axis, TestSandwichWithoutLagsForIndependentSpectra). When the model is
// right, E M = σ² JᵀJ and B M B is the usual σ² (JᵀJ)⁻¹; when one spectrum, or a stretch of
// the run, pulls the parameters more than noise would, M grows with it: to first order B M B
// is the delete-one-spectrum jackknife's variance. It is scaled by G/(G − used), the
// small-sample factor of MacKinnon & White (J. Econometrics 1985) with used the parameters each
// spectrum's residual loses to the fit (the free parameters and the linear ones per column).
// The pseudo-inverse drops singular values below 1e-12 of the largest, as Covariance does. It
// returns the covariance, G and L.
func ClusterCovariance(j *mat.Dense, r []float64, rows, used int, serial bool) (cov *mat.Dense, clusters, lags int, err error) {
	cov, _, clusters, lags, err = clusterCovariance(j, r, rows, used, serial)
	return cov, clusters, lags, err
}

// clusterCovariance is ClusterCovariance, with each spectrum's influence on
// the parameters besides, h_i = B g_i (n × np): to first order what leaving
// spectrum i out would change them by, less sign (the jackknife's term).
func clusterCovariance(j *mat.Dense, r []float64, rows, used int, serial bool) (cov, influence *mat.Dense, clusters, lags int, err error) {
	nr, np := j.Dims()
	if rows <= 0 || nr != len(r) || nr%rows != 0 {
		return nil, nil, 0, 0, fmt.Errorf("kinetics: cluster covariance: %d residuals, %d Jacobian rows, clusters of %d", len(r), nr, rows)
	}
	n := nr / rows
	g := mat.NewDense(n, np, nil)
	for i := 0; i < n; i++ {
		gi := g.RawRowView(i)
		any := false
		for c := 0; c < rows; c++ {
			row, ri := j.RawRowView(i*rows+c), r[i*rows+c]
			for a, v := range row {
				gi[a] += v * ri
				any = any || v != 0
			}
		}
		if any {
			clusters++
		}
	}
	if clusters <= used {
		return nil, nil, clusters, 0, errors.New("kinetics: cluster covariance: no more spectra than parameters")
	}
	if serial {
		lags = neweyWestLags(clusters, n)
	}
	bread, _, err := Covariance(j, 1)
	if err != nil {
		return nil, nil, clusters, lags, err
	}
	var bm mat.Dense
	bm.Mul(bread, lagSummed(g, lags))
	cov = mat.NewDense(np, np, nil)
	cov.Mul(&bm, bread)
	cov.Scale(float64(clusters)/float64(clusters-used), cov)
	influence = mat.NewDense(n, np, nil)
	influence.Mul(g, bread) // B symmetric: row i is (B g_i)ᵀ
	return cov, influence, clusters, lags, nil
}

// neweyWestLags is L = ⌊4 (G/100)^{2/9}⌋ for G clusters (Newey & West,
// Review of Economic Studies 1994), at most n − 1.
func neweyWestLags(clusters, n int) int {
	return min(int(math.Floor(4*math.Pow(float64(clusters)/100, 2.0/9))), n-1)
}

// lagSummed is Σ_i h_i h_iᵀ + Σ_{l=1…L} (1 − l/(L+1)) Σ_i (h_i h_{i−l}ᵀ + h_{i−l} h_iᵀ)
// over the rows h_i of h (n × np): the middle of the sandwich with the
// Bartlett weights, of the scores g_i, or of the influences B g_i (then
// B M B itself).
func lagSummed(h *mat.Dense, lags int) *mat.Dense {
	n, np := h.Dims()
	out := mat.NewDense(np, np, nil)
	out.Mul(h.T(), h)
	for l := 1; l <= lags; l++ {
		w := 1 - float64(l)/float64(lags+1)
		var cross mat.Dense
		cross.Mul(h.Slice(l, n, 0, np).T(), h.Slice(0, n-l, 0, np))
		for a := 0; a < np; a++ {
			for b := 0; b < np; b++ {
				out.Set(a, b, out.At(a, b)+w*(cross.At(a, b)+cross.At(b, a)))
			}
		}
	}
	return out
}

// robustErrors widens each standard error of a data fit to the one ClusterCovariance gives
// when that is larger, clusters of rows residuals (one spectrum's), linear parameters per
// column lost to the fit besides the free ones. Profile fits keep theirs: resolved profiles
// carry the resolution's own errors, smooth in time and tied across columns by closure,
// which their warnings say, and the data fit is the one to quote. The noise-based errors, AR(1) factor included
// (honestErrors), assume every residual is noise; the cluster ones ask only that spectra far
// apart in time be independent, so on data the model does not describe they show what the
// misfit does to the estimate. It records the noise-based errors in NoiseKStdErr and the
// largest ratio in Robust, returns which steps' errors it replaced, and says so when a
// rate constant's error at least doubles:
// below that, the two agree within the cluster estimate's own scatter (its variance rests
// on G spectra, relative standard deviation about √(2/G); common practice).
func (p *fitProblem) robustErrors(lm *LMResult, res *FitResult, rows, linear int) (replaced []bool) {
	res.Robust = 1
	replaced = make([]bool, len(res.K))
	if lm.Jacobian == nil || p.nParams() == 0 {
		return replaced
	}
	// The window over neighbours in time only where the residuals are
	// correlated in time (honestErrors found it): for independent spectra
	// it takes variance away (ClusterCovariance).
	cov, infl, g, lags, err := clusterCovariance(lm.Jacobian, lm.Residual, rows, p.nParams()+linear, res.Inflation > 1)
	if err != nil {
		return replaced
	}
	res.influence = &influence{h: infl, used: p.nParams() + linear, kFree: append([]int(nil), p.kFree...), lags: lags}
	res.NoiseKStdErr = append([]float64(nil), res.KStdErr...)
	worst, at := 1.0, -1
	for a, j := range p.kFree {
		se := res.K[j] * math.Sqrt(math.Max(cov.At(a, a), 0))
		if !(res.KStdErr[j] > 0) || !(se > res.KStdErr[j]) {
			continue
		}
		if f := se / res.KStdErr[j]; f > worst {
			worst, at = f, j
		}
		res.KStdErr[j], replaced[j] = se, true
	}
	for b, i := range p.c0Free {
		a := len(p.kFree) + b
		se := res.C0[i] * math.Sqrt(math.Max(cov.At(a, a), 0))
		if res.C0StdErr[i] > 0 && se > res.C0StdErr[i] {
			res.C0StdErr[i] = se
		}
	}
	if p.t0Free && res.T0StdErr > 0 {
		a := p.t0Index()
		if se := p.tScale * math.Sqrt(math.Max(cov.At(a, a), 0)); se > res.T0StdErr {
			res.T0StdErr = se
		}
	}
	if g := res.sumGrad; g != nil {
		np := len(g)
		sum := math.Sqrt(math.Max(mat.Inner(mat.NewVecDense(np, g), cov, mat.NewVecDense(np, g)), 0))
		if sum > res.SumKStdErr && res.SumKStdErr > 0 {
			res.sumRatio = sum / res.SumKStdErr
			res.SumKStdErr, res.sumSandwich = sum, true
		}
	}
	res.Robust = worst
	if worst < 2 {
		return replaced
	}
	noise := "the noise-based ones"
	if res.Inflation > 1 {
		noise = fmt.Sprintf("the noise-based ones, these multiplied by %.2f for the correlation in time", res.Inflation)
	}
	res.Warnings = append(res.Warnings, fmt.Sprintf("each spectrum's pull on the rate constants varies more than its noise explains (a misfit a whole spectrum shares, single spectra or stretches of the run the model does not describe, or noise correlated along the axis, of which a smooth spectrum collects more): standard errors that allow for such a shared misfit, measured from how much each of the %d spectra%s pulls on the rate constants (a sandwich estimate, as a jackknife leaving out one spectrum at a time measures), are up to %.3g times %s (step %q: %.2g against %.2g) and are the ones reported", g, neighbours(lags), worst, noise, p.s.Steps[at].Text, res.KStdErr[at], res.NoiseKStdErr[at]))
	return replaced
}

// neighbours says how many neighbours in time the sandwich took with each
// spectrum, nothing when none.
func neighbours(lags int) string {
	if lags == 0 {
		return ""
	}
	return fmt.Sprintf(" with its %d neighbours in time", lags)
}
