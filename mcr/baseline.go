package mcr

import (
	"fmt"
	"math"

	"github.com/bandsolve/bandsolve/internal/product"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// Baseline as a nuisance (PRIMER §8): D = C Sᵀ + B Pᵀ + E, where the columns of P (m × b)
// are fixed baseline shapes (polynomials 1, x, x², … of the axis, see svd.Legendre) and
// B (n × b) holds each spectrum's baseline coefficients, of either sign. ALS fits B with
// C in the profiles step, so the baseline is estimated jointly with the species and not
// afterwards from a guess of where the bands are not. The baseline terms are excluded
// from closure (weight 0), non-negativity, normalisation and the component count.
//
// The split between a species spectrum's own polynomial part and the baseline is not
// fixed by the fit: s_k + Pβ with B − c_k βᵀ fits the same, and non-negativity only
// stops the spectra from going down, not up. With BaselineAnchors (below) the species
// present in the anchor spectra take their polynomial part from those; in species mode
// each other non-negative spectrum is therefore lowered after every spectra step by its lower polynomial envelope (iterated polynomial fit clipped from above, the "modified polynomial"
// baseline of Lieber & Mahadevan-Jansen, Appl. Spectrosc. 2003) and its remaining
// minimum, so that it touches zero: the common practice of zero absorbance between bands. The
// profiles step that follows refits C and B for the lowered spectra, so the residual
// still never rises. Signed reaction spectra keep the split their start gives.

// With BaselineAnchors the baseline is the drift since the reference state: zero in
// the spectra marked (the first of each experiment), as a drift is a change (PRIMER
// §8: each spectrum gains an offset and a slope). A species present there then has
// its polynomial part fixed by those spectra, which the baseline cannot take, and is
// not lowered; only the species absent there (zero concentration in every anchor)
// are. Lowering a species present at the start had the baseline take what it gave
// up everywhere but where the split was free: on the real urethane series
// (catalyst 0.01, cubic baseline) the isocyanate's spectrum read 0.62 absorbance at
// 4000 cm⁻¹, where the data read 0.003, and its profile started at 0.31.

// resolveWithBaseline runs Resolve with opt.Baseline's columns appended as components
// with fixed spectra and free-sign profiles, then returns the species part in C and S
// and the baseline coefficients in Result.Baseline.
func resolveWithBaseline(d Data, c0 *mat.Dense, opt Options) (*Result, error) {
	if opt.BaselineAnchors == nil || !opt.FreeSplitFirst {
		return resolveWithBaselineFrom(d, c0, nil, opt)
	}
	free := opt
	free.BaselineAnchors = nil
	r0, err := resolveWithBaselineFrom(d, c0, nil, free)
	if err != nil {
		return nil, err
	}
	b0 := anchoredBaseline(r0, opt.BaselineAnchors)
	if b0 == nil {
		return resolveWithBaselineFrom(d, c0, nil, opt)
	}
	return resolveWithBaselineFrom(d, r0.C, b0, opt)
}

// anchoredBaseline is r's baseline coefficients with the anchor rows' made
// zero by the split that leaves the fit as it is: B' = B − C G with S' = S +
// P Gᵀ (C S'ᵀ + B' Pᵀ = C Sᵀ + B Pᵀ), G the least-norm solution of
// C_A G = B_A on the anchor rows A. nil when C_A is singular.
func anchoredBaseline(r *Result, anchors []bool) *mat.Dense {
	var rows []int
	for i, a := range anchors {
		if a {
			rows = append(rows, i)
		}
	}
	_, k := r.C.Dims()
	_, nb := r.Baseline.Dims()
	ca := mat.NewDense(len(rows), k, nil)
	ba := mat.NewDense(len(rows), nb, nil)
	for q, i := range rows {
		ca.SetRow(q, r.C.RawRowView(i)[:k])
		ba.SetRow(q, r.Baseline.RawRowView(i)[:nb])
	}
	var gram, x, g mat.Dense
	gram.Mul(ca, ca.T())
	if err := x.Solve(&gram, ba); err != nil {
		return nil
	}
	g.Mul(ca.T(), &x)
	var cg mat.Dense
	cg.Mul(r.C, &g)
	out := mat.DenseCopyOf(r.Baseline)
	out.Sub(out, &cg)
	for _, i := range rows {
		for q := range nb {
			out.Set(i, q, 0)
		}
	}
	return out
}

// resolveWithBaselineFrom is resolveWithBaseline from profiles c0 and
// baseline coefficients b0 (nil: zero).
func resolveWithBaselineFrom(d Data, c0, b0 *mat.Dense, opt Options) (*Result, error) {
	n, m := d.Dims()
	bm, nb := opt.Baseline.Dims()
	if bm != m {
		return nil, fmt.Errorf("resolve: baseline shapes have %d points, data has %d", bm, m)
	}
	_, k := c0.Dims()
	kk := k + nb
	c := mat.NewDense(n, kk, nil)
	c.Slice(0, n, 0, k).(*mat.Dense).Copy(c0)
	if b0 != nil {
		c.Slice(0, n, k, kk).(*mat.Dense).Copy(b0)
	}

	ext := opt
	ext.Baseline = nil
	ext.baselineTerms = nb
	if opt.Mode == Species {
		ext.baselineBasis = orthonormalColumns(opt.Baseline)
		ext.baselineLanes = envelopeLanes(ext.baselineBasis)
	}
	ext.KnownSpectra = make([][]float64, kk)
	copy(ext.KnownSpectra, opt.KnownSpectra)
	for q := 0; q < nb; q++ {
		ext.KnownSpectra[k+q] = mat.Col(nil, q, opt.Baseline)
	}
	ext.NonNegProfiles = append(boolsOr(opt.NonNegProfiles, k, true), make([]bool, nb)...)
	ext.NonNegSpectra = append(boolsOr(opt.NonNegSpectra, k, opt.Mode == Species), make([]bool, nb)...)
	if opt.Closure {
		w := opt.ClosureWeights
		if w == nil {
			w = ones(k)
		}
		ext.ClosureWeights = append(append([]float64(nil), w[:min(k, len(w))]...), make([]float64, kk-min(k, len(w)))...)
	}
	if opt.ZeroProfiles != nil {
		ext.ZeroProfiles = make([][]bool, kk)
		copy(ext.ZeroProfiles, opt.ZeroProfiles[:min(k, len(opt.ZeroProfiles))])
	}
	if opt.BaselineAnchors != nil {
		ext.presentAtStart = presentAtAnchors(c0, opt.BaselineAnchors)
		if ext.ZeroProfiles == nil {
			ext.ZeroProfiles = make([][]bool, kk)
		}
		for q := 0; q < nb; q++ {
			ext.ZeroProfiles[k+q] = opt.BaselineAnchors
		}
	}
	if opt.ZeroSpectra != nil {
		ext.ZeroSpectra = make([][]bool, kk)
		copy(ext.ZeroSpectra, opt.ZeroSpectra[:min(k, len(opt.ZeroSpectra))])
	}
	if opt.HardModel != nil {
		hard := opt.HardModel
		ext.HardModel = func(cc *mat.Dense) (*mat.Dense, error) {
			hc, err := hard(mat.DenseCopyOf(cc.Slice(0, n, 0, k)))
			if err != nil {
				return nil, err
			}
			out := mat.DenseCopyOf(cc)
			out.Slice(0, n, 0, k).(*mat.Dense).Copy(hc)
			return out, nil
		}
	}
	res, err := Resolve(d, c, ext)
	if err != nil {
		return nil, err
	}
	res.Baseline = mat.DenseCopyOf(res.C.Slice(0, n, k, kk))
	res.C = mat.DenseCopyOf(res.C.Slice(0, n, 0, k))
	res.S = mat.DenseCopyOf(res.S.Slice(0, m, 0, k))
	return res, nil
}

// LessBaseline is Data minus a fitted baseline, D − B Pᵀ, seen through the same
// products: what the constraint checks, feasible bands and kinetics work on once the
// baseline has been fitted jointly with the species. When Data is Weighted (row × column
// weights a_i b_j) the products are the weighted ones of D − B Pᵀ, and LessBaseline is
// Weighted with the same weights; otherwise Weights returns nil, nil (unweighted).
type LessBaseline struct {
	Data
	B *mat.Dense // n × b baseline coefficients
	P *mat.Dense // m × b baseline shapes
}

// Weights returns the weights of the underlying data (nil, nil when unweighted).
func (l LessBaseline) Weights() (row, col []float64) { return weightsOf(l.Data) }

// MulSpectra returns (D − B Pᵀ) W_col S = D W_col S − B (Pᵀ W_col S), W_col = diag(b)
// (the identity without weights).
func (l LessBaseline) MulSpectra(s *mat.Dense) *mat.Dense {
	out := l.Data.MulSpectra(s)
	_, col := l.Weights()
	var ps, bps mat.Dense
	ps.Mul(l.P.T(), scaleRowsOrSame(s, col))
	bps.Mul(l.B, &ps)
	out.Sub(out, &bps)
	return out
}

// MulProfiles returns (D − B Pᵀ)ᵀ W_row C = Dᵀ W_row C − P (Bᵀ W_row C), W_row = diag(a).
func (l LessBaseline) MulProfiles(c *mat.Dense) *mat.Dense {
	out := l.Data.MulProfiles(c)
	row, _ := l.Weights()
	var bc, pbc mat.Dense
	bc.Mul(l.B.T(), scaleRowsOrSame(c, row))
	pbc.Mul(l.P, &bc)
	out.Sub(out, &pbc)
	return out
}

// FrobeniusSq returns ‖D − B Pᵀ‖² = ‖D‖² − 2 tr(Bᵀ W_row D W_col P) + tr(Bᵀ W_row B ·
// Pᵀ W_col P), weighted as the data are.
func (l LessBaseline) FrobeniusSq() float64 {
	row, col := l.Weights()
	dp := l.Data.MulSpectra(l.P) // D W_col P
	v := l.Data.FrobeniusSq() - 2*traceProd(l.B, scaleRowsOrSame(dp, row)) + traceProd(gramW(l.B, row), gramW(l.P, col))
	if v < 0 {
		return 0
	}
	return v
}

// SubtractBaseline returns D − B Pᵀ as a new matrix.
func SubtractBaseline(d, b, p *mat.Dense) *mat.Dense {
	var bp mat.Dense
	bp.Mul(b, p.T())
	out := mat.DenseCopyOf(d)
	out.Sub(out, &bp)
	return out
}

// lowerSpectra lowers columns j < k of s (m × K) with a non-negative spectrum onto zero
// by their lower polynomial envelope in the span of q (m × b, orthonormal columns) and
// their remaining minimum. See the comment at the top of the file. (The exact highest
// line under a spectrum, from its lower convex hull, was tried: on the two-species drift
// test it left a spectrum at cosine 0.85 where the envelope gives 0.999.)
//
// The spectra are lowered on up to GOMAXPROCS workers, one spectrum each at a
// time, each into a column of its own; the columns go back into s once all
// are lowered, so the result is the same whatever the number of workers. (s
// is row-major with a few columns: workers writing their columns into it
// at the same time shared every cache line, and the write took three times
// as long as the read.)
//
// qt is envelopeLanes(q), which the caller forms once for all the
// iterations (shared by the spectra, read only).
func lowerSpectra(s *mat.Dense, k int, nonneg []bool, q *mat.Dense, qt []float64) {
	m, _ := s.Dims()
	_, b := q.Dims()
	lowered := make([][]float64, k)
	product.InBlocks(k, k*m*b*200, 1, func(j0, j1 int) {
		for j := j0; j < j1; j++ {
			if !nonneg[j] {
				continue
			}
			y := mat.Col(nil, j, s)
			fit := lowerEnvelopeWith(y, q, qt)
			low := math.Inf(1)
			for i := 0; i < m; i++ {
				low = math.Min(low, y[i]-fit[i])
			}
			for i := range y {
				y[i] -= fit[i] + low
			}
			lowered[j] = y
		}
	})
	for j, y := range lowered {
		if y != nil {
			s.SetCol(j, y)
		}
	}
}

// lowerEnvelope is the iterated polynomial fit clipped from above (Lieber &
// Mahadevan-Jansen 2003) in the span of q.
func lowerEnvelope(orig []float64, q *mat.Dense) []float64 {
	return lowerEnvelopeWith(orig, q, envelopeLanes(q))
}

// lowerEnvelopeWith is lowerEnvelope with q's blocks for envelopePass4
// (envelopeLanes: nil when there are no lanes to use).
func lowerEnvelopeWith(orig []float64, q *mat.Dense, qt []float64) []float64 {
	m := len(orig)
	_, b := q.Dims()
	// One pass over the rows per iteration: the fit at row i, the clip, and
	// row i's term of the next iteration's coefficients (which needs only
	// the clipped y_i). Every sum runs in the same order as two separate
	// passes would (bit-identical results), rows are read from q's raw
	// storage instead of through At, and the data are read once instead of
	// twice: this loop runs for every spectrum in every ALS iteration with a
	// baseline, up to 200 times each.
	raw := q.RawMatrix()
	if b == 4 && raw.Stride == 4 {
		return lowerEnvelope4(orig, raw.Data[:4*m], qt)
	}
	return lowerEnvelopeAny(orig, raw, b)
}

// lowerEnvelopeAny is lowerEnvelope for any number b of basis columns.
func lowerEnvelopeAny(orig []float64, raw blas64.General, b int) []float64 {
	m := len(orig)
	y := append([]float64(nil), orig...)
	fit := make([]float64, m)
	coef := make([]float64, b)
	next := make([]float64, b)
	for i := 0; i < m; i++ {
		row := raw.Data[i*raw.Stride : i*raw.Stride+b]
		for a, v := range row {
			coef[a] += v * y[i]
		}
	}
	for it := 0; it < 200; it++ {
		for a := range next {
			next[a] = 0
		}
		changed := false
		for i := 0; i < m; i++ {
			row := raw.Data[i*raw.Stride : i*raw.Stride+b]
			v := 0.0
			for a, qa := range row {
				v += qa * coef[a]
			}
			fit[i] = v
			if v < y[i] {
				y[i] = v
				changed = true
			}
			yi := y[i]
			for a, qa := range row {
				next[a] += qa * yi
			}
		}
		if !changed {
			break
		}
		coef, next = next, coef
	}
	return fit
}

// lowerEnvelope4 is lowerEnvelope for a cubic basis (b = 4, the highest order
// --baseline auto tries), q holding its rows back to back. The coefficients are
// kept in registers instead of slices; every sum runs in the same order as in
// lowerEnvelope, so the results are bit-identical. On the 58 × 6950 ATR series
// this loop was two thirds of the resolve's CPU time, and every call runs all
// 200 iterations (741 of 754 in one run; the clipping goes on moving the fit):
// with qt (envelopeLanes) the points go four at a time through envelopePass4,
// the same sums in the same order, and the last m mod 4 here.
func lowerEnvelope4(orig, q, qt []float64) []float64 {
	m := len(orig)
	y := append([]float64(nil), orig...)
	fit := make([]float64, m)
	var c [4]float64
	for i, yi := range y {
		r := q[4*i : 4*i+4 : 4*i+4]
		c[0] += r[0] * yi
		c[1] += r[1] * yi
		c[2] += r[2] * yi
		c[3] += r[3] * yi
	}
	blocks := 0
	if len(qt) == 4*(m&^3) && m >= 4 {
		blocks = m / 4
	}
	for it := 0; it < 200; it++ {
		var n [4]float64
		changed := false
		if blocks > 0 {
			changed = envelopePass4(&y[0], &fit[0], &qt[0], &q[0], blocks, &c, &n)
		}
		c0, c1, c2, c3 := c[0], c[1], c[2], c[3]
		n0, n1, n2, n3 := n[0], n[1], n[2], n[3]
		for i := 4 * blocks; i < m; i++ {
			r := q[4*i : 4*i+4 : 4*i+4]
			v := 0.0
			v += r[0] * c0
			v += r[1] * c1
			v += r[2] * c2
			v += r[3] * c3
			fit[i] = v
			yi := y[i]
			if v < yi {
				yi = v
				y[i] = v
				changed = true
			}
			n0 += r[0] * yi
			n1 += r[1] * yi
			n2 += r[2] * yi
			n3 += r[3] * yi
		}
		if !changed {
			break
		}
		c = [4]float64{n0, n1, n2, n3}
	}
	return fit
}

// envelopeLanes is q (m × 4, rows back to back) in the blocks envelopePass4
// reads: for each four points, their q_0, then q_1, q_2, q_3 (16 values);
// nil when there are no vector lanes (haveEnvelopeLanes), q is not a cubic
// basis or has fewer than four points.
func envelopeLanes(q *mat.Dense) []float64 {
	m, b := q.Dims()
	raw := q.RawMatrix()
	if !haveEnvelopeLanes || b != 4 || raw.Stride != 4 || m < 4 {
		return nil
	}
	qt := make([]float64, 4*(m&^3))
	for i := 0; i < m&^3; i++ {
		blk, lane := i/4, i%4
		for a := 0; a < 4; a++ {
			qt[16*blk+4*a+lane] = raw.Data[4*i+a]
		}
	}
	return qt
}

// orthonormalColumns returns an orthonormal basis of a's columns (modified Gram–Schmidt,
// two passes; a has few columns).
func orthonormalColumns(a *mat.Dense) *mat.Dense {
	m, c := a.Dims()
	out := mat.NewDense(m, c, nil)
	for j := 0; j < c; j++ {
		v := mat.Col(nil, j, a)
		for pass := 0; pass < 2; pass++ {
			for k := 0; k < j; k++ {
				p := 0.0
				for i := 0; i < m; i++ {
					p += out.At(i, k) * v[i]
				}
				for i := range v {
					v[i] -= p * out.At(i, k)
				}
			}
		}
		nv := 0.0
		for _, x := range v {
			nv += x * x
		}
		if nv > 0 {
			nv = 1 / math.Sqrt(nv)
			for i := range v {
				v[i] *= nv
			}
		}
		out.SetCol(j, v)
	}
	return out
}

// SplitSpread measures how much of a baseline the species spectra of a baseline fit
// still hold: Σ_k ‖s_k‖₁/‖s_k‖₂ over the columns of s, a scale-free measure that is
// smallest for spectra at zero between their bands and grows when a spectrum carries an
// offset or a slope (the ratio of the norms as a sparseness measure: Hoyer, J. Mach.
// Learn. Res. 2004). With a free baseline per spectrum, fits that differ only in where
// the split between species and baseline falls (a species spectrum lifted by a
// polynomial and mixed with another, its profile and the baseline compensating) reach
// the same residual; between such fits the smaller spread is the split that zero
// absorbance between bands, the premise of the split (see the top of this file), asks
// for.
func SplitSpread(s *mat.Dense) float64 {
	m, k := s.Dims()
	total := 0.0
	for j := 0; j < k; j++ {
		var l1, l2 float64
		for i := 0; i < m; i++ {
			v := s.At(i, j)
			l1 += math.Abs(v)
			l2 += v * v
		}
		if l2 > 0 {
			total += l1 / math.Sqrt(l2)
		}
	}
	return total
}
