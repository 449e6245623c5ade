package kinetics

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/mat"
)

// CommonError is an error pattern that many rows of the data share: in
// difference spectra ΔA_i = A_i − A_ref every row holds the reference's
// error, −e_ref, the same in each. The residuals cannot show it (the
// fitted spectra take in most of a pattern every row shares), neither can
// a sandwich clustered on spectra near in time (it is perfectly correlated
// across all of them), so FitData adds its share of the parameters'
// covariance from its known variance (commonCovariance).
type CommonError struct {
	// Rows are the rows of the data (in FitData's numbering) that hold the
	// pattern.
	Rows []int
	// Within are those of Rows averaged into the reference: each also holds
	// its own error, of which the pattern is a share, so its own error and
	// the pattern are correlated (the first spectrum's difference against
	// itself is exactly zero). nil for a reference measured apart.
	Within []int
	// Variance is the pattern's variance per channel in the data's units
	// (σ²_ref,j); a value that is not finite and positive counts as none.
	Variance []float64
}

// commonCovariance is the covariance of the fit's parameters (those of the
// reported Jacobian: ln k, ln c0, t0/T) from the common errors, by linear
// error propagation (the delta method; e.g. Seber & Wild, Nonlinear
// Regression, 1989, §2.1, from memory): a data perturbation E moves the
// Gauss–Newton solution by dθ = −(JᵀJ)⁺ Jᵀ vec((I − P) E), P the projector
// onto the model columns √A C. For E = u ẽᵀ (u_i = √a_i on the pattern's
// rows, ẽ_j = √b_j e_ref,j, the weighted pattern) the variable-projection
// Jacobian gives Jᵀ vec((I − P) u ẽᵀ) = −αᵀ S̃ᵀ ẽ, α_a = (∂M/∂θ_a)ᵀ (I − P) u,
// M = √A C and S̃ = √B S the weighted spectra (the term of the Jacobian in
// the residual lies in P's range and drops out). With Σ̃ = diag(b_j σ²_ref,j)
// and W = S̃ᵀ Σ̃ S̃, the rows s (u on Within) adding the cross terms,
//
//	cov = (JᵀJ)⁺ [αᵀ W α − αᵀ W β − βᵀ W α] (JᵀJ)⁺,   β_a = (∂M/∂θ_a)ᵀ (I − P) s,
//
// as Σ̃_j (u uᵀ − u sᵀ − s uᵀ) is the covariance the pattern adds to
// channel j's rows (docs/measurement.md §2). A reaction that ends early is
// nearly a constant column of C, so (I − P) u is small and so is the
// share; one still running at the last spectrum leaves the pattern on the
// rate constants. nil when there are no common errors.
func (p *fitProblem) commonCovariance(lm *LMResult, model, spectra *mat.Dense) (*mat.Dense, error) {
	if len(p.opt.Common) == 0 || lm.Jacobian == nil || p.nParams() == 0 {
		return nil, nil
	}
	n, q := model.Dims()
	m, _ := spectra.Dims()
	dm, err := p.modelSensitivities(lm.X)
	if err != nil {
		return nil, err
	}
	basis, _, err := projector(model)
	if err != nil {
		return nil, err
	}
	np := p.nParams()
	mid := mat.NewDense(np, np, nil)
	for _, ce := range p.opt.Common {
		if len(ce.Variance) != m {
			return nil, errors.New("kinetics: common error: one variance per channel needed")
		}
		u, s := make([]float64, n), make([]float64, n)
		for _, i := range ce.Rows {
			if i < 0 || i >= n {
				return nil, errors.New("kinetics: common error: row out of range")
			}
			u[i] = rowFactor(p.opt.RowWeights, i)
		}
		for _, i := range ce.Within {
			if i >= 0 && i < n {
				s[i] = u[i]
			}
		}
		alpha := sensitivityProducts(dm, OffSpan(basis, u), q)
		beta := sensitivityProducts(dm, OffSpan(basis, s), q)
		w := weightedGram(spectra, ce.Variance, p.opt.ColWeights)
		var wa, wb, t mat.Dense
		wa.Mul(w, alpha) // q × np
		wb.Mul(w, beta)
		t.Mul(alpha.T(), &wa)
		mid.Add(mid, &t)
		t.Mul(alpha.T(), &wb)
		mid.Sub(mid, &t)
		t.Mul(beta.T(), &wa)
		mid.Sub(mid, &t)
	}
	bread, _, err := Covariance(lm.Jacobian, 1)
	if err != nil {
		return nil, err
	}
	var bm mat.Dense
	bm.Mul(bread, mid)
	cov := mat.NewDense(np, np, nil)
	cov.Mul(&bm, bread)
	return cov, nil
}

// sensitivityProducts is the q × np matrix whose column a is (∂M/∂θ_a)ᵀ v.
func sensitivityProducts(dm []*mat.Dense, v []float64, q int) *mat.Dense {
	out := mat.NewDense(q, len(dm), nil)
	vv := mat.NewVecDense(len(v), v)
	var c mat.VecDense
	for a, d := range dm {
		c.MulVec(d.T(), vv)
		out.SetCol(a, c.RawVector().Data)
	}
	return out
}

// weightedGram is S̃ᵀ diag(b_j σ²_j) S̃ for the weighted spectra S̃ (m × q):
// the covariance of S̃ᵀ ẽ for a weighted pattern ẽ of independent channels.
func weightedGram(spectra *mat.Dense, variance, col []float64) *mat.Dense {
	m, q := spectra.Dims()
	w := mat.NewDense(q, q, nil)
	for j := 0; j < m; j++ {
		v := variance[j]
		if !(v > 0) || math.IsInf(v, 0) {
			continue
		}
		if col != nil {
			v *= col[j]
		}
		row := spectra.RawRowView(j)
		for a := 0; a < q; a++ {
			for b := 0; b < q; b++ {
				w.Set(a, b, w.At(a, b)+v*row[a]*row[b])
			}
		}
	}
	return w
}

// OffSpan returns (I − Q Qᵀ) v for an orthonormal basis Q: the part of v
// the columns of Q do not reach (the reference's share of the data fit's
// errors, here and in the pipeline's rows of it).
func OffSpan(basis *mat.Dense, v []float64) []float64 {
	var c, pv mat.VecDense
	c.MulVec(basis.T(), mat.NewVecDense(len(v), v))
	pv.MulVec(basis, &c)
	out := make([]float64, len(v))
	for i := range v {
		out[i] = v[i] - pv.AtVec(i)
	}
	return out
}

// modelSensitivities are ∂M/∂θ_a (n × q each, M the weighted model columns
// the fit projects on) in the parameters of the reported Jacobian: ln k,
// ln c0 and, for a fitted t0, T·∂M/∂t0 (reportT0). Analytic where the fit's
// Jacobian is (first-order schemes solved exactly), else central
// differences (step 1e-5 in ln θ, 1e-6 of the span in t0; relative error
// about 1e-10, far below what a standard error needs).
func (p *fitProblem) modelSensitivities(theta []float64) ([]*mat.Dense, error) {
	if p.jacobianFunc(nil) != nil {
		k, c0, err := p.unpack(theta)
		if err != nil {
			return nil, err
		}
		t0 := p.t0At(theta)
		job := sensitivityJob{s: p.s, k: k, c0: c0, times: p.times, t0: t0, kFree: p.kFree, c0Free: p.c0Free}
		if c, dc, ok := job.sensitivities(); ok {
			if p.t0Free {
				dc = append(dc, p.t0Sensitivity(k, c, t0, p.tScale))
			}
			if p.opt.RowWeights != nil {
				for a := range dc {
					dc[a] = scaleRowsSqrt(dc[a], p.opt.RowWeights)
				}
			}
			return dc, nil
		}
	}
	return p.differencedSensitivities(theta)
}

// differencedSensitivities is modelSensitivities by central differences.
func (p *fitProblem) differencedSensitivities(theta []float64) ([]*mat.Dense, error) {
	np := p.nParams()
	out := make([]*mat.Dense, np)
	for a := 0; a < np; a++ {
		up, down := append([]float64(nil), theta...), append([]float64(nil), theta...)
		scale := 1.0
		if p.t0Free && a == p.t0Index() {
			t0, h := p.t0At(theta), 1e-6*p.tScale
			up[a], down[a] = p.t0Phi(math.Min(t0+h, p.t0Hi)), p.t0Phi(math.Max(t0-h, p.t0Lo))
			step := p.t0At(up) - p.t0At(down)
			if !(step > 0) {
				return nil, errors.New("t0's range is too narrow to difference")
			}
			scale = p.tScale / step
		} else {
			up[a] += 1e-5
			down[a] -= 1e-5
			scale = 1 / 2e-5
		}
		_, mu, err := p.model(up)
		if err != nil {
			return nil, err
		}
		_, md, err := p.model(down)
		if err != nil {
			return nil, err
		}
		var d mat.Dense
		d.Sub(mu, md)
		d.Scale(scale, &d)
		out[a] = &d
	}
	return out, nil
}

// commonErrors adds the common errors' covariance (commonCovariance) to the
// standard errors of a data fit, after the widenings for the residuals
// (honestErrors, robustErrors): those measure what the residuals show, this
// what they cannot. It records each rate constant's share in CommonKStdErr.
// A cross term can make a parameter's share negative (rows inside the
// reference whose own error the pattern partly cancels); the error is then
// left as it was, the residual-based one counting that noise already.
func (p *fitProblem) commonErrors(lm *LMResult, res *FitResult, model, spectra *mat.Dense) {
	cov, err := p.commonCovariance(lm, model, spectra)
	if err != nil {
		res.Warnings = append(res.Warnings, "the reference's share of the standard errors could not be computed: "+err.Error())
		return
	}
	if cov == nil {
		return
	}
	add := func(se *float64, scale, v float64) float64 {
		if !(v > 0) || !(*se > 0) {
			return 0
		}
		x := scale * math.Sqrt(v)
		*se = math.Hypot(*se, x)
		return x
	}
	res.CommonKStdErr = make([]float64, len(res.K))
	for a, j := range p.kFree {
		if res.KNotDetermined != nil && res.KNotDetermined[j] {
			continue
		}
		res.CommonKStdErr[j] = add(&res.KStdErr[j], res.K[j], cov.At(a, a))
	}
	for b, i := range p.c0Free {
		a := len(p.kFree) + b
		add(&res.C0StdErr[i], res.C0[i], cov.At(a, a))
	}
	if p.t0Free {
		a := p.t0Index()
		add(&res.T0StdErr, p.tScale, cov.At(a, a))
	}
	if g := res.sumGrad; g != nil {
		v := mat.Inner(mat.NewVecDense(len(g), g), cov, mat.NewVecDense(len(g), g))
		add(&res.SumKStdErr, 1, v)
	}
}
