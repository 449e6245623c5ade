package mcr

import "math"

// bandWork holds the row-major copies of the profiles and spectra and the
// buffers one evaluation of the range search writes into, so that the tens
// of thousands of evaluations of a search allocate nothing: the search
// spends its time on the O((n + m)k²) products, not on the allocator (a
// fourfold gain on 2000 × 3001, docs/performance.md).
type bandWork struct {
	c, s          []float64    // n × k, m × k
	t, inv, tinvT []float64    // k × k
	lu            []float64    // k × k scratch of the inversion
	gt, gbB       []float64    // k × k
	gc, gs        []float64    // CᵀC, SᵀS (k × k)
	sq            [5][]float64 // k × k scratch
	vec           [3][]float64 // k scratch
	gx, gy        []float64    // 2k × 2k Gram matrices of the rise
	rows          []float64    // scratch rows (riseSparse)
	zeroC, zeroS  []bool       // zero windows, n × k and m × k (nil: none)
	sideC, sideS  *marginSide
	piv           []int
}

func (p *bandProblem) newWork() {
	n, m, k := p.n, p.m, p.k
	w := &bandWork{
		c: rawCopy(p.c), s: rawCopy(p.s),
		t: make([]float64, k*k), inv: make([]float64, k*k), tinvT: make([]float64, k*k), lu: make([]float64, k*k),
		gx: make([]float64, 4*k*k), gy: make([]float64, 4*k*k), rows: make([]float64, 6*k),
		gt: make([]float64, k*k), gbB: make([]float64, k*k),
		piv: make([]int, k),
	}
	w.gc, w.gs = make([]float64, k*k), make([]float64, k*k)
	for q := range w.sq {
		w.sq[q] = make([]float64, k*k)
	}
	for q := range w.vec {
		w.vec[q] = make([]float64, k)
	}
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

// rotateWork forms T from θ, its inverse and inverse transpose in the work
// buffers; false when T is too close to singular (1-norm condition
// number above 10¹⁰) for its inverse to mean anything.
func (p *bandProblem) rotateWork(theta []float64) bool {
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
	return true
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

// costWork is cost (see the reference in bands_ref_test.go) on the work
// buffers: the same function and gradient, without allocating and without
// forming C T and S T⁻ᵀ whole (see costGram).
func (p *bandProblem) costWork(j int, sign, mu float64, theta, g []float64) float64 {
	if !p.rotateWork(theta) {
		clear(g)
		return 1e6
	}
	return p.costGram(j, sign, mu, g)
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

// costGram is the cost after rotateWork. The objective's own terms need
// only the Gram matrices: ‖a_j‖² = (Tᵀ CᵀC T)_jj, Cᵀa_j = CᵀC t_j,
// ‖b_j‖² = (BᵀB)_jj and b_jᵀB is row j of BᵀB = T⁻¹ SᵀS T⁻ᵀ. Only the
// entries of A = C T and B = S T⁻ᵀ that break a constraint enter the
// penalty (marginSide finds them without forming A and B), so the
// violation penalty and its gradient are sparse sums, and so is the rise
// of the residual within the noise (riseSparse).
func (p *bandProblem) costGram(j int, sign, mu float64, g []float64) float64 {
	w, k := p.work, p.k
	// Cᵀ a_j = CᵀC t_j and ‖a_j‖² = t_jᵀ CᵀC t_j.
	ctA := w.vec[0]
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
	uS := w.vec[1]
	for c := 0; c < k; c++ {
		s := 0.0
		for l := 0; l < k; l++ {
			s += w.inv[j*k+l] * w.gs[l*k+c]
		}
		uS[c] = s
	}
	bjB := w.vec[2]
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
	var pen float64
	if p.allow > 0 {
		pen = p.riseSparse(mu, grad)
	} else {
		pen = w.sideC.violations(w.t, k, p.wc, mu, w.gt, grad, nil)
		pen += w.sideS.violations(w.tinvT, k, p.ws, mu, w.gbB, grad, w.tinvT)
	}
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

// marginSide finds the entries of X·V (X = C and V = T for the profiles,
// X = S and V = T⁻ᵀ for the spectra) that break a constraint without
// forming the whole product. At a reference V₀ each entry's margin
// x_iᵀv₀_j is known; since |x_iᵀv_j − x_iᵀv₀_j| ≤ ‖x_i‖‖v_j − v₀_j‖
// (Cauchy–Schwarz), an entry whose margin per unit ‖x_i‖ exceeds
// ‖v_j − v₀_j‖ still keeps the constraint, and only the others are formed
// (a comparison per entry instead of a k-term product). Exact, not an
// approximation: the entries left out provably keep the constraint. The
// reference moves to V when more than a quarter of the entries had to be
// formed beyond those violated at the reference. (Keeping each column
// sorted by the ratio and bisecting was tried: the line search's far trial
// points make the re-sorting cost more than the scan.)
type marginSide struct {
	x     []float64 // rows × k
	k     int
	nn    []bool
	zero  []bool
	norm  []float64 // ‖x_i‖
	ref   []float64 // V₀, k × k
	ratio []float64 // rows × k: x_iᵀv₀_j/‖x_i‖ (−∞ in a zero window, +∞ when free)
	atRef int       // entries formed at the reference itself
	gx    []float64 // k × k scratch: Gᵀ X (violations)
	delta []float64
	based bool
	list  []clipped
}

func newMarginSide(x []float64, k int, nn, zero []bool) *marginSide {
	rows := len(x) / k
	ms := &marginSide{x: x, k: k, nn: nn, zero: zero, norm: make([]float64, rows),
		ref: make([]float64, k*k), ratio: make([]float64, len(x)), gx: make([]float64, k*k), delta: make([]float64, k)}
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
		for j := 0; j < k; j++ {
			e := i*k + j
			switch {
			case ms.zero != nil && ms.zero[e]:
				ms.ratio[e] = math.Inf(-1)
			case !ms.nn[j] || nrm == 0:
				ms.ratio[e] = math.Inf(1)
				continue
			default:
				ms.ratio[e] = ms.entry(i, j, v) / nrm
			}
			if ms.ratio[e] <= 0 {
				ms.atRef++
			}
		}
	}
	ms.based = true
}

// clipped is one entry of X·V that breaks a constraint.
type clipped struct {
	i, j int
	val  float64
}

// collect returns the entries of X·V that break non-negativity or lie in a
// zero window, in row-major order, reusing out's storage.
func (ms *marginSide) collect(v []float64, out []clipped) []clipped {
	k := ms.k
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
	out = out[:0]
	formed := 0
	for i := range ms.norm {
		for j, r := range ms.ratio[i*k : i*k+k] {
			if r > ms.delta[j] {
				continue
			}
			formed++
			if val := ms.entry(i, j, v); math.IsInf(r, -1) || val < 0 {
				out = append(out, clipped{i, j, val})
			}
		}
	}
	if formed > ms.atRef+len(ms.ratio)/4 {
		ms.rebase(v)
	}
	return out
}

func (ms *marginSide) entry(i, j int, v []float64) float64 {
	k := ms.k
	val := 0.0
	for l, xv := range ms.x[i*k : i*k+k] {
		val += xv * v[l*k+j]
	}
	return val
}

// violations returns Σ_j w_j Σ_i viol_ij² over the entries of X·V breaking
// non-negativity or a zero window and, with grad, accumulates μ times the
// gradient's product: for the profiles (full nil) out += Xᵀ G
// (out[r][j] += x_ir·g_ij); for the spectra out += Gᵀ B with B = X·full,
// formed as (Gᵀ X)·full: the k × k sum Gᵀ X costs k flops per violated
// entry, and the one product with full k³ per evaluation, where forming
// each violated row of B would cost k² per entry.
func (ms *marginSide) violations(v []float64, k int, wt []float64, mu float64, out []float64, grad bool, full []float64) float64 {
	ms.list = ms.collect(v, ms.list)
	pen := 0.0
	gx := ms.gx
	if grad && full != nil {
		clear(gx)
	}
	for _, e := range ms.list {
		pen += wt[e.j] * e.val * e.val
		if !grad {
			continue
		}
		gv := mu * 2 * wt[e.j] * e.val
		xr := ms.x[e.i*k : e.i*k+k]
		if full == nil {
			for r, xv := range xr {
				out[r*k+e.j] += xv * gv
			}
			continue
		}
		row := gx[e.j*k : e.j*k+k]
		for l, xv := range xr {
			row[l] += gv * xv
		}
	}
	if grad && full != nil {
		for j := 0; j < k; j++ {
			for c := 0; c < k; c++ {
				s := 0.0
				for l := 0; l < k; l++ {
					s += gx[j*k+l] * full[l*k+c]
				}
				out[j*k+c] += s
			}
		}
	}
	return pen
}

// riseSparse is μ·max(0, rise/allowance − 1)² without μ (the caller
// multiplies), with the rise ‖A Bᵀ − A₊B₊ᵀ‖² = ‖X Yᵀ‖², X = [A₋ A₊],
// Y = [B B₋] (see rise), formed from the Gram matrices and the clipped
// entries only: with A₋ and B₋ sparse,
//
//	XᵀX = [A₋ᵀA₋, A₋ᵀA − A₋ᵀA₋; ·, AᵀA − A₋ᵀA − AᵀA₋ + A₋ᵀA₋],
//	YᵀY = [BᵀB, (B₋ᵀB)ᵀ; B₋ᵀB, B₋ᵀB₋],
//
// AᵀA = Tᵀ CᵀC T, BᵀB = T⁻¹ SᵀS T⁻ᵀ, and rise = Σ (XᵀX)∘(YᵀY). The
// gradient 2 X YᵀY (through the masks) enters Cᵀ G_A as
// CᵀA₋ (YᵀY)₁₂ + (CᵀC T − CᵀA₋)(YᵀY)₂₂ plus a correction at each clipped
// entry, and G_Bᵀ B likewise; μ times it is added into w.gt and w.gbB.
func (p *bandProblem) riseSparse(mu float64, grad bool) float64 {
	w, k := p.work, p.k
	k2 := 2 * k
	w.sideC.list = w.sideC.collect(w.t, w.sideC.list)
	w.sideS.list = w.sideS.collect(w.tinvT, w.sideS.list)
	la, lb := w.sideC.list, w.sideS.list
	gx, gy := w.gx, w.gy
	clear(gx)
	clear(gy)
	// Blocks of X'X: [0:k,0:k] A₋ᵀA₋, [0:k,k:2k] A₋ᵀA (then − A₋ᵀA₋),
	// [k:2k,k:2k] AᵀA − A₋ᵀA − AᵀA₋ + A₋ᵀA₋; Y'Y likewise.
	ctam := w.sq[0] // CᵀA₋
	clear(ctam)
	full, minus := w.rows[:k], w.rows[k:k2]
	eachRow(la, k, w.c, w.t, full, minus, func(i int) {
		cr := w.c[i*k : i*k+k]
		for p := 0; p < k; p++ {
			if minus[p] == 0 {
				continue
			}
			for q := 0; q < k; q++ {
				gx[p*k2+q] += minus[p] * minus[q]
				gx[p*k2+k+q] += minus[p] * full[q]
			}
			for r := 0; r < k; r++ {
				ctam[r*k+p] += cr[r] * minus[p]
			}
		}
	})
	eachRow(lb, k, w.s, w.tinvT, full, minus, func(int) {
		for p := 0; p < k; p++ {
			if minus[p] == 0 {
				continue
			}
			for q := 0; q < k; q++ {
				gy[(k+p)*k2+k+q] += minus[p] * minus[q]
				gy[(k+p)*k2+q] += minus[p] * full[q]
			}
		}
	})
	ata, btb := congruence(w.sq[1], w.sq[2], w.gc, w.t, k), congruence(w.sq[3], w.sq[2], w.gs, w.tinvT, k)
	for p := 0; p < k; p++ {
		for q := 0; q < k; q++ {
			amam, amA, aAm := gx[p*k2+q], gx[p*k2+k+q], gx[q*k2+k+p]
			gx[(k+p)*k2+k+q] = ata[p*k+q] - amA - aAm + amam
			gy[p*k2+q] = btb[p*k+q]
			gy[p*k2+k+q] = gy[(k+q)*k2+p] // BᵀB₋ = (B₋ᵀB)ᵀ
		}
	}
	for p := 0; p < k; p++ {
		for q := 0; q < k; q++ {
			gx[p*k2+k+q] -= gx[p*k2+q] // A₋ᵀA₊ = A₋ᵀA − A₋ᵀA₋
		}
	}
	for p := 0; p < k; p++ {
		for q := 0; q < k; q++ {
			gx[(k+q)*k2+p] = gx[p*k2+k+q]
		}
	}
	rise := 0.0
	for i := range gx {
		rise += gx[i] * gy[i]
	}
	h := rise/p.allow - 1
	if h <= 0 {
		return 0
	}
	if !grad {
		return h * h
	}
	f := mu * 2 * h / p.allow * 2 // μ·∂(h²)/∂rise times the 2 of ∂‖XYᵀ‖²
	// Cᵀ G_A: CᵀA₋ GY₁₂ + (CᵀC T − CᵀA₋) GY₂₂.
	ctap := congruenceLeft(w.sq[4], w.gc, w.t, k) // CᵀC T
	for r := 0; r < k; r++ {
		for c := 0; c < k; c++ {
			ctap[r*k+c] -= ctam[r*k+c]
		}
	}
	for r := 0; r < k; r++ {
		for c := 0; c < k; c++ {
			s := 0.0
			for l := 0; l < k; l++ {
				s += ctam[r*k+l]*gy[l*k2+k+c] + ctap[r*k+l]*gy[(k+l)*k2+k+c]
			}
			w.gt[r*k+c] += f * s
		}
	}
	// At a clipped entry (i, j) of A the gradient is (x_i YᵀY)_j, not
	// (x_i YᵀY)_{k+j}: add the difference times c_i.
	eachRow(la, k, w.c, w.t, full, minus, func(i int) {
		cr := w.c[i*k : i*k+k]
		for j := 0; j < k; j++ {
			if minus[j] == 0 && !w.sideC.zeroAt(i, j) {
				continue
			}
			d := 0.0
			for l := 0; l < k; l++ {
				d += minus[l]*(gy[l*k2+j]-gy[l*k2+k+j]) + (full[l]-minus[l])*(gy[(k+l)*k2+j]-gy[(k+l)*k2+k+j])
			}
			for r := 0; r < k; r++ {
				w.gt[r*k+j] += f * cr[r] * d
			}
		}
	})
	// G_Bᵀ B: GX₁₁ᵀ BᵀB + GX₂₁ᵀ B₋ᵀB, plus at a clipped entry (i, j) of B
	// (x_i-free part) (y_i XᵀX)_{k+j} times b_i.
	for j := 0; j < k; j++ {
		for c := 0; c < k; c++ {
			s := 0.0
			for l := 0; l < k; l++ {
				s += gx[l*k2+j]*btb[l*k+c] + gx[(k+l)*k2+j]*gy[(k+l)*k2+c]
			}
			w.gbB[j*k+c] += f * s
		}
	}
	eachRow(lb, k, w.s, w.tinvT, full, minus, func(i int) {
		for j := 0; j < k; j++ {
			if minus[j] == 0 && !w.sideS.zeroAt(i, j) {
				continue
			}
			d := 0.0
			for l := 0; l < k; l++ {
				d += full[l]*gx[l*k2+k+j] + minus[l]*gx[(k+l)*k2+k+j]
			}
			for c := 0; c < k; c++ {
				w.gbB[j*k+c] += f * d * full[c]
			}
		}
	})
	return h * h
}

// eachRow calls visit once per row holding clipped entries, with full set
// to the row x_iᵀV and minus to its clipped entries (zero elsewhere).
func eachRow(list []clipped, k int, x, v, full, minus []float64, visit func(i int)) {
	for q := 0; q < len(list); {
		i := list[q].i
		xr := x[i*k : i*k+k]
		clear(full)
		for l, xv := range xr {
			for c := 0; c < k; c++ {
				full[c] += xv * v[l*k+c]
			}
		}
		clear(minus)
		for ; q < len(list) && list[q].i == i; q++ {
			minus[list[q].j] = full[list[q].j]
		}
		visit(i)
	}
}

func (ms *marginSide) zeroAt(i, j int) bool { return ms.zero != nil && ms.zero[i*ms.k+j] }

// congruence sets out = Vᵀ G V (k × k), with scratch for G V.
func congruence(out, scratch, g, v []float64, k int) []float64 {
	gv := congruenceLeft(scratch, g, v, k)
	for r := 0; r < k; r++ {
		for c := 0; c < k; c++ {
			s := 0.0
			for l := 0; l < k; l++ {
				s += v[l*k+r] * gv[l*k+c]
			}
			out[r*k+c] = s
		}
	}
	return out
}

// congruenceLeft sets out = G V (k × k).
func congruenceLeft(out, g, v []float64, k int) []float64 {
	for r := 0; r < k; r++ {
		for c := 0; c < k; c++ {
			s := 0.0
			for l := 0; l < k; l++ {
				s += g[r*k+l] * v[l*k+c]
			}
			out[r*k+c] = s
		}
	}
	return out
}
