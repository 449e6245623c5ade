package kinetics

import (
	"errors"
	"fmt"
	"math"

	"github.com/bandsolve/bandsolve/internal/product"
	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// NonNegativeCost is the rise of the data fit's residual sum of squares
// when the spectra must be non-negative, at fixed rate constants k:
//
//	Σ_j min_{s_j ≥ 0} ‖C s_j − d_j‖² − min_S ‖C Sᵀ − D‖²  (≥ 0),
//
// D the data (n × m), C = C(k) the model concentrations (or extents with
// UseExtents) and d_j, s_j the columns of D and Sᵀ, weighted as FitData
// weights them (√A on the rows; √B > 0 on the columns keeps the sign of the
// spectra, so non-negativity is the same constraint). With Q an orthonormal
// basis of C's columns and R = QᵀC, ‖C s − d‖² = ‖(I − QQᵀ) d‖² + ‖R s − Qᵀd‖²,
// so each column is a q × q non-negative least-squares problem (Lawson &
// Hanson 1974, mcr.NNLS) and the first term, the free fit's, cancels.
//
// Free spectra cannot tell apart rate constants that give the same span of
// C: for A → B → C; D → E the span is {1, e^{−k1 t}, e^{−k2 t}, e^{−k3 t}}
// whatever order k1, k2, k3 come in, and consecutive steps have the
// slow–fast ambiguity. Non-negative spectra (absorbance, common practice)
// often can: the wrong order needs a negative band to fit.
//
// D must be finite, as FitData requires of the same data.
func NonNegativeCost(s *Scheme, times []float64, d *mat.Dense, k []float64, opt FitOptions) (float64, error) {
	c, err := NonNegativeCheck(s, times, d, k, opt)
	return c.Cost, err
}

// NonNegCost is NonNegativeCost with what is needed to tell a cost that
// only clips noise from one that needs a negative band.
//
// Where a true spectrum is zero, its free least-squares estimate is noise
// and is negative half the time: non-negativity then costs something even
// though the spectra are non-negative. At one channel j the cost is the
// squared distance of b_j = Qᵀd_j from the polyhedral cone R·ℝ₊^q; when the
// true coefficients sit at the cone's vertex (every one zero) and the noise
// is N(0, σ_j² I_q), that distance over σ_j² is chi-bar-squared: given that
// a coefficients end held at zero, it is χ² with a degrees of freedom
// (Shapiro, Int. Stat. Rev. 1988, chi-bar-squared distribution, from
// memory), and a truth inside the cone only makes it smaller. Summed over
// independent channels: given Active held coefficients in all, Scaled, the
// cost in each channel's own noise variances, is at most χ²(Active) when
// every spectrum is non-negative, and a negative band a model needs adds
// (its depth/σ)² per point on top.
type NonNegCost struct {
	// Cost is NonNegativeCost's value, in the data's (weighted) units.
	Cost float64
	// Scaled is Σ_j cost_j·(ν − 2)/rss_j, each channel's cost over its own
	// noise variance estimated from the free fit's residual there (rss_j,
	// ν = n − q degrees of freedom; E[(ν − 2)/rss_j] = 1/σ_j² exactly for
	// normal noise, and rss_j, orthogonal to C, is independent of cost_j).
	// NaN when ν ≤ 2.
	Scaled float64
	// Active is the number of spectrum coefficients (channel × column)
	// held at zero in the channels that cost anything, Nu the residual
	// degrees of freedom ν of each channel, Columns the model's columns q.
	Active, Nu, Columns int
}

// noiseAlpha is the chance that the non-negative cost of spectra that are
// all non-negative exceeds NoiseLimit: 10⁻³, one-sided (the value is this
// program's choice; a negative band a model needs costs its (depth/σ)² per
// point, far beyond it unless the band is within the noise).
const noiseAlpha = 1e-3

// NoiseLimit is the most Scaled can be when it only clips noise whose
// cost per held coefficient is perHeld (1 when the channels' residuals
// measure all the noise of the spectra; PerHeld of another fit of the same
// data otherwise), at chance noiseAlpha of more: perHeld times the
// 1 − noiseAlpha quantile of χ²(Active), its spread about Active widened by
// √((ν − 2 + q)/(ν − 4)) for the noise estimated per channel (the variance
// of Σ_j χ²(a_j)·(ν − 2)/χ²(ν) with a_j ≤ q; moments of the inverse χ²,
// common practice). 0 when nothing is held at zero (then Scaled is 0 too),
// NaN when ν ≤ 4 or Scaled is NaN.
func (c NonNegCost) NoiseLimit(perHeld float64) float64 {
	if c.Active == 0 {
		return 0
	}
	if c.Nu <= 4 || math.IsNaN(c.Scaled) {
		return math.NaN()
	}
	a := float64(c.Active)
	q := distuv.ChiSquared{K: a}.Quantile(1 - noiseAlpha)
	return perHeld * (a + (q-a)*math.Sqrt(float64(c.Nu-2+c.Columns)/float64(c.Nu-4)))
}

// PerHeld is Scaled per held coefficient, at least 1: what clipping costs
// per coefficient on these data when the cost is clipping alone. The
// chi-bar-squared expectation is 1 when each channel's residual measures
// the noise of its coefficients; a blank's fixed noise pattern (in the span
// of C whenever closure puts the constant there) and noise that varies in
// time add to the coefficients' noise what the residual cannot see, and
// raise it (1.3–1.4 on single beams with noise constant in counts and a
// blank of 16 scans).
func (c NonNegCost) PerHeld() float64 {
	if c.Active == 0 || !(c.Scaled > float64(c.Active)) {
		return 1
	}
	return c.Scaled / float64(c.Active)
}

// NeedsNegative reports whether the cost is more than clipping noise at
// perHeld per held coefficient gives (Scaled > NoiseLimit(perHeld)): the
// spectra the model needs at these rate constants then have a band below
// zero. ok is false when that cannot be told (too few spectra for a noise
// estimate per channel).
func (c NonNegCost) NeedsNegative(perHeld float64) (needs, ok bool) {
	if c.Active == 0 {
		// Nothing held: the non-negative spectra are the free ones, and
		// any cost is rounding.
		return false, true
	}
	lim := c.NoiseLimit(perHeld)
	if math.IsNaN(lim) {
		return false, false
	}
	return c.Scaled > lim, true
}

// NonNegativeCheck is NonNegativeCost with the cost scaled by each
// channel's noise and the count of coefficients held at zero (NonNegCost).
func NonNegativeCheck(s *Scheme, times []float64, d *mat.Dense, k []float64, opt FitOptions) (NonNegCost, error) {
	var out NonNegCost
	if s == nil || d == nil {
		return out, errors.New("kinetics: non-negative cost: missing scheme or data")
	}
	n, m := d.Dims()
	p, err := newFitProblem(s, times, opt, n)
	if err != nil {
		return out, fmt.Errorf("kinetics: non-negative cost: %w", err)
	}
	if err := checkWeights(opt.RowWeights, n, "row"); err != nil {
		return out, fmt.Errorf("kinetics: non-negative cost: %w", err)
	}
	if err := checkWeights(opt.ColWeights, m, "column"); err != nil {
		return out, fmt.Errorf("kinetics: non-negative cost: %w", err)
	}
	c0 := p.c00
	sim, err := s.SimulateWith(k, c0, times, opt.T0, p.opt.Sim)
	if err != nil {
		return out, fmt.Errorf("kinetics: non-negative cost: %w", err)
	}
	c := sim.C
	if opt.UseExtents {
		c = sim.Extents
	}
	if opt.RowWeights != nil {
		c = scaleRowsSqrt(c, opt.RowWeights)
	}
	_, q := c.Dims()
	basis := mat.DenseCopyOf(c)
	orthonormalize(basis)
	var r mat.Dense
	r.Mul(basis.T(), c) // q × q
	// Qᵀ D as (Dᵀ Q)ᵀ: product.MulT forms the same sums as Dgemm bit for bit
	// for finite data (see pseudoSolve), several times faster at q columns.
	var dq *mat.Dense
	if opt.RowWeights != nil {
		// Qᵀ √A D, the data weighted as the model is: (√A Q)ᵀ D, which
		// scales n × q numbers instead of copying the n × m data.
		wq := mat.DenseCopyOf(basis)
		for i := 0; i < n; i++ {
			f := math.Sqrt(opt.RowWeights[i])
			row := wq.RawRowView(i)
			for a := range row {
				row[a] *= f
			}
		}
		dq = product.MulT(d, wq)
	} else {
		dq = product.MulT(d, basis) // m × q
	}
	colSq := weightedColumnSquares(d, opt.RowWeights)
	nu := n - q
	var cost, scaled float64
	active := 0
	b := make([]float64, q)
	// One workspace for the m columns' problems, all q × q: NNLS's answers
	// bit for bit without its buffers made afresh per column (about half of
	// its time at 3001 columns).
	var ws mcr.NNLSWork
	for j := 0; j < m; j++ {
		f := 1.0
		if opt.ColWeights != nil {
			f = math.Sqrt(opt.ColWeights[j])
		}
		fit := 0.0
		for a := 0; a < q; a++ {
			b[a] = f * dq.At(j, a)
			fit += b[a] * b[a]
		}
		x, err := ws.Solve(&r, b)
		if err != nil {
			return out, fmt.Errorf("kinetics: non-negative cost: column %d: %w", j+1, err)
		}
		var cj float64
		for a := 0; a < q; a++ {
			var v float64
			for l := 0; l < q; l++ {
				v += r.At(a, l) * x[l]
			}
			e := v - b[a]
			cost += e * e
			cj += e * e
		}
		if cj > 0 {
			// Inside the cone (no cost) no coefficient counts as held:
			// zeros there are of a channel without signal.
			for _, v := range x {
				if v == 0 {
					active++
				}
			}
			scaled += cj * float64(nu-2) / channelRSS(f*f*colSq[j], fit)
		}
	}
	out.Cost, out.Scaled, out.Active, out.Nu, out.Columns = cost, scaled, active, nu, q
	if nu <= 2 {
		out.Scaled = math.NaN() // no noise estimate per channel
	}
	return out, nil
}

// channelRSS is a channel's free-fit residual sum of squares, its data's
// (weighted) sum of squares all less fit, the part in C's span. On data
// without noise it is rounding and may come out ≤ 0: it is kept at least
// 10⁻¹³ of all (sums of a few thousand terms in double precision are good to
// about that), so that a cost of rounding stays negligible and a cost of a
// band stays huge.
func channelRSS(all, fit float64) float64 {
	return math.Max(all-fit, 1e-13*all)
}

// weightedColumnSquares is Σ_i w_i d_ij² for every column j of d (w nil: 1).
func weightedColumnSquares(d *mat.Dense, w []float64) []float64 {
	n, m := d.Dims()
	out := make([]float64, m)
	for i := 0; i < n; i++ {
		f := 1.0
		if w != nil {
			f = w[i]
		}
		for j, v := range d.RawRowView(i) {
			out[j] += f * v * v
		}
	}
	return out
}
