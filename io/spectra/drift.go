package spectra

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// driftTerms is how many smooth shapes along the axis are taken out of a step between two
// spectra that should be repeats: the Legendre polynomials P_0 … P_3 of the channel index,
// up to the cubic, the largest baseline order --baseline auto tries. A baseline that drifts
// between spectra taken before the reaction (an ATR crystal warming, a source whose output
// creeps) moves them by such a shape; noise and chemistry are not smooth over the whole
// axis and stay.
const driftTerms = 4

// driftMinPoints is the fewest observed points a step needs for its drift to be taken out:
// ten per shape, so that the fit takes little of the noise (each point loses its leverage
// h_j, Σ h_j = driftTerms, which the residual is scaled back up by).
const driftMinPoints = 10 * driftTerms

// driftClip is how many robust standard deviations a point's residual may lie from the
// drift before it is left out of the drift's fit: 3.5, a usual cut for normal data (about
// 5 in 10 000 beyond it; common practice).
const driftClip = 3.5

// removeDrift replaces d_j, for the points use marks, by its residual from the fit of the
// shapes x_jk = P_k(t_j)·scale_j (t_j the channel index mapped to [−1, 1]; scale nil: 1).
// The fit is least squares over the points that are noise: a band that moved between the
// spectra would pull a least-squares curve toward it and spread its change over the whole
// axis, so points whose residual lies beyond driftClip robust standard deviations (1.4826 ×
// the median absolute residual, the MAD of a normal sample) are left out and the fit made
// again, a few times (a trimmed fit; Rousseeuw & Leroy, Robust Regression and Outlier
// Detection, 1987). A point the fit used is divided by √(1 − h_j), h_j its leverage, and one
// it left out by √(1 + h_j), a prediction's (Draper & Smith, Applied Regression Analysis,
// 1998, sections 3.3 and 8.1), so that white noise keeps its variance. Points not used are
// left as they are, and so is d when too few points are used (driftMinPoints).
func removeDrift(d []float64, use []bool, scale []float64) {
	m := len(d)
	in := make([]bool, m)
	count := 0
	for j, u := range use {
		in[j] = u
		if u {
			count++
		}
	}
	if count < driftMinPoints {
		return
	}
	// The shapes at every point, once: every pass and the leverages read them.
	xs := make([][driftTerms]float64, m)
	for j := range xs {
		t := 2*float64(j)/float64(m-1) - 1
		for k := range xs[j] {
			xs[j][k] = legendre(k, t)
			if scale != nil {
				xs[j][k] *= scale[j]
			}
		}
	}
	x := func(j int) [driftTerms]float64 { return xs[j] }
	var ginv *mat.Dense
	var beta [driftTerms]float64
	res := make([]float64, 0, count)
	for pass := 0; ; pass++ {
		var ok bool
		if ginv, beta, ok = driftFit(d, in, x); !ok {
			return
		}
		if pass == 4 {
			break
		}
		res = res[:0]
		for j, u := range use {
			if u {
				res = append(res, math.Abs(d[j]-dotFixed(x(j), beta)))
			}
		}
		cut := driftClip * madScale * medianInPlace(res)
		if cut == 0 {
			break // most residuals exactly zero (a flat or rounded step): nothing to trim by
		}
		changed, kept := false, 0
		for j, u := range use {
			now := u && math.Abs(d[j]-dotFixed(x(j), beta)) <= cut
			changed = changed || now != in[j]
			if now {
				kept++
			}
			in[j] = now
		}
		if !changed || kept < driftMinPoints {
			if kept < driftMinPoints {
				copy(in, use)
				if ginv, beta, ok = driftFit(d, in, x); !ok {
					return
				}
			}
			break
		}
	}
	for j, u := range use {
		if !u {
			continue
		}
		xj := x(j)
		d[j] -= dotFixed(xj, beta)
		h := 0.0
		for a := range xj {
			for b := range xj {
				h += xj[a] * ginv.At(a, b) * xj[b]
			}
		}
		switch {
		case !in[j]:
			d[j] /= math.Sqrt(1 + h)
		case h < 1:
			d[j] /= math.Sqrt(1 - h)
		}
	}
}

// driftFit is the least-squares fit of d by the shapes x over the points in: (XᵀX)⁻¹ and
// the coefficients; false when XᵀX cannot be inverted.
func driftFit(d []float64, in []bool, x func(int) [driftTerms]float64) (*mat.Dense, [driftTerms]float64, bool) {
	var beta [driftTerms]float64
	g := mat.NewDense(driftTerms, driftTerms, nil)
	rhs := mat.NewVecDense(driftTerms, nil)
	for j, u := range in {
		if !u {
			continue
		}
		xj := x(j)
		for a := range xj {
			rhs.SetVec(a, rhs.AtVec(a)+xj[a]*d[j])
			for b := range xj {
				g.Set(a, b, g.At(a, b)+xj[a]*xj[b])
			}
		}
	}
	var ginv mat.Dense
	if err := ginv.Inverse(g); err != nil {
		return nil, beta, false
	}
	var sol mat.VecDense
	sol.MulVec(&ginv, rhs)
	for k := range beta {
		beta[k] = sol.AtVec(k)
	}
	return &ginv, beta, true
}

func dotFixed(a, b [driftTerms]float64) float64 {
	s := 0.0
	for k := range a {
		s += a[k] * b[k]
	}
	return s
}

// legendre is P_k(t) for k ≤ 3.
func legendre(k int, t float64) float64 {
	switch k {
	case 0:
		return 1
	case 1:
		return t
	case 2:
		return (3*t*t - 1) / 2
	default:
		return (5*t*t*t - 3*t) / 2
	}
}

// driftFreeSteps are the steps x_r(k) − x_r(k−1) between each of rows[1:] of v and the one
// before it in rows (successive repeats before the reaction), with their drift removed
// (removeDrift) over the points observed in both. For single beams (relative) a drift δA(ν)
// of the absorbance moves a beam by I·(10^(−δA) − 1) ≈ −ln 10·I·δA, so the shapes are the
// earlier beam times the polynomials; for absorbance or differences the polynomials
// themselves.
func driftFreeSteps(v *mat.Dense, rows []int, blind *Blind, relative bool) *mat.Dense {
	_, m := v.Dims()
	out := mat.NewDense(len(rows)-1, m, nil)
	use := make([]bool, m)
	for k := 1; k < len(rows); k++ {
		i0, i1 := rows[k-1], rows[k]
		a, b, d := v.RawRowView(i0)[:m], v.RawRowView(i1)[:m], out.RawRowView(k-1)
		for j := range d {
			d[j] = b[j] - a[j]
			use[j] = !blind.Has(i0, j) && !blind.Has(i1, j) && !math.IsNaN(d[j]) && !math.IsInf(d[j], 0)
		}
		var scale []float64
		if relative {
			scale = a
		}
		removeDrift(d, use, scale)
	}
	return out
}
