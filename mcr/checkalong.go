package mcr

import (
	"errors"
	"slices"

	"gonum.org/v1/gonum/mat"
)

// NamedRise is what remains of a check's rise when both fits may also take
// up given spectral directions (dirs, m × q: the factors the rank step set
// aside as not species) with amounts free of sign in every spectrum: the
// constrained and the freer model are each resolved again with q more
// components whose spectra are the directions exactly, outside closure,
// sign and shape constraints, and the residual sums of squares compared
// as the check compares them. The model with the constraint is resolved
// from the constrained fit and from the freer one's (projected onto the
// profiles' signs, as the check's restart), the lower kept: a rise that
// vanishes once the named directions are allowed was their cost, not the
// constraint's. fit is the fit with the constraint, opt its options.
func NamedRise(d Data, fit *Result, opt Options, cc ConstraintCheck, dirs *mat.Dense, maxIter int) (float64, error) {
	if cc.Freer == nil || dirs == nil {
		return 0, errors.New("no freer refit or no directions")
	}
	if opt.HardModel != nil || opt.HardKept != nil {
		return 0, errors.New("a kinetic model inside the resolution")
	}
	_, k := fit.C.Dims()
	var drop func(*Options)
	for _, g := range constraintGroups(opt, k) {
		if g.name == cc.Name {
			drop = g.drop
		}
	}
	if drop == nil {
		return 0, errors.New("unknown constraint group " + cc.Name)
	}
	opt.Observe, opt.MaxIter, opt.stopAtRoundingFloor = nil, maxIter, true
	freer := opt
	drop(&freer)
	without, err := resolveWithDirections(d, cc.Freer, freer, dirs)
	if err != nil {
		return 0, err
	}
	start := fit
	if cc.Constrained != nil {
		start = cc.Constrained
	}
	with, err := resolveWithDirections(d, start, opt, dirs)
	if err != nil {
		return 0, err
	}
	c0 := mat.DenseCopyOf(without.C)
	clampColumns(c0, append(boolsOr(opt.NonNegProfiles, k, true), make([]bool, c0.RawMatrix().Cols-k)...))
	if again, err := Resolve(d, c0, withDirections(opt, k, dirs)); err == nil && again.ResidualSS < with.ResidualSS {
		with = again
	}
	return with.ResidualSS - without.ResidualSS, nil
}

// resolveWithDirections resolves from start with the directions added as
// components, their amounts started at the least-squares amounts in the
// start's residual.
func resolveWithDirections(d Data, start *Result, opt Options, dirs *mat.Dense) (*Result, error) {
	n, k := start.C.Dims()
	_, q := dirs.Dims()
	c0 := mat.NewDense(n, k+q, nil)
	c0.Slice(0, n, 0, k).(*mat.Dense).Copy(start.C)
	c0.Slice(0, n, k, k+q).(*mat.Dense).Copy(spanAmounts(d, start, opt.Baseline, dirs))
	return Resolve(d, c0, withDirections(opt, k, dirs))
}

// withDirections is opt for k components and q more whose spectra are the
// columns of dirs exactly, with profiles free of sign, outside closure
// (weight 0), unimodality, zero windows and the least-others lowering.
func withDirections(opt Options, k int, dirs *mat.Dense) Options {
	m, q := dirs.Dims()
	free := make([]bool, q)
	opt.NonNegProfiles = append(boolsOr(opt.NonNegProfiles, k, true), free...)
	opt.NonNegSpectra = append(boolsOr(opt.NonNegSpectra, k, opt.Mode == Species), free...)
	if opt.Unimodal != nil {
		opt.Unimodal = append(boolsOr(opt.Unimodal, k, false), free...)
	}
	if opt.LeastOthers != nil {
		opt.LeastOthers = append(boolsOr(opt.LeastOthers, k, false), free...)
	}
	if opt.ZeroProfiles != nil {
		opt.ZeroProfiles = append(padMasks(opt.ZeroProfiles, k), make([][]bool, q)...)
	}
	if opt.ZeroSpectra != nil {
		opt.ZeroSpectra = append(padMasks(opt.ZeroSpectra, k), make([][]bool, q)...)
	}
	if opt.Closure {
		w := ones(k)
		if opt.ClosureWeights != nil {
			copy(w, opt.ClosureWeights)
		}
		opt.ClosureWeights = append(w, make([]float64, q)...)
	}
	known, weights := make([][]float64, k+q), make([]float64, k+q)
	copy(known, opt.KnownSpectra)
	copy(weights, opt.KnownWeights)
	for j := 0; j < q; j++ {
		known[k+j] = mat.Col(make([]float64, m), j, dirs)
	}
	opt.KnownSpectra, opt.KnownWeights = known, weights
	return opt
}

// padMasks is masks with nil entries up to k.
func padMasks(masks [][]bool, k int) [][]bool {
	out := slices.Clone(masks)
	for len(out) < k {
		out = append(out, nil)
	}
	return out[:k]
}

// spanAmounts are the least-squares amounts (n × q) of the directions in
// each row of fit's residual, in the data's metric: r_iᵀ G⁺ with
// r_i = Pᵀ B e_i and G = Pᵀ B P, G⁺ from G's eigendecomposition with
// eigenvalues below 1e-10 of the largest dropped (the directions may be
// nearly dependent; a dependent one adds nothing).
func spanAmounts(d Data, fit *Result, shapes, dirs *mat.Dense) *mat.Dense {
	n, _ := d.Dims()
	_, q := dirs.Dims()
	x, y := withBaseline(fit, shapes)
	_, col := weightsOf(d)
	r := d.MulSpectra(dirs) // n × q: D B P
	yw := y
	if col != nil {
		yw = scaleRows(y, col, 1)
	}
	var ytp, xytp mat.Dense
	ytp.Mul(yw.T(), dirs) // K × q: Yᵀ B P
	xytp.Mul(x, &ytp)
	r.Sub(r, &xytp)
	var eig mat.EigenSym
	if !eig.Factorize(gramW(dirs, col), true) {
		return mat.NewDense(n, q, nil)
	}
	vals := eig.Values(nil)
	var vec mat.Dense
	eig.VectorsTo(&vec)
	top := slices.Max(vals)
	inv := mat.NewDense(q, q, nil)
	for a := 0; a < q; a++ {
		for b := 0; b < q; b++ {
			s := 0.0
			for j, v := range vals {
				if v > 1e-10*top {
					s += vec.At(a, j) * vec.At(b, j) / v
				}
			}
			inv.Set(a, b, s)
		}
	}
	var out mat.Dense
	out.Mul(r, inv)
	return &out
}
