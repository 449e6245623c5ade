package kinetics

import (
	"errors"
	"fmt"
	"math"

	"github.com/bandsolve/bandsolve/internal/product"
	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
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
	if s == nil || d == nil {
		return 0, errors.New("kinetics: non-negative cost: missing scheme or data")
	}
	n, m := d.Dims()
	p, err := newFitProblem(s, times, opt, n)
	if err != nil {
		return 0, fmt.Errorf("kinetics: non-negative cost: %w", err)
	}
	if err := checkWeights(opt.RowWeights, n, "row"); err != nil {
		return 0, fmt.Errorf("kinetics: non-negative cost: %w", err)
	}
	if err := checkWeights(opt.ColWeights, m, "column"); err != nil {
		return 0, fmt.Errorf("kinetics: non-negative cost: %w", err)
	}
	c0 := p.c00
	sim, err := s.SimulateWith(k, c0, times, opt.T0, p.opt.Sim)
	if err != nil {
		return 0, fmt.Errorf("kinetics: non-negative cost: %w", err)
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
	var cost float64
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
		for a := 0; a < q; a++ {
			b[a] = f * dq.At(j, a)
		}
		x, err := ws.Solve(&r, b)
		if err != nil {
			return 0, fmt.Errorf("kinetics: non-negative cost: column %d: %w", j+1, err)
		}
		for a := 0; a < q; a++ {
			var v float64
			for l := 0; l < q; l++ {
				v += r.At(a, l) * x[l]
			}
			e := v - b[a]
			cost += e * e
		}
	}
	return cost, nil
}
