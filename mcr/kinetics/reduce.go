package kinetics

import (
	"errors"
	"math"
	"math/rand/v2"

	"github.com/bandsolve/bandsolve/internal/product"
	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"
)

// reduceExtra is how many singular vectors beyond the model's columns the
// data fit keeps: room for a baseline, a drifting background, the blank's
// pattern and the like, which the model does not describe but which must
// stay in the residual the rate constants are judged by.
const reduceExtra = 25

// reduceData returns X (n × w) with X Xᵀ ≈ D Dᵀ, so that ‖(I − P_C) D‖ ≈
// ‖(I − P_C) X‖ for every n-row C. When min(n, m) is small the reduction
// is exact (X = U Σ from the thin SVD when m > n, else D itself). Otherwise
// X = Q Ũ Σ on the w = q + reduceExtra leading singular vectors, found by
// the randomized range finder with two power iterations (Halko, Martinsson
// & Tropp, SIAM Review 2011): Q an orthonormal basis of (D Dᵀ)² D Ω, Ω
// Gaussian from a fixed PCG stream (so runs repeat exactly), and Ũ Σ Vᵀ
// the SVD of Qᵀ D. This is the SVD-reduced global analysis of kinetic data
// (Henry & Hofrichter, Methods Enzymol. 1992): what is left out is noise,
// whose projection on the q model columns moves the rate constants by a
// tiny fraction of their standard errors, and each evaluation then costs
// n·w instead of n·m.
func reduceData(d *mat.Dense, q int) (*mat.Dense, error) {
	n, m := d.Dims()
	w := q + reduceExtra
	if min(n, m) <= 2*w {
		if m <= n {
			return d, nil
		}
		var svd mat.SVD
		if !svd.Factorize(d, mat.SVDThin) {
			return nil, errors.New("SVD of the data failed")
		}
		var u mat.Dense
		svd.UTo(&u)
		return scaleCols(&u, svd.Values(nil)), nil
	}
	rng := rand.New(rand.NewPCG(0x6b696e, 0x726564))
	omega := mat.NewDense(m, w, nil)
	for i := 0; i < m; i++ {
		for j := 0; j < w; j++ {
			omega.Set(i, j, rng.NormFloat64())
		}
	}
	// The passes over D by product.Mul and MulT: the sums mat.Dense.Mul
	// forms, bit for bit for finite data (FitData's check), at a fraction
	// of its time; Yᵀ D is taken as (Dᵀ Y)ᵀ, the same sums.
	y := product.Mul(d, omega)
	orthonormalize(y)
	for it := 0; it < 2; it++ {
		z := product.MulT(d, y)
		orthonormalize(z)
		y = product.Mul(d, z)
		orthonormalize(y)
	}
	b := mat.DenseCopyOf(product.MulT(d, y).T()) // w × m
	var svd mat.SVD
	if !svd.Factorize(b, mat.SVDThin) {
		return nil, errors.New("SVD of the reduced data failed")
	}
	var ub, x mat.Dense
	svd.UTo(&ub)
	x.Mul(y, scaleCols(&ub, svd.Values(nil)))
	return &x, nil
}

// scaleCols returns a with column j multiplied by s[j] (len(s) ≤ columns;
// the rest dropped).
func scaleCols(a *mat.Dense, s []float64) *mat.Dense {
	r, _ := a.Dims()
	out := mat.NewDense(r, len(s), nil)
	for i := 0; i < r; i++ {
		row := a.RawRowView(i)
		for j, v := range s {
			out.Set(i, j, row[j]*v)
		}
	}
	return out
}

// orthonormalize replaces the columns of a by an orthonormal basis of their
// span, by modified Gram–Schmidt done twice ("twice is enough", Giraud et
// al. 2005). A column that vanishes against the earlier ones (the data have
// lower rank than w) is set to zero, which keeps it out of the basis.
func orthonormalize(a *mat.Dense) {
	_, c := a.Dims()
	cols := make([][]float64, c)
	for j := range cols {
		cols[j] = mat.Col(nil, j, a)
	}
	for j := range cols {
		orig := floats.Norm(cols[j], 2)
		for pass := 0; pass < 2; pass++ {
			for l := 0; l < j; l++ {
				floats.AddScaled(cols[j], -floats.Dot(cols[l], cols[j]), cols[l])
			}
		}
		nrm := floats.Norm(cols[j], 2)
		if !(nrm > 1e-10*orig) || math.IsInf(nrm, 0) {
			for i := range cols[j] {
				cols[j][i] = 0
			}
			continue
		}
		floats.Scale(1/nrm, cols[j])
	}
	for j := range cols {
		a.SetCol(j, cols[j])
	}
}
