package svd

import (
	"errors"
	"fmt"
	"math"

	few "github.com/bandsolve/bandsolve/internal/product" // few columns: D Q of the baseline basis
	"github.com/bandsolve/bandsolve/internal/pvalue"
	"gonum.org/v1/gonum/mat"
)

// Baseline drift of a spectrometer (an ATR crystal warming, a lamp ageing, a cell
// shifting) adds to each spectrum a smooth curve b_i(x) ≈ Σ_q β_iq P_q(x): in the bilinear
// model D = C Sᵀ + B Pᵀ, extra factors whose spectra are the columns of P and whose
// profiles B have either sign (PRIMER §8; common practice in FTIR to model baselines by
// low-order polynomials). P_q are Legendre polynomials of the axis scaled to [−1, 1], which
// are nearly orthogonal on an evenly spaced axis and keep the least-squares problem well
// conditioned where plain powers 1, x, x², … are not.

// Legendre returns the m × (order+1) matrix whose column q is the Legendre polynomial
// P_q evaluated on the axis scaled linearly to [−1, 1] (three-term recurrence
// (q+1) P_{q+1} = (2q+1) x P_q − q P_{q−1}; Abramowitz & Stegun 22.7.10). order < 0 gives
// nil.
func Legendre(axis []float64, order int) *mat.Dense {
	m := len(axis)
	if order < 0 || m == 0 {
		return nil
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, a := range axis {
		lo, hi = math.Min(lo, a), math.Max(hi, a)
	}
	p := mat.NewDense(m, order+1, nil)
	for j, a := range axis {
		x := 0.0
		if hi > lo {
			x = 2*(a-lo)/(hi-lo) - 1
		}
		p0, p1 := 1.0, x
		p.Set(j, 0, 1)
		if order >= 1 {
			p.Set(j, 1, x)
		}
		for q := 1; q < order; q++ {
			p2 := (float64(2*q+1)*x*p1 - float64(q)*p0) / float64(q+1)
			p.Set(j, q+1, p2)
			p0, p1 = p1, p2
		}
	}
	return p
}

// PolyBasis returns an orthonormal basis (m × (order+1)) of span(√B X), X the Legendre
// polynomials up to order on the axis and B = diag(col) the column noise weights (nil:
// B = I). The projector I − Q Qᵀ onto its complement, applied to a row of the scaled
// matrix √a_i d_i √B, leaves √a_i (d_i − X β_i)√B with β_i the weighted least-squares
// fit of the polynomial to d_i with weights b_j (normal equations XᵀBX β = XᵀB d_i;
// Draper & Smith, Applied Regression Analysis, 3rd ed. 1998, §9): the baseline is
// removed in the metric the noise weights define, and the scaled matrix keeps white
// noise of unit variance on the remaining m − order − 1 dimensions. The QR is nested:
// the first q+1 columns are the basis of order q.
func PolyBasis(axis []float64, order int, col []float64) *mat.Dense {
	p := Legendre(axis, order)
	if p == nil {
		return nil
	}
	if col != nil {
		m, c := p.Dims()
		for j := 0; j < m; j++ {
			sb := math.Sqrt(col[j])
			for q := 0; q < c; q++ {
				p.Set(j, q, p.At(j, q)*sb)
			}
		}
	}
	orthonormalize(p)
	return p
}

// RemovePolynomialWeighted returns d (I − Q Qᵀ), Q = PolyBasis(axis, order, col), for d
// the noise-scaled matrix √A D √B with column weights col (col nil: d is D, unweighted):
// every polynomial of the axis up to order is projected out of each spectrum, its
// baseline fitted by weighted least squares (see PolyBasis). Whatever the baseline
// profiles, a polynomial baseline of that order is gone, and the rank of what remains
// counts the other factors. order < 0 returns d itself.
func RemovePolynomialWeighted(d *mat.Dense, axis []float64, order int, col []float64) (*mat.Dense, error) {
	if order < 0 {
		return d, nil
	}
	_, m := d.Dims()
	if len(axis) != m || (col != nil && len(col) != m) {
		return nil, fmt.Errorf("svd: remove polynomial: axis has %d points, weights %d, data %d", len(axis), len(col), m)
	}
	if order+1 >= m {
		return nil, fmt.Errorf("svd: remove polynomial: order %d needs more than %d points", order, m)
	}
	q := PolyBasis(axis, order, col)
	var dq, out mat.Dense
	dq.Mul(d, q)
	out.Mul(&dq, q.T())
	out.Sub(d, &out)
	return &out, nil
}

// BaselineStep is one step of the choice of baseline order: the residual sum of squares
// of the best fit with K factors plus a polynomial baseline of Order (−1 = none), and the
// F-test of that order against the one below.
type BaselineStep struct {
	Order        int
	ResidualSS   float64
	F            float64 // 0 for order −1
	Significance float64 // upper-tail probability of F; 1 for order −1
	// Orders is how many orders the test added at once: 1, or 2 for the
	// look-ahead's joint test of an order that was not significant alone
	// and the next (forwardSelect).
	Orders int
}

// BaselineChoice is the outcome of ChooseBaselineOrder.
type BaselineChoice struct {
	Order int // chosen order, −1 = no baseline
	Steps []BaselineStep
	// Noise is the residual's correlation along the axis; the tests counted its
	// m points as Noise.Effective independent ones.
	Noise AxisNoise
}

// ChooseBaselineOrder picks the polynomial baseline order by the extra-sum-of-squares
// F-test for nested linear models (Draper & Smith, Applied Regression Analysis, 3rd ed.
// 1998, §6; from memory): with RSS_q the residual of the best fit of k factors plus a
// baseline of order q (the rank-k tail of D with polynomials up to q projected out), going
// from order q−1 to q adds one coefficient per spectrum (n), and
//
//	F = [(RSS_{q−1} − RSS_q)/n] / [RSS_q/dof_q],  dof_q = n(m'−q−1) − k(n + m' − q − 1 − k),
//
// is F(n, dof_q) distributed when order q is not needed. m' = m/τ is the effective
// number of independent points of noise correlated along the axis (AxisCorrelation, on
// the residual of the fullest model: k factors and order maxOrder), m itself for white
// noise: a polynomial is smooth, so each of its coefficients takes noise of variance
// τσ² from a spectrum, as do the k factors' coefficients per spectrum, while the
// denominator's residual keeps about σ² a point; in units of τσ², m' is the count that
// makes both sides of F right. Counting correlated points as independent made every
// order "significant" (p < 10⁻⁵⁰ on noise smoothed over 2 points). Orders are added forward while
// they are significant at level alpha; the first that is not ends the search, and the
// chosen order is the one below it. f, when given, holds
// leading factors of d (at least k + maxOrder + 2 of them, else d is decomposed here): the
// rank-k fits are then taken inside their span, exact when the baseline and the chemistry
// lie in it, which is when the baseline matters.
func ChooseBaselineOrder(d *mat.Dense, f *Factors, axis []float64, k, maxOrder int, alpha float64) (*BaselineChoice, error) {
	return ChooseBaselineOrderWeighted(d, f, axis, nil, k, maxOrder, alpha)
}

// ChooseBaselineOrderWeighted is ChooseBaselineOrder on the noise-scaled matrix
// d = √A D √B with column weights col (nil: unweighted; f then holds factors of d): each
// order's baseline is fitted by weighted least squares (PolyBasis), so the residual sums
// are χ² in units of the noise. The polynomial parts of every order come from one
// product D Q_max, since the nested basis of order q is the first q+1 columns of
// that of maxOrder.
func ChooseBaselineOrderWeighted(d *mat.Dense, f *Factors, axis, col []float64, k, maxOrder int, alpha float64) (*BaselineChoice, error) {
	return ChooseBaselineOrderFrom(d, nil, f, axis, col, k, maxOrder, alpha)
}

// ChooseBaselineOrderFrom is ChooseBaselineOrderWeighted given dq, the product of d and
// PolyBasis(axis, maxOrder, col) as internal/product's Mul forms it (nil: formed here),
// which a caller that has projected that basis out of d already holds: the choice then
// makes no pass over d.
func ChooseBaselineOrderFrom(d, dq *mat.Dense, f *Factors, axis, col []float64, k, maxOrder int, alpha float64) (*BaselineChoice, error) {
	return ChooseBaselineOrderBasis(d, dq, nil, f, axis, col, k, maxOrder, alpha)
}

// ChooseBaselineOrderBasis is ChooseBaselineOrderFrom with the basis at hand as
// well: basis, when not nil, is PolyBasis(axis, maxOrder, col) as the caller
// formed it (the same call, so the same matrix), and is not formed again.
func ChooseBaselineOrderBasis(d, dq, basis *mat.Dense, f *Factors, axis, col []float64, k, maxOrder int, alpha float64) (*BaselineChoice, error) {
	return chooseOrder(d, dq, basis, f, axis, col, 0, k, maxOrder, alpha)
}

// chooseOrder runs the order test on d, with partial points of it blind
// in channels measured elsewhere (taken off the residual degrees of
// freedom; see ChooseBaselineOrderObserved).
func chooseOrder(d, dq, basis *mat.Dense, f *Factors, axis, col []float64, partial, k, maxOrder int, alpha float64) (*BaselineChoice, error) {
	n, m := d.Dims()
	if err := checkBaselineTest(n, m, len(axis), col, k, maxOrder, alpha); err != nil {
		return nil, err
	}
	f, err := leadingFactors(d, f, min(k+maxOrder+2+4, n, m))
	if err != nil {
		return nil, err
	}
	fits, err := newBaselineFits(d, dq, basis, f, axis, col, k, maxOrder)
	if err != nil {
		return nil, err
	}
	fits.missing = partial
	fits.noise = fits.residualNoise(d)
	ch := fits.forwardSelect(maxOrder, alpha)
	ch.Noise = fits.noise
	return ch, nil
}

// ChooseBaselineOrderObserved is ChooseBaselineOrderBasis when some points of d
// were not measured (missing[i]: the blind columns of row i, ascending; nil or
// empty: none, and the result is ChooseBaselineOrderBasis's, bit for bit). The
// test is the one on the measured points alone (Draper & Smith 1998, §6: the
// residual sums and their degrees of freedom count observations, and a missing
// one is none):
//
//   - a channel blind in every spectrum says nothing of any baseline: it is left
//     out of the test (its column of d and its row of the polynomial basis, which
//     is orthonormalised again over the channels kept; dq, basis and f are then
//     formed here);
//   - a blind point of a channel measured elsewhere holds the low-rank model's
//     value (ImputeMissing: the rank-k fit to the measured points), which every
//     rank-k fit leaves as it is: it adds nothing to the residual sums and is
//     taken off the residual degrees of freedom (one point each, m/τ'ths of one
//     with noise correlated along the axis).
//
// Counting them as measured made the residual variance too small by the share
// of blind points (19 % of the points in a series clipped at a detector
// ceiling): a slope was found where the data had none (p = 0.0078).
func ChooseBaselineOrderObserved(d, dq, basis *mat.Dense, f *Factors, axis, col []float64, missing [][]int, k, maxOrder int, alpha float64) (*BaselineChoice, error) {
	n, m := d.Dims()
	lit, partial := observedChannels(missing, n, m)
	if lit == nil {
		return ChooseBaselineOrderBasis(d, dq, basis, f, axis, col, k, maxOrder, alpha)
	}
	if len(lit) < m {
		d, axis, col = litColumns(d, axis, col, lit)
		dq, basis, f = nil, nil, nil
	}
	return chooseOrder(d, dq, basis, f, axis, col, partial, k, maxOrder, alpha)
}

// observedChannels returns the channels measured in at least one row, and the
// blind points within them; nil, 0 when no point is blind.
func observedChannels(missing [][]int, n, m int) ([]int, int) {
	count := make([]int, m)
	total := 0
	for i, cols := range missing {
		if i >= n {
			break
		}
		for _, j := range cols {
			if j >= 0 && j < m {
				count[j]++
				total++
			}
		}
	}
	if total == 0 {
		return nil, 0
	}
	lit := make([]int, 0, m)
	partial := 0
	for j, c := range count {
		if c < n {
			lit = append(lit, j)
			partial += c
		}
	}
	return lit, partial
}

// litColumns copies the columns lit of d, the axis and the weights.
func litColumns(d *mat.Dense, axis, col []float64, lit []int) (*mat.Dense, []float64, []float64) {
	n, _ := d.Dims()
	out := mat.NewDense(n, len(lit), nil)
	for i := 0; i < n; i++ {
		src, dst := d.RawRowView(i), out.RawRowView(i)
		for c, j := range lit {
			dst[c] = src[j]
		}
	}
	ax := make([]float64, len(lit))
	var cw []float64
	if col != nil {
		cw = make([]float64, len(lit))
	}
	for c, j := range lit {
		ax[c] = axis[j]
		if cw != nil {
			cw[c] = col[j]
		}
	}
	return out, ax, cw
}

// checkBaselineTest refuses arguments with which the F-test has no meaning: the
// residual degrees of freedom need more points than factors plus baseline terms.
func checkBaselineTest(n, m, axisLen int, col []float64, k, maxOrder int, alpha float64) error {
	if axisLen != m || (col != nil && len(col) != m) {
		return fmt.Errorf("svd: baseline order: axis has %d points, weights %d, data %d", axisLen, len(col), m)
	}
	if k < 0 || maxOrder < 0 || !(alpha > 0 && alpha < 1) {
		return fmt.Errorf("svd: baseline order: k %d, maximum order %d, alpha %v out of range", k, maxOrder, alpha)
	}
	if n < 2 || m <= maxOrder+k+2 {
		return errors.New("svd: baseline order: too few spectra or points for the test")
	}
	return nil
}

// leadingFactors returns f when it holds at least r factors, else decomposes d to r:
// the rank-k fits of every order lie in the span of the leading k + maxOrder + 2
// factors (with a margin of four) whenever the baseline matters.
func leadingFactors(d *mat.Dense, f *Factors, r int) (*Factors, error) {
	if f != nil && len(f.S) >= r {
		return f, nil
	}
	f, err := Decompose(d, DecomposeOptions{MaxFactors: r})
	if err != nil {
		return nil, fmt.Errorf("svd: baseline order: %w", err)
	}
	return f, nil
}

// baselineFits holds what the residual of every baseline order is computed from:
// the data in its leading factors' coordinates, W = Σ_r V_rᵀ (r × m), its product
// with the nested polynomial basis, and the polynomial part's energy per basis
// column. Only r × m work is done per order, never a pass over d.
type baselineFits struct {
	n, m, r, k  int
	frobeniusSq float64
	w, wqAll    *mat.Dense
	basis, dq   *mat.Dense
	polyEnergy  []float64 // ‖(D Q)_c‖² per basis column c
	// W less its projection is formed in the same memory for every order,
	// and its values taken there (valuesInPlace: mat.SVD's LAPACK call
	// without its copy of the matrix).
	proj mat.Dense
	wq   *mat.Dense
	// noise is the residual's correlation along the axis; the F-tests count
	// m/τ independent points.
	noise AxisNoise
	// missing is the number of blind points filled by the low-rank model,
	// which no residual sum counts (ChooseBaselineOrderObserved).
	missing int
}

// newBaselineFits forms W, the basis (unless given), D Q (unless given) and W Q.
func newBaselineFits(d, dq, basis *mat.Dense, f *Factors, axis, col []float64, k, maxOrder int) (*baselineFits, error) {
	n, m := d.Dims()
	r := min(k+maxOrder+2+4, n, m, len(f.S))
	w := factorCoordinates(f, r, m)
	// The polynomial part's energy of order q is Σ_{c≤q} ‖(D Q)_c‖², and the projection
	// of W on the first q+1 basis columns is (W Q)_{:,≤q} Q_{:,≤q}ᵀ.
	if basis == nil {
		basis = PolyBasis(axis, maxOrder, col)
	} else if bm, bc := basis.Dims(); bm != m || bc != maxOrder+1 {
		return nil, fmt.Errorf("svd: baseline order: basis is %d × %d for %d points and order %d", bm, bc, m, maxOrder)
	}
	if dq == nil {
		dq = few.Mul(d, basis) // mat.Dense.Mul's bits, faster at a few columns
	} else if dn, dc := dq.Dims(); dn != n || dc != maxOrder+1 {
		return nil, fmt.Errorf("svd: baseline order: D Q is %d × %d for %d spectra and order %d", dn, dc, n, maxOrder)
	}
	fits := &baselineFits{n: n, m: m, r: r, k: k, frobeniusSq: f.FrobeniusSq, w: w, basis: basis,
		wqAll: &mat.Dense{}, wq: mat.NewDense(r, m, nil)}
	fits.wqAll.Mul(w, basis)
	fits.polyEnergy = columnEnergies(dq, n, maxOrder+1)
	fits.dq = dq
	return fits, nil
}

// factorCoordinates returns W = Σ_r V_rᵀ (r × m): the data in its leading factors'
// coordinates, whose singular values are the data's own.
func factorCoordinates(f *Factors, r, m int) *mat.Dense {
	w := mat.NewDense(r, m, nil)
	for a := 0; a < r; a++ {
		for j := 0; j < m; j++ {
			w.Set(a, j, f.S[a]*f.V.At(j, a))
		}
	}
	return w
}

// columnEnergies returns Σ_i x_ic² for each of the first c columns of x (n rows).
func columnEnergies(x *mat.Dense, n, c int) []float64 {
	e := make([]float64, c)
	for j := 0; j < c; j++ {
		for i := 0; i < n; i++ {
			e[j] += x.At(i, j) * x.At(i, j)
		}
	}
	return e
}

// rss is the residual sum of squares of the best fit of k factors plus a baseline of
// order q (−1: none): the energy left after the polynomial part and the k largest
// singular values of what remains of W.
func (b *baselineFits) rss(q int) float64 {
	energy := b.frobeniusSq
	if q >= 0 {
		for c := 0; c <= q; c++ {
			energy -= b.polyEnergy[c]
		}
		b.proj.Mul(b.wqAll.Slice(0, b.r, 0, q+1), b.basis.Slice(0, b.m, 0, q+1).T())
		b.wq.Sub(b.w, &b.proj)
	} else {
		b.wq.Copy(b.w)
	}
	if b.k > 0 {
		if vals, ok := valuesInPlace(b.wq.RawMatrix()); ok {
			for _, s := range vals[:min(b.k, b.r)] {
				energy -= s * s
			}
		}
	}
	return math.Max(energy, 0)
}

// forwardSelect adds orders while they are significant at level alpha
// (docs/measurement.md §6). An order that is not significant alone is
// tested again jointly with the next, both against the order below them
// (one F-test with 2n coefficients): a drift the lower order misses, a
// slope about the axis's middle or a curvature with no mean, shows in the
// next order only, and a copy of the real catalyst-0.01 series with
// counts noise added stopped at an offset with p = 0.47, where the offset
// and the slope together have p = 5·10⁻⁵ and the quadratic and the cubic
// 10⁻¹⁰ each, and its drift went into the species (the rate constant
// twice the noise-free one). When the
// joint test is not significant either, the search ends. On data without
// a baseline the search ends at the offset's test or at its joint test
// with the slope: a baseline is chosen with probability at most 2·alpha
// (Bonferroni). Stepping over the order that was not significant and
// testing the next alone, as the search once did, spent the same second
// chance on a test of less power, and chose cubics on drift-free series
// after an offset at p = 0.82 and 1: the joint test keeps the first
// order's evidence against the step, which a single order after it does
// not.
func (b *baselineFits) forwardSelect(maxOrder int, alpha float64) *BaselineChoice {
	ch := &BaselineChoice{Order: -1}
	prev := b.rss(-1)
	ch.Steps = append(ch.Steps, BaselineStep{Order: -1, ResidualSS: prev, Significance: 1})
	for q := 0; q <= maxOrder; q++ {
		cur := b.rss(q)
		st := b.fTest(q, 1, prev, cur)
		ch.Steps = append(ch.Steps, st)
		if st.Significance < alpha {
			prev = cur
			ch.Order = q
			continue
		}
		if q == maxOrder {
			break
		}
		next := b.rss(q + 1)
		joint := b.fTest(q+1, 2, prev, next)
		ch.Steps = append(ch.Steps, joint)
		if !(joint.Significance < alpha) {
			break
		}
		prev = next
		ch.Order = q + 1
		q++
	}
	return ch
}

// fTest is the extra-sum-of-squares F-test of order q against order q − orders
// (orders coefficients per spectrum added). An exact fit (cur = 0) after an
// inexact one is taken as significant without F, whose ratio would be
// infinite; too few degrees of freedom leave the order not significant.
func (b *baselineFits) fTest(q, orders int, prev, cur float64) BaselineStep {
	n, m, k := b.n, b.m, b.k
	dof := float64(n*(m-q-1) - k*(n+m-q-1-k) - b.missing)
	if b.noise.Inflation > 1 {
		me := b.noise.Effective
		dof = float64(n)*(me-float64(q+1)) - float64(k)*(float64(n)+me-float64(q+1+k)) - float64(b.missing)/b.noise.Inflation
	}
	st := BaselineStep{Order: q, ResidualSS: cur, Significance: 1, Orders: orders}
	num := float64(orders * n)
	switch {
	case dof < 1:
	case cur <= 0:
		if prev > 0 {
			st.Significance = 0
		}
	default:
		st.F = (math.Max(prev-cur, 0) / num) / (cur / dof)
		p := pvalue.FUpper(st.F, num, dof)
		if !math.IsNaN(p) {
			st.Significance = math.Min(math.Max(p, 0), 1)
		}
	}
	return st
}

// residualNoise measures the correlation along the axis of the residual of the fullest
// model, k factors and the baseline of the highest order (AxisCorrelation): on at most
// axisRows rows of d, evenly spaced, each less its polynomial part (from D Q) and
// its part along the k leading right singular vectors V_k of W less its polynomial
// part, which are the rank-k fit's spectra (orthogonal to Q). G = [Q V_k].
func (b *baselineFits) residualNoise(d *mat.Dense) AxisNoise {
	g := b.residualBasis(len(b.polyEnergy) - 1)
	_, p := g.Dims()
	if axisWindow(b.m, p) < 1 {
		return white(b.m)
	}
	cols := make([][]float64, p)
	for c := range cols {
		cols[c] = mat.Col(nil, c, g)
	}
	_, cq := b.basis.Dims()
	rows := axisRows(b.n, b.m)
	e := mat.NewDense(rows, b.m, nil)
	coef := make([]float64, p)
	for a := 0; a < rows; a++ {
		i := a * b.n / rows
		src, dst := d.RawRowView(i), e.RawRowView(a)
		for c, u := range cols {
			if c < cq {
				coef[c] = b.dq.At(i, c)
			} else {
				coef[c] = dot(src, u)
			}
		}
		copy(dst, src)
		for c, u := range cols {
			for j, v := range u {
				dst[j] -= coef[c] * v
			}
		}
	}
	return AxisCorrelation(e, g)
}

// residualBasis returns [Q V_k] (m × (order+1+k')): the basis of order and the leading
// right singular vectors of W with that basis projected out, k' ≤ k of them, those of
// singular values above rounding (only they are sure to be orthogonal to Q).
func (b *baselineFits) residualBasis(order int) *mat.Dense {
	q := b.basis.Slice(0, b.m, 0, order+1)
	var proj, rest mat.Dense
	proj.Mul(b.wqAll.Slice(0, b.r, 0, order+1), q.T())
	rest.Sub(b.w, &proj)
	var v mat.Dense
	k := 0
	var sv mat.SVD
	if b.k > 0 && sv.Factorize(&rest, mat.SVDThin) {
		vals := sv.Values(nil)
		for k < min(b.k, len(vals)) && vals[k] > 1e-12*vals[0] {
			k++
		}
		sv.VTo(&v)
	}
	g := mat.NewDense(b.m, order+1+k, nil)
	g.Slice(0, b.m, 0, order+1).(*mat.Dense).Copy(q)
	if k > 0 {
		g.Slice(0, b.m, order+1, order+1+k).(*mat.Dense).Copy(v.Slice(0, b.m, 0, k))
	}
	return g
}
