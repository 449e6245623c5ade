package mcr

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// asideFigure holds the rows Options.AsideRows names as the data hold them,
// with their weights, so that the lack of fit a resolution reports can
// leave them out. Those rows are the caller's fill of spectra set aside
// (the model's own values from an earlier fit): counted, they add next to
// nothing to the residual and their whole share to ‖D‖², and the figure
// reads low. The lack of fit is a figure of the data (100 ‖D − C Sᵀ‖/‖D‖
// over the points measured, the definition of multivariate curve
// resolution), so it is taken over the rows kept.
type asideFigure struct {
	rows  []int
	d     *mat.Dense // len(rows) × m: the rows' values in the data
	a     []float64  // each row's weight a_i (1 unweighted)
	col   []float64  // b_j, nil unweighted
	total float64    // Σ a_i b_j d_ij² over the rows
}

// newAsideFigure forms the figure's rows of d (ascending), nil when rows
// is empty or out of d's range, or d is of a kind whose rows cannot be read
// back (the figure then stays over every row).
func newAsideFigure(d Data, rows []int) *asideFigure {
	n, _ := d.Dims()
	if len(rows) == 0 || rows[0] < 0 || rows[len(rows)-1] >= n {
		return nil // not rows of this data
	}
	vals := dataRows(d, rows)
	if vals == nil {
		return nil
	}
	row, col := weightsOf(d)
	f := &asideFigure{rows: rows, d: vals, a: make([]float64, len(rows)), col: col}
	for q, i := range rows {
		f.a[q] = 1
		if row != nil {
			f.a[q] = row[i]
		}
		f.total += f.a[q] * weightedSquares(vals.RawRowView(q), nil, col)
	}
	return f
}

// residual is Σ a_i b_j (d_ij − c_i·s_j)² over the rows: computed directly,
// a few rows, where the trace identity's terms would cancel (these rows are
// the model's own values).
func (f *asideFigure) residual(c, s *mat.Dense) float64 {
	m, k := s.Dims()
	model := make([]float64, m)
	sum := 0.0
	for q, i := range f.rows {
		ci := c.RawRowView(i)[:k]
		for j := range model {
			v := 0.0
			for l, x := range s.RawRowView(j)[:k] {
				v += ci[l] * x
			}
			model[j] = v
		}
		sum += f.a[q] * weightedSquares(f.d.RawRowView(q), model, f.col)
	}
	return sum
}

// weightedSquares is Σ_j b_j (x_j − y_j)² (y nil: zero; b nil: one).
func weightedSquares(x, y, b []float64) float64 {
	s := 0.0
	for j, v := range x {
		if y != nil {
			v -= y[j]
		}
		if b != nil {
			s += b[j] * v * v
		} else {
			s += v * v
		}
	}
	return s
}

// keptShare is ‖E‖²/‖D‖² over the rows kept, of a fit whose residual over
// every row is ssr (of data whose ‖D‖² is r.total), with the iterate
// r.c, r.s; the whole matrix's ratio without rows set aside.
func (r *alsRun) keptShare(ssr float64) float64 {
	f := r.aside
	if f == nil || !(r.total-f.total > 0) {
		return ssr / r.total
	}
	return math.Max(ssr-f.residual(r.c, r.s), 0) / (r.total - f.total)
}

// dataRows copies rows of d as values of the data (weights not applied),
// nil for a kind of Data it does not know.
func dataRows(d Data, rows []int) *mat.Dense {
	_, m := d.Dims()
	out := mat.NewDense(len(rows), m, nil)
	switch v := d.(type) {
	case Dense:
		for q, i := range rows {
			copy(out.RawRowView(q), v.D.RawRowView(i)[:m])
		}
	case WeightedDense:
		for q, i := range rows {
			copy(out.RawRowView(q), v.D.RawRowView(i)[:m])
		}
	case Compressed:
		compressedRows(out, v.U, v.Sigma, v.V, rows)
	case WeightedCompressed:
		// The compressed form factors √A D √B: back to D.
		compressedRows(out, v.U, v.Sigma, v.V, rows)
		for q, i := range rows {
			for j, x := range out.RawRowView(q) {
				out.Set(q, j, x/math.Sqrt(v.Row[i]*v.Col[j]))
			}
		}
	case LessBaseline:
		inner := dataRows(v.Data, rows)
		if inner == nil {
			return nil
		}
		_, nb := v.P.Dims()
		for q, i := range rows {
			dst := inner.RawRowView(q)
			for j := range dst {
				for l := 0; l < nb; l++ {
					dst[j] -= v.B.At(i, l) * v.P.At(j, l)
				}
			}
		}
		return inner
	default:
		return nil
	}
	return out
}

// compressedRows writes rows of U diag(Σ) Vᵀ into out.
func compressedRows(out, u *mat.Dense, sigma []float64, v *mat.Dense, rows []int) {
	m, rr := v.Dims()
	for q, i := range rows {
		ui := u.RawRowView(i)[:rr]
		dst := out.RawRowView(q)
		for j := 0; j < m; j++ {
			x := 0.0
			for l, vl := range v.RawRowView(j)[:rr] {
				x += ui[l] * sigma[l] * vl
			}
			dst[j] = x
		}
	}
}
