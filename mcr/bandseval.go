package mcr

import (
	"math"
)

// bandWork holds the row-major copies of the profiles and spectra and the
// buffers one evaluation of the range search writes into, so that the tens
// of thousands of evaluations of a search allocate nothing: the search
// spends its time on the O((n + m)k²) products, not on the allocator (a
// fourfold gain on 2000 × 3001, docs/performance.md).
type bandWork struct {
	c, s          []float64 // n × k, m × k
	t, inv, tinvT []float64 // k × k
	lu            []float64 // k × k scratch of the inversion
	a, b, ga, gb  []float64 // n × k, m × k
	gt, gbB       []float64 // k × k
	gc, gs        []float64 // CᵀC, SᵀS (k × k)
	x, y, dx, dy  []float64 // n × 2k, m × 2k (the residual's rise)
	gx, gy        []float64 // 2k × 2k
	maskA, maskB  []bool    // entries kept when the constraints are imposed
	zeroC, zeroS  []bool    // zero windows, n × k and m × k (nil: none)
	sideC, sideS  *marginSide
	piv           []int
}

func (p *bandProblem) newWork() {
	n, m, k := p.n, p.m, p.k
	w := &bandWork{
		c: rawCopy(p.c), s: rawCopy(p.s),
		t: make([]float64, k*k), inv: make([]float64, k*k), tinvT: make([]float64, k*k), lu: make([]float64, k*k),
		a: make([]float64, n*k), b: make([]float64, m*k), ga: make([]float64, n*k), gb: make([]float64, m*k),
		gt: make([]float64, k*k), gbB: make([]float64, k*k),
		piv: make([]int, k),
	}
	w.gc, w.gs = make([]float64, k*k), make([]float64, k*k)
	gramCross(w.gc, w.c, w.c, k)
	gramCross(w.gs, w.s, w.s, k)
	w.zeroC = rawMask(p.opt.ZeroProfiles, n, k)
	w.zeroS = rawMask(p.opt.ZeroSpectra, m, k)
	w.sideC = newMarginSide(w.c, k, p.nnC, w.zeroC)
	w.sideS = newMarginSide(w.s, k, p.nnS, w.zeroS)
	p.work = w
}

func rawCopy(a interface {
	Dims() (int, int)
	At(i, j int) float64
}) []float64 {
	r, c := a.Dims()
	out := make([]float64, r*c)
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			out[i*c+j] = a.At(i, j)
		}
	}
	return out
}

// rawMask lays the per-component windows [k][rows] out row-major (rows × k).
func rawMask(zero [][]bool, rows, k int) []bool {
	any := false
	out := make([]bool, rows*k)
	for j := 0; j < k && j < len(zero); j++ {
		for i, z := range zero[j] {
			if z && i < rows {
				out[i*k+j], any = true, true
			}
		}
	}
	if !any {
		return nil
	}
	return out
}

// rotateWork forms T from θ, its inverse transpose, A = C T and B = S T⁻ᵀ in
// the work buffers; false when T is too close to singular (1-norm condition
// number above 10¹⁰) for its inverse to mean anything.
func (p *bandProblem) rotateWork(theta []float64, dense bool) bool {
	w, k := p.work, p.k
	for i := range w.t {
		w.t[i] = 0
	}
	for i := 0; i < k; i++ {
		w.t[i*k+i] = 1
	}
	for q, f := range p.free {
		for col, d := range f.dir {
			if d != 0 {
				w.t[f.row*k+col] += theta[q] * d
			}
		}
	}
	if !invertSmall(w.t, w.inv, w.lu, w.piv, k) || norm1(w.t, k)*norm1(w.inv, k) > 1e10 {
		return false
	}
	for r := 0; r < k; r++ {
		for c := 0; c < k; c++ {
			w.tinvT[r*k+c] = w.inv[c*k+r]
		}
	}
	if dense {
		mulSmall(w.a, w.c, w.t, k)
		mulSmall(w.b, w.s, w.tinvT, k)
	}
	return true
}

// mulSmall sets out = x·t for row-major x (rows × k) and t (k × k).
func mulSmall(out, x, t []float64, k int) {
	for i := 0; i+k <= len(x); i += k {
		xr, or := x[i:i+k], out[i:i+k]
		for c := range or {
			or[c] = 0
		}
		for l, v := range xr {
			if v == 0 {
				continue
			}
			tr := t[l*k : l*k+k]
			for c, tv := range tr {
				or[c] += v * tv
			}
		}
	}
}

// invertSmall inverts the k × k matrix t into inv by Gaussian elimination
// with partial pivoting (Golub & Van Loan, Matrix Computations, §3.4);
// false when a pivot is zero.
func invertSmall(t, inv, lu []float64, piv []int, k int) bool {
	copy(lu, t)
	for i := range inv {
		inv[i] = 0
	}
	for i := 0; i < k; i++ {
		inv[i*k+i] = 1
	}
	for col := 0; col < k; col++ {
		best, bv := col, math.Abs(lu[col*k+col])
		for r := col + 1; r < k; r++ {
			if v := math.Abs(lu[r*k+col]); v > bv {
				best, bv = r, v
			}
		}
		if !(bv > 0) {
			return false
		}
		piv[col] = best
		if best != col {
			for c := 0; c < k; c++ {
				lu[col*k+c], lu[best*k+c] = lu[best*k+c], lu[col*k+c]
				inv[col*k+c], inv[best*k+c] = inv[best*k+c], inv[col*k+c]
			}
		}
		d := lu[col*k+col]
		for r := 0; r < k; r++ {
			if r == col {
				continue
			}
			f := lu[r*k+col] / d
			if f == 0 {
				continue
			}
			for c := 0; c < k; c++ {
				lu[r*k+c] -= f * lu[col*k+c]
				inv[r*k+c] -= f * inv[col*k+c]
			}
		}
	}
	for r := 0; r < k; r++ {
		d := lu[r*k+r]
		for c := 0; c < k; c++ {
			inv[r*k+c] /= d
		}
	}
	return true
}

// norm1 is the largest absolute column sum of the k × k matrix a.
func norm1(a []float64, k int) float64 {
	out := 0.0
	for c := 0; c < k; c++ {
		s := 0.0
		for r := 0; r < k; r++ {
			s += math.Abs(a[r*k+c])
		}
		out = math.Max(out, s)
	}
	return out
}

// costWork is cost (see there) on the work buffers: the same function and
// gradient, without allocating.
func (p *bandProblem) costWork(j int, sign, mu float64, theta, g []float64) float64 {
	w, k := p.work, p.k
	wall := func() float64 {
		for i := range g {
			g[i] = 0
		}
		return 1e6
	}
	if !p.rotateWork(theta, p.allow > 0) {
		return wall()
	}
	grad := g != nil
	if grad {
		clear(w.ga)
		clear(w.gb)
	}
	if p.allow == 0 {
		return p.costExact(j, sign, mu, theta, g)
	}
	pen := p.riseWork(grad)/p.allow - 1
	if pen <= 0 {
		pen = 0
	}
	if grad {
		f := 2 * pen / p.allow
		for i := range w.ga {
			w.ga[i] *= f
		}
		for i := range w.gb {
			w.gb[i] *= f
		}
	}
	pen *= pen
	na2, nb2 := colSq(w.a, k, j), colSq(w.b, k, j)
	if na2 == 0 || nb2 == 0 {
		return wall()
	}
	v := sign*(0.5*math.Log(na2)+0.5*math.Log(nb2)-math.Log(p.norm)) + mu*pen
	if !grad {
		return v
	}
	// ∂log f/∂a_j = a_j/‖a_j‖², ∂log f/∂b_j = b_j/‖b_j‖².
	for i := range w.ga {
		w.ga[i] *= mu
	}
	for i := range w.gb {
		w.gb[i] *= mu
	}
	for i := j; i < len(w.a); i += k {
		w.ga[i] += sign * w.a[i] / na2
	}
	for i := j; i < len(w.b); i += k {
		w.gb[i] += sign * w.b[i] / nb2
	}
	// dT = Cᵀ G_A − T⁻ᵀ (G_Bᵀ B).
	gramCross(w.gt, w.c, w.ga, k)
	gramCross(w.gbB, w.gb, w.b, k)
	p.projectGradient(g)
	return v
}

// projectGradient finishes dT = w.gt − T⁻ᵀ·w.gbB and writes its component
// along each free direction into g.
func (p *bandProblem) projectGradient(g []float64) {
	w, k := p.work, p.k
	for r := 0; r < k; r++ {
		for c := 0; c < k; c++ {
			s := 0.0
			for l := 0; l < k; l++ {
				s += w.tinvT[r*k+l] * w.gbB[l*k+c]
			}
			w.gt[r*k+c] -= s
		}
	}
	for q, fr := range p.free {
		s := 0.0
		for col, d := range fr.dir {
			s += w.gt[fr.row*k+col] * d
		}
		g[q] = s
	}
}

// costExact is the exact-fit cost after rotateWork. Only the violated
// entries of A and B enter the penalty, so its gradient is a sparse sum;
// the objective's own terms need only the Gram matrices: ‖a_j‖² =
// (Tᵀ CᵀC T)_jj, Cᵀa_j = CᵀC t_j, ‖b_j‖² = (BᵀB)_jj and b_jᵀB is row j
// of BᵀB = T⁻¹ SᵀS T⁻ᵀ. The dense work per evaluation is then the two
// products forming A and B (for the signs), O((n + m)k²) once.
func (p *bandProblem) costExact(j int, sign, mu float64, theta, g []float64) float64 {
	w, k := p.work, p.k
	// Cᵀ a_j = CᵀC t_j and ‖a_j‖² = t_jᵀ CᵀC t_j.
	ctA := make([]float64, k) // small: k values
	na2 := 0.0
	for r := 0; r < k; r++ {
		s := 0.0
		for l := 0; l < k; l++ {
			s += w.gc[r*k+l] * w.t[l*k+j]
		}
		ctA[r] = s
		na2 += w.t[r*k+j] * s
	}
	// Row j of BᵀB = T⁻¹ SᵀS T⁻ᵀ: (T⁻¹)_j· SᵀS T⁻ᵀ.
	uS := make([]float64, k)
	for c := 0; c < k; c++ {
		s := 0.0
		for l := 0; l < k; l++ {
			s += w.inv[j*k+l] * w.gs[l*k+c]
		}
		uS[c] = s
	}
	bjB := make([]float64, k)
	for c := 0; c < k; c++ {
		s := 0.0
		for l := 0; l < k; l++ {
			s += uS[l] * w.tinvT[l*k+c]
		}
		bjB[c] = s
	}
	nb2 := bjB[j]
	if !(na2 > 0) || !(nb2 > 0) {
		clear(g)
		return 1e6
	}
	grad := g != nil
	if grad {
		clear(w.gt)
		clear(w.gbB)
	}
	pen := w.sideC.violations(w.t, k, p.wc, mu, w.gt, grad, nil)
	pen += w.sideS.violations(w.tinvT, k, p.ws, mu, w.gbB, grad, w.tinvT)
	v := sign*(0.5*math.Log(na2)+0.5*math.Log(nb2)-math.Log(p.norm)) + mu*pen
	if !grad {
		return v
	}
	for r := 0; r < k; r++ {
		w.gt[r*k+j] += sign * ctA[r] / na2
		w.gbB[j*k+r] += sign * bjB[r] / nb2
	}
	p.projectGradient(g)
	return v
}

// gramCross sets out = xᵀ y for row-major x, y with k columns (k × k).
func gramCross(out, x, y []float64, k int) {
	clear(out)
	for i := 0; i+k <= len(x); i += k {
		xr, yr := x[i:i+k], y[i:i+k]
		for r, xv := range xr {
			if xv == 0 {
				continue
			}
			o := out[r*k : r*k+k]
			for c, yv := range yr {
				o[c] += xv * yv
			}
		}
	}
}

func colSq(x []float64, k, j int) float64 {
	s := 0.0
	for i := j; i < len(x); i += k {
		s += x[i] * x[i]
	}
	return s
}

// riseWork is rise (see there) on the work buffers, with the gradients
// added into ga and gb when grad.
func (p *bandProblem) riseWork(grad bool) float64 {
	w, k, n, m := p.work, p.k, p.n, p.m
	k2 := 2 * k
	if w.x == nil {
		w.x, w.y = make([]float64, n*k2), make([]float64, m*k2)
		w.dx, w.dy = make([]float64, n*k2), make([]float64, m*k2)
		w.gx, w.gy = make([]float64, k2*k2), make([]float64, k2*k2)
		w.maskA, w.maskB = make([]bool, n*k), make([]bool, m*k)
	}
	// X = [A₋ A₊], Y = [B B₋] with A₊, B₊ the pair with the constraints
	// imposed and A₋ = A − A₊, B₋ = B − B₊.
	for i := 0; i < n; i++ {
		for j := 0; j < k; j++ {
			v := w.a[i*k+j]
			keep := !(w.zeroC != nil && w.zeroC[i*k+j]) && !(p.nnC[j] && v < 0)
			w.maskA[i*k+j] = keep
			if keep {
				w.x[i*k2+j], w.x[i*k2+k+j] = 0, v
			} else {
				w.x[i*k2+j], w.x[i*k2+k+j] = v, 0
			}
		}
	}
	for i := 0; i < m; i++ {
		for j := 0; j < k; j++ {
			v := w.b[i*k+j]
			keep := !(w.zeroS != nil && w.zeroS[i*k+j]) && !(p.nnS[j] && v < 0)
			w.maskB[i*k+j] = keep
			w.y[i*k2+j] = v
			if keep {
				w.y[i*k2+k+j] = 0
			} else {
				w.y[i*k2+k+j] = v
			}
		}
	}
	gramCross(w.gx, w.x, w.x, k2)
	gramCross(w.gy, w.y, w.y, k2)
	d := 0.0
	for i := range w.gx {
		d += w.gx[i] * w.gy[i]
	}
	if !grad {
		return d
	}
	// ∂‖X Yᵀ‖²/∂X = 2 X (YᵀY), ∂/∂Y = 2 Y (XᵀX); then through the masks.
	mulSmall(w.dx, w.x, w.gy, k2)
	mulSmall(w.dy, w.y, w.gx, k2)
	for i := 0; i < n; i++ {
		for j := 0; j < k; j++ {
			if w.maskA[i*k+j] {
				w.ga[i*k+j] += 2 * w.dx[i*k2+k+j]
			} else {
				w.ga[i*k+j] += 2 * w.dx[i*k2+j]
			}
		}
	}
	for i := 0; i < m; i++ {
		for j := 0; j < k; j++ {
			v := w.dy[i*k2+j]
			if !w.maskB[i*k+j] {
				v += w.dy[i*k2+k+j]
			}
			w.gb[i*k+j] += 2 * v
		}
	}
	return d
}

// marginSide finds the entries of X·V (X = C and V = T for the profiles,
// X = S and V = T⁻ᵀ for the spectra) that break a constraint without
// forming the whole product. At a reference V₀ each entry's margin
// x_iᵀv₀_j is known; since |x_iᵀv_j − x_iᵀv₀_j| ≤ ‖x_i‖‖v_j − v₀_j‖
// (Cauchy–Schwarz), an entry whose margin per unit ‖x_i‖ exceeds
// ‖v_j − v₀_j‖ still keeps the constraint, and only the others are formed
// (a comparison per entry instead of a k-term product). Exact, not an
// approximation: the entries left out provably keep the constraint. The
// reference moves to V when more than a quarter of the entries had to be
// formed beyond those violated at the reference.
type marginSide struct {
	x     []float64 // rows × k
	k     int
	nn    []bool
	zero  []bool
	norm  []float64 // ‖x_i‖
	ref   []float64 // V₀, k × k
	ratio []float64 // rows × k: x_iᵀv₀_j/‖x_i‖ (−∞ in a zero window, +∞ when free)
	atRef int       // entries formed at the reference itself
	row   []float64 // scratch: one row of X·V
	delta []float64
	based bool
}

func newMarginSide(x []float64, k int, nn, zero []bool) *marginSide {
	rows := len(x) / k
	ms := &marginSide{x: x, k: k, nn: nn, zero: zero, norm: make([]float64, rows),
		ref: make([]float64, k*k), ratio: make([]float64, len(x)), row: make([]float64, k), delta: make([]float64, k)}
	for i := 0; i < rows; i++ {
		xr := x[i*k : i*k+k]
		ms.norm[i] = math.Sqrt(dot(xr, xr))
	}
	return ms
}

// rebase makes v the reference.
func (ms *marginSide) rebase(v []float64) {
	k := ms.k
	copy(ms.ref, v)
	ms.atRef = 0
	for i, nrm := range ms.norm {
		xr := ms.x[i*k : i*k+k]
		for j := 0; j < k; j++ {
			e := i*k + j
			switch {
			case ms.zero != nil && ms.zero[e]:
				ms.ratio[e] = math.Inf(-1)
			case !ms.nn[j] || nrm == 0:
				ms.ratio[e] = math.Inf(1)
				continue
			default:
				val := 0.0
				for l, xv := range xr {
					val += xv * v[l*k+j]
				}
				ms.ratio[e] = val / nrm
			}
			if ms.ratio[e] <= 0 {
				ms.atRef++
			}
		}
	}
	ms.based = true
}

// violations returns Σ_j w_j Σ_i viol_ij² over the entries of X·V breaking
// non-negativity or a zero window and, with grad, accumulates μ times the
// gradient's product: for the profiles (full nil) out += Xᵀ G
// (out[r][j] += x_ir·g_ij); for the spectra out += Gᵀ B with B = X·full
// (out[j][c] += g_ij·b_ic, the whole row of B formed on demand).
func (ms *marginSide) violations(v []float64, k int, wt []float64, mu float64, out []float64, grad bool, full []float64) float64 {
	if !ms.based {
		ms.rebase(v)
	}
	for j := 0; j < k; j++ {
		d := 0.0
		for l := 0; l < k; l++ {
			e := v[l*k+j] - ms.ref[l*k+j]
			d += e * e
		}
		ms.delta[j] = math.Sqrt(d)
	}
	pen, formed := 0.0, 0
	for i := range ms.norm {
		xr := ms.x[i*k : i*k+k]
		for j, r := range ms.ratio[i*k : i*k+k] {
			if r > ms.delta[j] {
				continue
			}
			formed++
			val := 0.0
			for l, xv := range xr {
				val += xv * v[l*k+j]
			}
			if !math.IsInf(r, -1) && !(val < 0) {
				continue
			}
			pen += wt[j] * val * val
			if grad {
				ms.addGradient(xr, j, mu*2*wt[j]*val, k, out, full)
			}
		}
	}
	if formed > ms.atRef+len(ms.ratio)/4 {
		ms.rebase(v)
	}
	return pen
}

// addGradient adds the gradient's product of one violated entry (i, j) with
// derivative gv: x_i·gv into column j of out for the profiles (full nil),
// gv·b_i into row j for the spectra (b_i = x_iᵀ·full).
func (ms *marginSide) addGradient(xr []float64, j int, gv float64, k int, out, full []float64) {
	if full == nil {
		for r, xv := range xr {
			out[r*k+j] += xv * gv
		}
		return
	}
	clear(ms.row)
	for l, xv := range xr {
		for c := 0; c < k; c++ {
			ms.row[c] += xv * full[l*k+c]
		}
	}
	for c, bv := range ms.row {
		out[j*k+c] += gv * bv
	}
}
