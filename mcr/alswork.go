package mcr

import (
	"math"
	"slices"

	"github.com/bandsolve/bandsolve/internal/product"
	"gonum.org/v1/gonum/mat"
)

// alsWork holds the matrices ALS's half steps form and drop in every
// iteration, kept from one iteration to the next: on a truncated SVD, √A C
// and √B S, the r × k inner products, Dᵀ A C and D B S. Formed anew they
// were about ten data-sized allocations an iteration (n × k or m × k, 1 MB
// at 2000 × 3001 with five components), each cleared before use, and the
// scaled factor √A C was formed twice, once for CᵀAC and once inside the
// product (docs/performance-history.md). What the buffers hold is used within the
// iteration only: the profiles and spectra ALS keeps are never among them.
// It also holds the data's weights, the run's only copy of them, so that
// the half steps and the residual cannot be handed different ones.
type alsWork struct {
	svd     Compressed // the truncated SVD behind the data (U nil: other data)
	yc, ys  *mat.Dense // √A C (n × k), √B S (m × k)
	rc, rs  *mat.Dense // Uᵀ √A C, Vᵀ √B S (r × k)
	dtc, ds *mat.Dense // Dᵀ A C (m × k), D B S (n × k)
	ce      *mat.Dense // the extrapolated profiles (n × k), for any data
	// cOut and sOut take the profiles and spectra the half steps solve
	// for, for any data, when recycle is set: fresh, they were two more
	// data-sized allocations an iteration, each page faulted in as the
	// solver wrote it. Two of each are enough: the new ones, and those the
	// iteration started from (kept in case it is undone). The last kept
	// iteration's start, C_prev, needs no third: the extrapolation reads
	// it before the half steps, and every iteration that goes on then
	// replaces it (by its own start if kept, by nil if undone), so its
	// buffer is free by the profiles step.
	cOut    [2]*mat.Dense
	sOut    [2]*mat.Dense
	recycle bool
	// rowW, colW: the data's row × column weights a and b (Weighted
	// data), else nil: the Gram matrices become CᵀAC and SᵀBS, the
	// right-hand sides Dᵀ A C and D B S.
	rowW, colW []float64
}

// newALSWork returns the buffers for resolving d with k components; only
// truncated SVDs (the default run's data) take them.
func newALSWork(d Data, k int) alsWork {
	var w alsWork
	w.rowW, w.colW = weightsOf(d)
	switch c := d.(type) {
	case Compressed:
		w.svd = c
	case WeightedCompressed:
		w.svd = Compressed{U: c.U, Sigma: c.Sigma, V: c.V}
	default:
		return w
	}
	n, r := w.svd.U.Dims()
	m, _ := w.svd.V.Dims()
	w.rc, w.rs = mat.NewDense(r, k, nil), mat.NewDense(r, k, nil)
	w.dtc, w.ds = mat.NewDense(m, k, nil), mat.NewDense(n, k, nil)
	if w.rowW != nil {
		w.yc, w.ys = mat.NewDense(n, k, nil), mat.NewDense(m, k, nil)
	}
	return w
}

// profilesProducts returns CᵀAC and Dᵀ A C (m × k), the spectra step's
// Gram matrix and right-hand sides, the same values as gramW and
// d.MulProfiles; the product is w's until the next call.
func (w *alsWork) profilesProducts(d Data, c *mat.Dense) (*mat.SymDense, *mat.Dense) {
	if w.svd.U == nil {
		return gramW(c, w.rowW), d.MulProfiles(c)
	}
	return w.sideProducts(c, w.yc, w.rowW, w.colW, w.svd.U, w.svd.V, w.rc, w.dtc)
}

// spectraProducts returns SᵀBS and D B S (n × k), the profiles step's Gram
// matrix and right-hand sides, the same values as gramW and d.MulSpectra;
// the product is w's until the next call.
func (w *alsWork) spectraProducts(d Data, s *mat.Dense) (*mat.SymDense, *mat.Dense) {
	if w.svd.U == nil {
		return gramW(s, w.colW), d.MulSpectra(s)
	}
	return w.sideProducts(s, w.ys, w.colW, w.rowW, w.svd.V, w.svd.U, w.rs, w.ds)
}

// sideProducts is one half step's products on the truncated SVD, written
// once for both sides (the spectra's swaps the roles of U and V and of the
// row and column weights): the Gram matrix of y = diag(near)^½ x (formed
// in buf), and diag(far)^−½ away Σ towardᵀ y in out, through inner (r × k).
func (w *alsWork) sideProducts(x, buf *mat.Dense, near, far []float64, toward, away, inner, out *mat.Dense) (*mat.SymDense, *mat.Dense) {
	y := x
	if near != nil {
		y = scaleRowsTo(buf, x, near, 0.5)
	}
	g := gram(y)
	product.MulTTo(inner, toward, y)
	scaleRowsBy(inner, w.svd.Sigma)
	product.MulTo(out, away, inner)
	if far != nil {
		scaleRowsTo(out, out, far, -0.5)
	}
	return g, out
}

// profilesGram is CᵀAC, gramW(c, a), for profiles c (n × k), with √A C
// formed in w's buffer on a weighted truncated SVD.
func (w *alsWork) profilesGram(c *mat.Dense) *mat.SymDense {
	if w.yc == nil {
		return gramW(c, w.rowW)
	}
	return gram(scaleRowsTo(w.yc, c, w.rowW, 0.5))
}

// residualSS is residualSS(d, c, s, total, fallback) with the scaled
// factors, their thin QR factors and the product Dᵀ A Q_c formed in w's
// buffers when the data are a weighted truncated SVD: the same operations
// in the same order, each scaling done in place where residualSS made a
// new matrix. It runs at the end of every resolution and refit.
func (w *alsWork) residualSS(d Data, c, s *mat.Dense, total, fallback float64) float64 {
	if w.svd.U == nil || w.rowW == nil {
		return residualSS(d, c, s, total, fallback)
	}
	for _, ws := range [][]float64{w.rowW, w.colW} {
		for _, v := range ws {
			if !(v > 0) {
				return math.Max(fallback, 0)
			}
		}
	}
	qc, qs := scaleRowsTo(w.yc, c, w.rowW, 0.5), scaleRowsTo(w.ys, s, w.colW, 0.5)
	rc, rs := thinQRInPlace(qc), thinQRInPlace(qs)
	var mm mat.Dense
	mm.Mul(rc, rs.T())
	// d.MulProfiles(A^{-1/2} Q_c) = B^{-1/2} V Σ Uᵀ A^{1/2} (A^{-1/2} Q_c),
	// then √B times it, as residualSS forms them.
	scaleRowsTo(qc, qc, w.rowW, -0.5)
	scaleRowsTo(qc, qc, w.rowW, 0.5)
	product.MulTTo(w.rc, w.svd.U, qc)
	scaleRowsBy(w.rc, w.svd.Sigma)
	product.MulTo(w.dtc, w.svd.V, w.rc)
	scaleRowsTo(w.dtc, w.dtc, w.colW, -0.5)
	dq := scaleRowsTo(w.dtc, w.dtc, w.colW, 0.5)
	var p mat.Dense
	p.Mul(qs.T(), dq) // k × k: (Q_cᵀ D Q_s)ᵀ, weighted
	ssr := total - 2*traceProd(p.T(), &mm) + frobSq(&mm)
	return math.Max(ssr, 0)
}

// output returns an r × k matrix from bufs that is none of busy, for a half
// step's answer, or nil (a new one) when the run does not recycle.
func (w *alsWork) output(bufs []*mat.Dense, r, k int, busy ...*mat.Dense) *mat.Dense {
	if !w.recycle {
		return nil
	}
	for i, b := range bufs {
		if b == nil {
			bufs[i] = mat.NewDense(r, k, nil)
			return bufs[i]
		}
		if !slices.Contains(busy, b) {
			return b
		}
	}
	return nil
}

// scaleRowsTo writes diag(w)^p x into out (the same shape; out may be x)
// and returns it: the values of scaleRows.
func scaleRowsTo(out, x *mat.Dense, w []float64, p float64) *mat.Dense {
	r, k := x.Dims()
	for i := 0; i < r; i++ {
		f := w[i]
		switch p {
		case 0.5:
			f = math.Sqrt(f)
		case -0.5:
			f = 1 / math.Sqrt(f)
		}
		src, dst := x.RawRowView(i), out.RawRowView(i)
		for j, v := range src[:k] {
			dst[j] = f * v
		}
	}
	return out
}

// traceScaled returns tr(Cᵀ diag(w) X) = Σ (w_i c_ij) x_ij, each product
// w_i c_ij rounded first and the terms added row by row: the value of
// traceProd(scaleRowsOrSame(c, w), x) without the scaled copy (w nil: ones).
func traceScaled(c *mat.Dense, w []float64, x *mat.Dense) float64 {
	r, k := c.Dims()
	s := 0.0
	for i := 0; i < r; i++ {
		crow, xrow := c.RawRowView(i)[:k], x.RawRowView(i)[:k]
		if w == nil {
			for j, v := range crow {
				s += v * xrow[j]
			}
			continue
		}
		f := w[i]
		for j, v := range crow {
			s += (f * v) * xrow[j]
		}
	}
	return s
}
