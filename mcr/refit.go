package mcr

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// FitRows fits, for each of the given rows of d, the concentrations and the
// baseline coefficients to the spectra s and the baseline shapes p held (p
// may be nil), weighted by the column weights col (nil: none), under the
// constraints opt puts on the profiles: non-negativity, closure with its
// total for that row, zero windows and the baseline's anchors. It returns
// one row of c (len(rows) × k) and of b (len(rows) × nb, nil without p) per
// row given.
//
// It is a deletion residual's model (Cook & Weisberg, Residuals and
// Influence in Regression, 1982) for a row left out of the fit: the row's
// profile step of ALS alone. Free concentrations would not be that model: a
// bubble over an ATR crystal takes a share of every band away (all
// concentrations times 1 − g, against a closure that holds their total) and
// adds a scatter slope that a fitted baseline polynomial follows, so free
// concentrations and a free baseline fitted it as well as any spectrum
// while the resolution itself, under closure, left it 69 times the noise.
//
// The normal equations (Gram SᵀBS) are the ones ALS's profile step solves,
// with the same active-set solver, so the row is held to the very problem
// it would face in the fit.
func FitRows(d *mat.Dense, rows []int, s, p *mat.Dense, col []float64, opt Options) (c, b *mat.Dense, err error) {
	n, m := d.Dims()
	sm, k := s.Dims()
	nb := 0
	if p != nil {
		var pm int
		if pm, nb = p.Dims(); pm != m {
			return nil, nil, fmt.Errorf("fit rows: baseline shapes have %d points, data has %d", pm, m)
		}
	}
	if sm != m {
		return nil, nil, fmt.Errorf("fit rows: spectra have %d points, data has %d", sm, m)
	}
	if col != nil && len(col) != m {
		return nil, nil, fmt.Errorf("fit rows: %d column weights for %d points", len(col), m)
	}
	for _, i := range rows {
		if i < 0 || i >= n {
			return nil, nil, fmt.Errorf("fit rows: row %d outside the %d rows", i, n)
		}
	}
	x := weightedTerms(s, p, col)
	kk := k + nb
	var g mat.SymDense
	g.SymOuterK(1, x.T())
	rhs := mat.NewDense(len(rows), kk, nil)
	y := make([]float64, m)
	for r, i := range rows {
		for j, v := range d.RawRowView(i)[:m] {
			y[j] = v * weightRoot(col, j)
		}
		var xy mat.VecDense
		xy.MulVec(x.T(), mat.NewVecDense(m, y))
		rhs.SetRow(r, xy.RawVector().Data)
	}
	pr := rowsProblem(&g, rows, k, nb, opt)
	out, err := solveRows(pr, rhs, nil)
	if err != nil {
		return nil, nil, fmt.Errorf("fit rows: %w", err)
	}
	c = mat.DenseCopyOf(out.Slice(0, len(rows), 0, k))
	if nb > 0 {
		b = mat.DenseCopyOf(out.Slice(0, len(rows), k, kk))
	}
	return c, b, nil
}

// weightedTerms is [S P] with row j scaled by √col_j (m × (k + nb)).
func weightedTerms(s, p *mat.Dense, col []float64) *mat.Dense {
	m, k := s.Dims()
	nb := 0
	if p != nil {
		_, nb = p.Dims()
	}
	x := mat.NewDense(m, k+nb, nil)
	for j := 0; j < m; j++ {
		w := weightRoot(col, j)
		for a := 0; a < k; a++ {
			x.Set(j, a, w*s.At(j, a))
		}
		for q := 0; q < nb; q++ {
			x.Set(j, k+q, w*p.At(j, q))
		}
	}
	return x
}

func weightRoot(col []float64, j int) float64 {
	if col == nil {
		return 1
	}
	return math.Sqrt(math.Max(col[j], 0))
}

// rowsProblem is the profile step's problem for the given rows: the species'
// non-negativity, zero windows and closure as in Resolve, the baseline terms
// free in sign, outside the closure (weight 0) and zero in the anchor rows
// (resolveWithBaseline).
func rowsProblem(g *mat.SymDense, rows []int, k, nb int, opt Options) Problem {
	kk := k + nb
	pr := Problem{G: g, NonNeg: append(boolsOr(opt.NonNegProfiles, k, true), make([]bool, nb)...)}
	if opt.Closure {
		w := opt.ClosureWeights
		if w == nil {
			w = ones(k)
		}
		pr.Equality = append(append([]float64(nil), w[:min(k, len(w))]...), make([]float64, kk-min(k, len(w)))...)
		pr.Total = make([]float64, len(rows))
		for r, i := range rows {
			switch {
			case len(opt.Total) == 0:
				pr.Total[r] = 1
			case len(opt.Total) == 1:
				pr.Total[r] = opt.Total[0]
			case i < len(opt.Total):
				pr.Total[r] = opt.Total[i]
			}
		}
	}
	mask := make([][]bool, kk)
	for a := 0; a < kk; a++ {
		var z []bool
		switch {
		case a < k && a < len(opt.ZeroProfiles):
			z = opt.ZeroProfiles[a]
		case a >= k:
			z = opt.BaselineAnchors
		}
		if z == nil {
			continue
		}
		mask[a] = make([]bool, len(rows))
		for r, i := range rows {
			mask[a][r] = i < len(z) && z[i]
		}
	}
	pr.FixMask, pr.Fixed = mask, mat.NewDense(kk, len(rows), nil)
	return pr
}
