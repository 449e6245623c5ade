package pipeline

import (
	"math"

	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
)

// Where the blank stood at the detector's ceiling and the sample's beams came
// under it (spectra.Assembled.BlankOffset), the absorbance is taken against
// the ceiling: A = A_true − δ_j, δ_j = log10(I_blank/I_ceiling) ≥ 0, one
// amount per channel in every spectrum. With closure (Σ_k c_k = T) the data
// are fitted exactly by the true spectra lowered by δ_j/T, since
// C (S − (δ/T) 1ᵀ)ᵀ = C Sᵀ − 1δᵀ, so the profiles and the differences between
// the species' spectra are determined there and each spectrum only up to that
// common amount. Lowered spectra can dip below zero where a species absorbs
// less than δ_j/T, and non-negativity then bends the fit: on an invented
// A → B → C series clipped at 97 % of the source's peak, where a species
// absorbs 0.006 and δ_j = 0.009, ALS's spectra departed from the closure
// identity by up to 0.4 % of the channel's largest, well above the noise
// (TestClippedBlankOffsetIsAbsorbed). So on these channels the
// spectra are solved again with free sign on the final profiles, and then
// raised by the least amount that makes every one non-negative, δ̂_j =
// max(0, −min_k s_kj): the lowest spectra that both facts allow (the true
// blank is at least the ceiling, so δ_j ≥ 0; every spectrum is non-negative,
// so δ_j/T ≥ −min_k s_kj), the true ones lying higher by one amount per
// channel, common to all species. The data of the channel are raised by
// T·δ̂_j with them, so that D = C Sᵀ + E holds as before.

// absorbBlankOffset solves the spectra of the clipped blank's channels with
// free sign on res's profiles and raises spectra and data by the least
// amount that keeps every spectrum non-negative there (see above). It needs
// the data held in full (the compressed path of large data keeps the
// non-negative fit) and closure with one total and no weights, which
// blankOffsetAbsorbed asked for before the data were assembled.
func absorbBlankOffset(r *Result, data mcr.Data, res *mcr.Result, opt mcr.Options) *mcr.Result {
	if r.BlankOffset == nil || r.Compressed || !opt.Closure || len(opt.Total) != 1 || opt.ClosureWeights != nil || r.Mode != mcr.Species {
		return res
	}
	var row []float64
	if weighted(r) {
		row = r.Weights.Row
	}
	total := opt.Total[0]
	n, k := res.C.Dims()
	changed := false
	for j, on := range r.BlankOffset {
		if !on {
			continue
		}
		s, ok := freeSpectrumAt(r, res.C, row, j)
		if !ok {
			continue
		}
		lift := 0.0
		for _, v := range s {
			lift = math.Max(lift, -v)
		}
		for a := range s {
			s[a] += lift
			res.S.Set(j, a, s[a])
		}
		for i := 0; i < n; i++ {
			if r.Blind.Has(i, j) {
				// A blind point holds the model's value (refineBlind):
				// it follows the new spectra.
				r.D.Set(i, j, mat.Dot(mat.NewVecDense(k, res.C.RawRowView(i)), mat.NewVecDense(k, s)))
				continue
			}
			r.D.Set(i, j, r.D.At(i, j)+total*lift)
		}
		changed = true
	}
	if changed {
		refreshFit(data, r, res)
	}
	return res
}

// freeSpectrumAt is the least-squares spectrum of channel j on the profiles c
// over its measured spectra, weighted by the rows' noise weights (nil: equal;
// the channel's own weight scales every term alike), from the normal
// equations: a k × k Gram matrix, positive definite when the measured rows'
// profiles are independent, factored by Cholesky. ok is false when they are
// not (the channel then keeps its non-negative fit).
func freeSpectrumAt(r *Result, c *mat.Dense, row []float64, j int) ([]float64, bool) {
	n, k := c.Dims()
	g := mat.NewSymDense(k, nil)
	rhs := mat.NewVecDense(k, nil)
	for i := 0; i < n; i++ {
		if r.Blind.Has(i, j) {
			continue
		}
		w := 1.0
		if row != nil {
			w = row[i]
		}
		ci := c.RawRowView(i)
		d := r.D.At(i, j)
		for a := 0; a < k; a++ {
			rhs.SetVec(a, rhs.AtVec(a)+w*ci[a]*d)
			for b := a; b < k; b++ {
				g.SetSym(a, b, g.At(a, b)+w*ci[a]*ci[b])
			}
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(g) {
		return nil, false
	}
	var s mat.VecDense
	if err := ch.SolveVecTo(&s, rhs); err != nil {
		return nil, false
	}
	out := make([]float64, k)
	for a := range out {
		out[a] = s.AtVec(a)
		if math.IsNaN(out[a]) || math.IsInf(out[a], 0) {
			return nil, false
		}
	}
	return out, true
}

// refreshFit sets res's fit figures again from the data as they are now, in
// the metric ALS works in (withoutBaseline, after it changes the data, and
// absorbBlankOffset), and returns the sum of squares they are taken of. As
// ALS reports them (mcr.Options.AsideRows), the lack of fit and explained
// variance are of the spectra kept, the residual sum of squares of every
// row.
func refreshFit(data mcr.Data, r *Result, res *mcr.Result) float64 {
	row, col := weightsOfData(data)
	fit := mcr.FitWeighted(r.D, res.C, res.S, row, col, nil)
	res.ResidualSS = sq(fit.LackOfFitPercent/100) * fit.DataSS
	total := fit.DataSS
	if row != nil {
		res.ResidualSS, total = fit.WeightedSS, data.FrobeniusSq()
	}
	ss := res.ResidualSS
	if rows := asideList(r); rows != nil {
		ssAside, totAside := rowSums(r.D, res, rows, row, col)
		ss, total = math.Max(ss-ssAside, 0), total-totAside
	}
	if total > 0 {
		res.LackOfFitPercent = 100 * math.Sqrt(ss/total)
		res.ExplainedPercent = 100 * (1 - ss/total)
	}
	return total
}

// rowSums is Σ a_i b_j e²_ij and Σ a_i b_j d²_ij over the rows named, e the
// residual of res (weights nil: one).
func rowSums(d *mat.Dense, res *mcr.Result, rows []int, row, col []float64) (ss, tot float64) {
	_, m := d.Dims()
	_, k := res.C.Dims()
	for _, i := range rows {
		a := 1.0
		if row != nil {
			a = row[i]
		}
		ci := res.C.RawRowView(i)[:k]
		for j, v := range d.RawRowView(i)[:m] {
			b := 1.0
			if col != nil {
				b = col[j]
			}
			e := v
			for l, x := range res.S.RawRowView(j)[:k] {
				e -= ci[l] * x
			}
			ss += a * b * e * e
			tot += a * b * v * v
		}
	}
	return ss, tot
}
