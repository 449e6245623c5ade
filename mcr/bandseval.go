package mcr

import (
	"math"
	"math/bits"
)

// bandWork holds the row-major copies of the profiles and spectra and the
// buffers one evaluation of the range search writes into, so that the tens
// of thousands of evaluations of a search allocate nothing: the search
// spends its time on the O((n + m)k²) products, not on the allocator (a
// fourfold gain on 2000 × 3001, docs/performance-history.md).
type bandWork struct {
	c, s          []float64    // n × k, m × k
	t, inv, tinvT []float64    // k × k
	lu            []float64    // k × k scratch of the inversion
	gt, gbB       []float64    // k × k
	gc, gs        []float64    // CᵀC, SᵀS (k × k)
	sq            [5][]float64 // k × k scratch
	dg            [4][]float64 // k × k: riseGradient's differences of Gram blocks, by column
	vec           [4][]float64 // k scratch
	gx, gy        []float64    // 2k × 2k Gram matrices of the rise
	rowsC, rowsS  clippedRows  // the clipped rows (riseSparse)
	zeroC, zeroS  []bool       // zero windows, n × k and m × k (nil: none)
	sideC, sideS  *marginSide
	piv           []int
	at            evalPoint // the last evaluation (gradientWork)
	memo          rotMemo   // the last rotation formed whole (rotate)
	shares        []float64 // noiseSQP's end's shares of every component
	// timesPanels' scratch: the clipped parts it does not use, k zero
	// masks (no column clipped) and Vᵀ.
	panelMinus []float64
	panelClip  []uint64
	noClip     []uint64
	panelVT    []float64
}

// bandBase is what every search of one FeasibleBands call reads and none
// writes: the row-major profiles and spectra, their Gram matrices, the zero
// windows, the rows' norms and, for rotatedPanels, the rows in panels. It
// is formed once, at the first newWork, and shared by the searches that
// run on several goroutines; each search's own buffers are its bandWork.
type bandBase struct {
	c, s         []float64 // n × k, m × k
	gc, gs       []float64 // CᵀC, SᵀS
	zeroC, zeroS []bool
	normC, normS []float64 // ‖c_i‖, ‖s_i‖
	xpC, xpS     []float64 // rowPanels of c and s; nil without havePanels
	// The margins' references at V = I, where every search starts:
	// formed once here instead of once per search and side.
	idC, idS *marginSide
}

func (p *bandProblem) newBase() *bandBase {
	n, m, k := p.n, p.m, p.k
	b := &bandBase{c: rawCopy(p.c), s: rawCopy(p.s), gc: make([]float64, k*k), gs: make([]float64, k*k)}
	gramCross(b.gc, b.c, b.c, k)
	gramCross(b.gs, b.s, b.s, k)
	b.zeroC = rawMask(p.opt.ZeroProfiles, n, k)
	b.zeroS = rawMask(p.opt.ZeroSpectra, m, k)
	b.normC, b.normS = rowNorms(b.c, k), rowNorms(b.s, k)
	if havePanels && k <= 16 {
		if n >= 4 {
			b.xpC = rowPanels(b.c, k)
		}
		if m >= 4 {
			b.xpS = rowPanels(b.s, k)
		}
	}
	id := make([]float64, k*k)
	for i := 0; i < k; i++ {
		id[i*k+i] = 1
	}
	b.idC = newMarginSide(b.c, b.normC, b.xpC, k, p.nnC, b.zeroC)
	b.idC.rebase(id)
	b.idS = newMarginSide(b.s, b.normS, b.xpS, k, p.nnS, b.zeroS)
	b.idS.rebase(id)
	return b
}

// rowNorms returns ‖x_i‖ for the rows of x (row-major, k columns).
func rowNorms(x []float64, k int) []float64 {
	out := make([]float64, len(x)/k)
	for i := range out {
		xr := x[i*k : i*k+k]
		out[i] = math.Sqrt(dot(xr, xr))
	}
	return out
}

func (p *bandProblem) newWork() {
	k := p.k
	if p.base == nil {
		p.base = p.newBase()
	}
	b := p.base
	w := &bandWork{
		c: b.c, s: b.s, gc: b.gc, gs: b.gs, zeroC: b.zeroC, zeroS: b.zeroS,
		t: make([]float64, k*k), inv: make([]float64, k*k), tinvT: make([]float64, k*k), lu: make([]float64, k*k),
		gx: make([]float64, 4*k*k), gy: make([]float64, 4*k*k),
		gt: make([]float64, k*k), gbB: make([]float64, k*k),
		piv: make([]int, k), noClip: make([]uint64, k), panelVT: make([]float64, k*k),
	}
	for q := range w.sq {
		w.sq[q] = make([]float64, k*k)
	}
	for q := range w.dg {
		w.dg[q] = make([]float64, k*k)
	}
	for q := range w.vec {
		w.vec[q] = make([]float64, k)
	}
	w.sideC = newMarginSide(b.c, b.normC, b.xpC, k, p.nnC, b.zeroC)
	w.sideS = newMarginSide(b.s, b.normS, b.xpS, k, p.nnS, b.zeroS)
	w.sideC.id, w.sideS.id = b.idC, b.idS
	p.work = w
}

// reset readies w for another search as newWork would leave it: the
// margins' references and the clipped rows' choice of way start afresh,
// the kept rotation and evaluation are dropped, and every other buffer is
// written before it is read. The buffers (about 1.4 MB a search on
// 2000 × 3001) are then allocated and cleared once per worker instead of
// once per search.
func (w *bandWork) reset() {
	w.sideC.based, w.sideS.based = false, false
	for _, cr := range []*clippedRows{&w.rowsC, &w.rowsS} {
		cr.idx, cr.cols, cr.dense = cr.idx[:0], cr.cols[:0], false
	}
	w.at, w.memo, w.shares = evalPoint{}, rotMemo{}, nil
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

// valueWork is the search's objective at theta; gradientWork then gives
// its gradient there from what the evaluation left in the work buffers.
// The two are apart because the line search rejects most trial points
// (two thirds on the default run's ranges) and needs the gradient only
// at the one it accepts.
func (p *bandProblem) valueWork(j int, sign, mu float64, theta []float64) float64 {
	w := p.work
	w.at = evalPoint{j: j, sign: sign, mu: mu}
	if !p.rotateWork(theta) {
		return 1e6
	}
	return p.valueGram()
}

// bandObjective is the search for one end of one range as minimiseBFGS
// takes it.
type bandObjective struct {
	p    *bandProblem
	j    int
	sign float64
	mu   float64
}

func (o bandObjective) value(x []float64) float64 { return o.p.valueWork(o.j, o.sign, o.mu, x) }
func (o bandObjective) gradient(g []float64)      { o.p.gradientWork(g) }

// evalPoint is what gradientWork needs of the last evaluation besides the
// work buffers: the end searched, the penalty's weight, and whether the
// penalty and the objective's own terms have a gradient there.
type evalPoint struct {
	j          int
	sign, mu   float64
	smooth     bool    // false: a wall (singular T, a zero column): gradient 0
	na2, nb2   float64 // ‖a_j‖², ‖b_j‖²
	rise       float64 // within the noise: the rise (riseSparse)
	rising     bool    // within the noise: the rise exceeds the allowance
	riseFactor float64 // then μ·∂(h²)/∂rise times the 2 of ∂‖XYᵀ‖²
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

// valueGram is the objective after rotateWork. Its own terms need only
// the Gram matrices: ‖a_j‖² = (Tᵀ CᵀC T)_jj, Cᵀa_j = CᵀC t_j,
// ‖b_j‖² = (BᵀB)_jj and b_jᵀB is row j of BᵀB = T⁻¹ SᵀS T⁻ᵀ. Only the
// entries of A = C T and B = S T⁻ᵀ that break a constraint enter the
// penalty (marginSide finds them without forming A and B), so the
// violation penalty and its gradient are sparse sums, and so is the rise
// of the residual within the noise (riseSparse).
func (p *bandProblem) valueGram() float64 {
	w, k := p.work, p.k
	j, sign, mu := w.at.j, w.at.sign, w.at.mu
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
		return 1e6
	}
	w.at.smooth, w.at.na2, w.at.nb2 = true, na2, nb2
	var pen float64
	if p.allow > 0 {
		pen = p.riseSparse()
	} else {
		pen = w.sideC.violations(w.t, k, p.wc)
		pen += w.sideS.violations(w.tinvT, k, p.ws)
	}
	return sign*(0.5*math.Log(na2)+0.5*math.Log(nb2)-math.Log(p.norm)) + mu*pen
}

// gradientWork writes into g the gradient of the objective at the point
// of the last valueWork.
func (p *bandProblem) gradientWork(g []float64) {
	w, k := p.work, p.k
	at := w.at
	if !at.smooth {
		clear(g)
		return
	}
	clear(w.gt)
	clear(w.gbB)
	if p.allow > 0 {
		if at.rising {
			p.riseGradient(at.riseFactor)
		}
	} else {
		w.sideC.violationGradient(k, p.wc, at.mu, w.gt, nil)
		w.sideS.violationGradient(k, p.ws, at.mu, w.gbB, w.tinvT)
	}
	ctA, bjB := w.vec[0], w.vec[2]
	for r := 0; r < k; r++ {
		w.gt[r*k+at.j] += at.sign * ctA[r] / at.na2
		w.gbB[at.j*k+r] += at.sign * bjB[r] / at.nb2
	}
	p.projectGradient(g)
}

// gramCross sets out = xᵀ y for row-major x, y with k columns (k × k),
// contiguous rows; crossGram is the same for strided matrices.
func gramCross(out, x, y []float64, k int) {
	clear(out)
	for i := 0; i+k <= len(x); i += k {
		addRowProducts(out, x[i:i+k], y[i:i+k])
	}
}

// marginSide finds the entries of X·V (X = C and V = T for the profiles,
// X = S and V = T⁻ᵀ for the spectra) that break a constraint without
// forming the whole product. At a reference V₀ each entry's margin
// x_iᵀv₀_j is known; since |x_iᵀv_j − x_iᵀv₀_j| ≤ ‖x_i‖‖v_j − v₀_j‖
// (Cauchy–Schwarz), an entry whose margin per unit ‖x_i‖ exceeds
// ‖v_j − v₀_j‖ still keeps the constraint, and only the others are formed.
// Exact, not an approximation: the entries left out provably keep the
// constraint. The reference moves to V when more than a quarter of the
// entries had to be formed beyond those violated at the reference.
//
// The entries are not scanned one by one: at each reference, each
// column's entries are grouped by the binary exponent of their ratio (a
// counting sort), so an evaluation forms the groups lying
// wholly below ‖v_j − v₀_j‖ without a comparison, compares only in the
// group straddling it and never touches the groups above. The entries
// found are marked in a bitmap and read back in row-major order, the
// order of the scan this replaced, so every sum over them is the same to
// the last bit. (A full sort per reference was tried earlier: the line
// search's far trial points move the reference often enough that the
// sorting cost more than the scan; the grouping is linear.)
type marginSide struct {
	x     []float64 // rows × k
	xp    []float64 // x in panels (rowPanels), or nil
	k     int
	nn    []bool
	zero  []bool
	norm  []float64 // ‖x_i‖
	ref   []float64 // V₀, k × k
	ratio []float64 // rows × k: x_iᵀv₀_j/‖x_i‖ (−∞ in a zero window, +∞ when free)
	atRef int       // entries formed at the reference itself
	gx    []float64 // k × k scratch: Gᵀ X (violations)
	delta []float64
	vt    []float64 // Vᵀ (k × k): column j of V contiguous
	row   []float64 // k scratch (rebase)
	based bool
	id    *marginSide // the reference at V = I (bandBase), or nil
	list  []clipped
	// listed says whether list holds the last collect's entries.
	listed bool
	// rows lists, column after column, the rows of each column's
	// entries by group: group 0 holds the ratios ≤ 0 (formed always),
	// group g ≥ 1 those in [2^(e_j+g−2), 2^(e_j+g−1)) with e_j set per
	// column (the lowest group takes every smaller ratio too); free
	// entries (+∞) are in none. start[j·(groups+2)+g] is where group g of
	// column j begins.
	rows  []int32
	start []int32
	next  []int32   // scratch of group: the next free place per group
	tag   []int32   // scratch of group: each row's group in the column
	exp   []int     // e_j
	hit   []uint64  // bitmap of the entries found in this evaluation
	val   []float64 // their values, by entry
	// X·V formed whole (formDense): the product, its entries breaking a
	// constraint (0 elsewhere) and per row a bit per such column; made at
	// the first use. nnBits[j] is 1, nnm[j] all ones, when column j is
	// non-negative.
	full, minus []float64
	clip        []uint64
	nnBits, nnm []uint64
	dense       bool    // the last collect formed X·V whole
	denseAbove  float64 // collect's switch (denseForm; the tests move it)
	shared      bool    // ratio, rows, start, exp and ref are the identity's (bandBase)
	own         marginRef
}

// marginRef is what a reference of marginSide consists of beyond its
// counts: the margins' ratios, the rows by group, the groups' starts, the
// columns' exponents and V₀.
type marginRef struct {
	ratio []float64
	rows  []int32
	start []int32
	exp   []int
	ref   []float64
}

// groups is the number of exponent groups of positive ratios per column:
// 2⁴⁰ between the largest and the smallest one kept apart.
const groups = 40

// newMarginSide returns the marginSide of x (rows × k), whose rows' norms
// and panels (rowPanels, or nil) are given and which none of the three
// changes.
func newMarginSide(x, norm, xp []float64, k int, nn, zero []bool) *marginSide {
	ms := &marginSide{x: x, xp: xp, k: k, nn: nn, zero: zero, norm: norm,
		gx: make([]float64, k*k), delta: make([]float64, k),
		vt: make([]float64, k*k), row: make([]float64, k), next: make([]int32, groups+2),
		hit: make([]uint64, (len(x)+63)/64), val: make([]float64, len(x)),
		nnBits: make([]uint64, k), nnm: make([]uint64, k), denseAbove: denseForm}
	for j := range ms.nnBits {
		ms.nnBits[j] = b2u(nn[j])
		ms.nnm[j] = -ms.nnBits[j]
	}
	return ms
}

// useOwn points the reference at ms's own storage, made at the first use
// (the searches whose reference never leaves the identity, as on the
// default run, never make it).
func (ms *marginSide) useOwn() {
	k, o := ms.k, &ms.own
	if o.ratio == nil {
		o.ratio, o.rows, o.start = make([]float64, len(ms.x)), make([]int32, 0, len(ms.x)), make([]int32, k*(groups+2))
		o.exp, o.ref = make([]int, k), make([]float64, k*k)
		ms.tag = make([]int32, len(ms.norm))
	}
	ms.ratio, ms.rows, ms.start, ms.exp, ms.ref = o.ratio, o.rows, o.start, o.exp, o.ref
	ms.shared = false
}

// share makes id's reference, taken at V = I, ms's own until the next
// rebase: every search starts at the identity (θ = 0), and its reference
// there is the same bits for all of them.
func (ms *marginSide) share(id *marginSide) {
	ms.ratio, ms.rows, ms.start, ms.exp, ms.ref, ms.atRef = id.ratio, id.rows, id.start, id.exp, id.ref, id.atRef
	ms.shared, ms.based = true, true
}

// isIdentity says whether the k × k matrix v is I to the bit.
func isIdentity(v []float64, k int) bool {
	for i, x := range v {
		want := 0.0
		if i/k == i%k {
			want = 1
		}
		if math.Float64bits(x) != math.Float64bits(want) {
			return false
		}
	}
	return true
}

// denseBuffers makes the storage of formDense at its first use.
func (ms *marginSide) denseBuffers() {
	if ms.full == nil {
		ms.full, ms.minus, ms.clip = make([]float64, len(ms.x)), make([]float64, len(ms.x)), make([]uint64, len(ms.norm))
	}
}

// rebase makes v the reference.
func (ms *marginSide) rebase(v []float64) {
	k := ms.k
	if ms.shared || ms.ratio == nil {
		ms.useOwn()
	}
	copy(ms.ref, v)
	ms.atRef = 0
	row := ms.row
	for i, nrm := range ms.norm {
		// The row x_iᵀV at once: k sums in flight, each in entry's order.
		clear(row)
		for l, xv := range ms.x[i*k : i*k+k] {
			vr := v[l*k : l*k+k]
			vr = vr[:len(row)]
			for c, vv := range vr {
				row[c] += xv * vv
			}
		}
		for j := 0; j < k; j++ {
			e := i*k + j
			switch {
			case ms.zero != nil && ms.zero[e]:
				ms.ratio[e] = math.Inf(-1)
			case !ms.nn[j] || nrm == 0:
				ms.ratio[e] = math.Inf(1)
				continue
			default:
				ms.ratio[e] = row[j] / nrm
			}
			if ms.ratio[e] <= 0 {
				ms.atRef++
			}
		}
	}
	ms.group()
	ms.based = true
}

// group sorts each column's entries into the exponent groups (see
// marginSide), rows ascending within a group: the binary exponent of each
// ratio is read from its bits once (ms.tag), then counted and placed.
func (ms *marginSide) group() {
	k, nrows := ms.k, len(ms.norm)
	ms.rows = ms.rows[:0]
	tag := ms.tag
	for j := 0; j < k; j++ {
		top := -1
		for i := 0; i < nrows; i++ {
			r := ms.ratio[i*k+j]
			switch {
			case !(r > 0): // ≤ 0, −∞ and NaN: formed at every evaluation
				tag[i] = 0
			case math.IsInf(r, 1): // free
				tag[i] = -1
			default: // r ∈ [2^(ex−1), 2^ex) with ex the biased exponent − 1022
				ex := int32(math.Float64bits(r)>>52) + 1 // 1 … 2047, subnormals 1
				tag[i] = ex
				top = max(top, int(ex))
			}
		}
		low := top - groups + 1 // the biased exponent of group 1
		ms.exp[j] = low - 1023
		st := ms.start[j*(groups+2) : (j+1)*(groups+2)]
		clear(st)
		for i := 0; i < nrows; i++ {
			switch t := tag[i]; {
			case t == 0:
			case t < 0:
				continue
			default:
				t = 1 + min(max(t-int32(low), 0), groups-1)
				tag[i] = t
			}
			st[tag[i]+1]++
		}
		st[0] = int32(len(ms.rows))
		for g := 1; g < len(st); g++ {
			st[g] += st[g-1]
		}
		ms.rows = ms.rows[:st[len(st)-1]]
		next := ms.next
		copy(next, st)
		for i := 0; i < nrows; i++ {
			if g := tag[i]; g >= 0 {
				ms.rows[next[g]] = int32(i)
				next[g]++
			}
		}
	}
}

// clipped is one entry of X·V that breaks a constraint.
type clipped struct {
	i, j int
	val  float64
}

// collect finds the entries of X·V that break non-negativity or lie in a
// zero window; penalty sums over them and entries lists them, in
// row-major order. The list is made only when asked for: the line search
// needs the penalty at every trial point and the entries (for the
// gradient) only at the one it accepts.
//
// When the margin test would form more than denseForm of the entries, X·V
// is formed whole instead (formDense, in the vector lanes where there
// are any) and its clipped entries read off: the same entries, each the
// same sum in the same order, in the same order, at a fraction of the cost
// per entry (the test gathers rows one by one).
func (ms *marginSide) collect(v []float64) {
	k := ms.k
	ms.transposeV(v)
	if !ms.based {
		if ms.id != nil && isIdentity(v, k) {
			ms.share(ms.id)
		} else {
			ms.rebase(v)
		}
	}
	for j := 0; j < k; j++ {
		d := 0.0
		for l := 0; l < k; l++ {
			e := v[l*k+j] - ms.ref[l*k+j]
			d += e * e
		}
		ms.delta[j] = math.Sqrt(d)
	}
	ms.listed = false
	if whole, formed := ms.whole(); whole {
		ms.formDense()
		if formed > ms.atRef+len(ms.ratio)/4 {
			ms.rebase(v)
		}
		return
	}
	ms.dense = false
	clear(ms.hit)
	formed := 0
	for j := 0; j < k; j++ {
		formed += ms.formColumn(j)
	}
	if formed > ms.atRef+len(ms.ratio)/4 {
		ms.rebase(v)
	}
}

// entries lists the entries the last collect found (ms.list), in
// row-major order: read off the clipped words of X·V formed whole, or the
// bitmap of the margin test.
func (ms *marginSide) entries() []clipped {
	if ms.listed {
		return ms.list
	}
	k, out := ms.k, ms.list[:0]
	if ms.dense {
		for i, c := range ms.clip {
			for ; c != 0; c &= c - 1 {
				j := bits.TrailingZeros64(c)
				out = append(out, clipped{i, j, ms.full[i*k+j]})
			}
		}
	} else {
		for w, word := range ms.hit {
			for ; word != 0; word &= word - 1 {
				e := w*64 + bits.TrailingZeros64(word)
				out = append(out, clipped{e / k, e % k, ms.val[e]})
			}
		}
	}
	ms.list, ms.listed = out, true
	return out
}

// penalty is Σ wt_j·val² over the entries the last collect found, summed
// in entries' order (the same sum as over the list) without listing them.
func (ms *marginSide) penalty(wt []float64) float64 {
	k, pen := ms.k, 0.0
	if ms.dense {
		for i, c := range ms.clip {
			for ; c != 0; c &= c - 1 {
				j := bits.TrailingZeros64(c)
				val := ms.full[i*k+j]
				pen += wt[j] * val * val
			}
		}
		return pen
	}
	for w, word := range ms.hit {
		for ; word != 0; word &= word - 1 {
			e := w*64 + bits.TrailingZeros64(word)
			val := ms.val[e]
			pen += wt[e%k] * val * val
		}
	}
	return pen
}

// denseForm is the share of X·V's entries above which collect forms the
// product whole rather than through the margin test. The search alone,
// CPU per call at GOMAXPROCS 1: on the default run's five species (2000 ×
// 3001, half the entries formed at every evaluation of the exact-fit seed:
// the solution's exact zeros have no margin) 80–83 → 71–73 ms at 0.3, 0.4
// and 0.5 alike; on urethane catalyst-0.01 (k = 2, 6950 channels) 0.3 and
// 0.4 cost 9.2–9.6 → 10.0–10.5 ms, 0.5 nothing measurable.
const denseForm = 0.5

// formedCount is how many entries formColumn would form at the current
// deltas, nothing formed: the groups it forms whole, and of the one
// straddling ‖v_j − v₀_j‖ all with exact false (an upper bound, O(k·groups))
// or those whose ratio is at most that with exact true.
func (ms *marginSide) formedCount(exact bool) int {
	n, k := 0, ms.k
	for j := 0; j < k; j++ {
		st, d := ms.start[j*(groups+2):(j+1)*(groups+2)], ms.delta[j]
		n += int(st[1] - st[0])
		for g := 1; g <= groups; g++ {
			lo, hi := st[g], st[g+1]
			if lo == hi {
				continue
			}
			if !exact || math.Ldexp(1, ms.exp[j]+g-1) <= d {
				n += int(hi - lo)
				if exact {
					continue
				}
			} else {
				for _, i := range ms.rows[lo:hi] {
					if ms.ratio[int(i)*k+j] <= d {
						n++
					}
				}
			}
			if !(math.Ldexp(1, ms.exp[j]+g-1) <= d) {
				break
			}
		}
	}
	return n
}

// whole says whether collect forms X·V whole (more than denseAbove of its
// entries to be formed) and how many entries the margin test would form.
func (ms *marginSide) whole() (bool, int) {
	limit := ms.denseAbove * float64(len(ms.ratio))
	if float64(ms.formedCount(false)) <= limit {
		return false, 0
	}
	n := ms.formedCount(true)
	return float64(n) > limit, n
}

// formDense sets ms.full to X·V (ms.vt holds Vᵀ: transposeV), ms.minus to its entries
// breaking non-negativity or in a zero window (0 elsewhere) and ms.clip
// to each row's bits of those columns: whole panels in the vector lanes,
// the rows past them in Go, every entry summed in entry's order.
func (ms *marginSide) formDense() {
	k, x := ms.k, ms.x
	ms.denseBuffers()
	ms.dense = true
	if ms.xp != nil {
		p := len(x) / k / 4
		rotatedPanels(&ms.full[0], &ms.minus[0], &ms.clip[0], &ms.xp[0], &ms.vt[0], &ms.nnm[0], &spreadBits[0], k, p)
		at := 4 * p * k
		rotatedRows(ms.full[at:], ms.minus[at:], ms.clip[4*p:], x[at:], ms.vt, ms.nnBits, k)
	} else {
		rotatedRows(ms.full, ms.minus, ms.clip, x, ms.vt, ms.nnBits, k)
	}
	for e, z := range ms.zero { // nil: no windows
		if z {
			ms.minus[e] = ms.full[e]
			ms.clip[e/k] |= 1 << (e % k)
		}
	}
}

// transposeV sets ms.vt to Vᵀ (column j of V contiguous), as entry and
// rotatedRows read it.
func (ms *marginSide) transposeV(v []float64) {
	k := ms.k
	for l := 0; l < k; l++ {
		for j := 0; j < k; j++ {
			ms.vt[j*k+l] = v[l*k+j]
		}
	}
}

// formColumn forms the entries of column j whose ratio is at most
// ‖v_j − v₀_j‖, marks those breaking a constraint, and returns how many it
// formed.
func (ms *marginSide) formColumn(j int) int {
	k, d := ms.k, ms.delta[j]
	st := ms.start[j*(groups+2) : (j+1)*(groups+2)]
	formed := 0
	for g := 0; g <= groups; g++ {
		lo, hi := st[g], st[g+1]
		if lo == hi {
			continue
		}
		if g == 0 {
			// Ratios ≤ 0, formed always, and the zero windows (−∞).
			ms.formAll(ms.rows[lo:hi], j, ms.zero != nil)
			formed += int(hi - lo)
			continue
		}
		// Group g lies in [2^(e_j+g−2), 2^(e_j+g−1)): wholly below d, or
		// the one straddling it (the groups above start beyond d).
		if math.Ldexp(1, ms.exp[j]+g-1) <= d {
			ms.formAll(ms.rows[lo:hi], j, false)
			formed += int(hi - lo)
			continue
		}
		for _, i := range ms.rows[lo:hi] {
			e := int(i)*k + j
			if ms.ratio[e] > d {
				continue
			}
			formed++
			if val := ms.entry(int(i), j); val < 0 {
				ms.mark(e, val)
			}
		}
		break
	}
	return formed
}

// formAll forms column j's entries of the given rows and marks those
// that are negative or, with window, lie in a zero window. Four rows at a
// time: each entry is summed in its own order (the same as entry's), and
// the four sums overlap in the processor instead of waiting on each other.
func (ms *marginSide) formAll(rows []int32, j int, window bool) {
	k := ms.k
	vj := ms.vt[j*k : j*k+k]
	q := 0
	for ; q+3 < len(rows); q += 4 {
		i0, i1, i2, i3 := int(rows[q]), int(rows[q+1]), int(rows[q+2]), int(rows[q+3])
		x0, x1, x2, x3 := ms.x[i0*k:i0*k+k], ms.x[i1*k:i1*k+k], ms.x[i2*k:i2*k+k], ms.x[i3*k:i3*k+k]
		x0, x1, x2, x3 = x0[:len(vj)], x1[:len(vj)], x2[:len(vj)], x3[:len(vj)]
		v0, v1, v2, v3 := 0.0, 0.0, 0.0, 0.0
		for l, vv := range vj {
			v0 += x0[l] * vv
			v1 += x1[l] * vv
			v2 += x2[l] * vv
			v3 += x3[l] * vv
		}
		ms.markIf(i0*k+j, v0, window)
		ms.markIf(i1*k+j, v1, window)
		ms.markIf(i2*k+j, v2, window)
		ms.markIf(i3*k+j, v3, window)
	}
	for ; q < len(rows); q++ {
		i := int(rows[q])
		ms.markIf(i*k+j, ms.entry(i, j), window)
	}
}

// markIf marks entry e of value val when it breaks a constraint: negative,
// or, with window, in a zero window.
func (ms *marginSide) markIf(e int, val float64, window bool) {
	if val < 0 || window && ms.zero[e] {
		ms.mark(e, val)
	}
}

// mark records entry e, of value val, as breaking a constraint.
func (ms *marginSide) mark(e int, val float64) {
	ms.hit[e>>6] |= 1 << (e & 63)
	ms.val[e] = val
}

// entry is x_iᵀv_j (ms.vt holds Vᵀ), summed in the order of l.
func (ms *marginSide) entry(i, j int) float64 {
	k := ms.k
	xr := ms.x[i*k : i*k+k]
	vj := ms.vt[j*k : j*k+k]
	vj = vj[:len(xr)]
	val := 0.0
	for l, xv := range xr {
		val += xv * vj[l]
	}
	return val
}

// violations returns Σ_j w_j Σ_i viol_ij² over the entries of X·V breaking
// non-negativity or a zero window, and keeps them (ms.list) for
// violationGradient.
func (ms *marginSide) violations(v []float64, k int, wt []float64) float64 {
	ms.collect(v)
	return ms.penalty(wt)
}

// violationGradient accumulates μ times the gradient's product of the
// entries violations found: for the profiles (full nil) out += Xᵀ G
// (out[r][j] += x_ir·g_ij); for the spectra out += Gᵀ B with B = X·full,
// formed as (Gᵀ X)·full: the k × k sum Gᵀ X costs k flops per violated
// entry, and the one product with full k³ per evaluation, where forming
// each violated row of B would cost k² per entry.
func (ms *marginSide) violationGradient(k int, wt []float64, mu float64, out []float64, full []float64) {
	gx := ms.gx
	if full != nil {
		clear(gx)
	}
	for _, e := range ms.entries() {
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
	if full != nil {
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
// entry, and G_Bᵀ B likewise; riseGradient adds μ times it into w.gt and
// w.gbB.
func (p *bandProblem) riseSparse() float64 {
	w := p.work
	clear(w.gx)
	clear(w.gy)
	w.rowsC.form(w.sideC, w.t)
	w.rowsS.form(w.sideS, w.tinvT)
	p.clippedProfileBlocks()
	p.clippedSpectrumBlocks()
	p.denseRiseBlocks()
	rise := 0.0
	for i := range w.gx {
		rise += w.gx[i] * w.gy[i]
	}
	w.at.rise = rise
	h := rise/p.allow - 1
	w.at.rising = h > 0
	if h <= 0 {
		return 0
	}
	w.at.riseFactor = w.at.mu * 2 * h / p.allow * 2 // μ·∂(h²)/∂rise times the 2 of ∂‖XYᵀ‖²
	return h * h
}

// clippedProfileBlocks adds the clipped profiles' products into XᵀX (in
// w.gx, 2k × 2k): A₋ᵀA₋ into [0:k, 0:k], A₋ᵀA into [0:k, k:2k] (riseSparse
// takes A₋ᵀA₋ off later), and sets CᵀA₋ (w.sq[0]). The clipped entries'
// products with each other visit the clipped columns only: the others'
// terms are ±0, which leave a sum that started at +0 as it is. CᵀA₋ is
// summed transposed (row p holds column p, in w.sq[4]), each entry in the
// same order, and turned at the end.
func (p *bandProblem) clippedProfileBlocks() {
	w, k := p.work, p.k
	k2 := 2 * k
	gx := w.gx
	ctam, ctamT := w.sq[0], w.sq[4]
	clear(ctamT)
	w.rowsC.each(k, func(i int, cols uint64, full, minus []float64) {
		cr := w.c[i*k : i*k+k]
		for c := cols; c != 0; c &= c - 1 {
			p := bits.TrailingZeros64(c)
			mp := minus[p]
			if mp == 0 { // a zero window's entry at exactly 0
				continue
			}
			row := gx[p*k2 : p*k2+k2]
			for d := cols; d != 0; d &= d - 1 {
				q := bits.TrailingZeros64(d)
				row[q] += mp * minus[q]
			}
			af := row[k:k2]
			af = af[:len(full)]
			for q, v := range full {
				af[q] += mp * v
			}
			ct := ctamT[p*k : p*k+k]
			ct = ct[:len(cr)]
			for r, v := range cr {
				ct[r] += v * mp
			}
		}
	})
	for p := 0; p < k; p++ {
		for r := 0; r < k; r++ {
			ctam[r*k+p] = ctamT[p*k+r]
		}
	}
}

// clippedSpectrumBlocks adds the clipped spectra's products into YᵀY (in
// w.gy, 2k × 2k): B₋ᵀB₋ into [k:2k, k:2k] and B₋ᵀB into [k:2k, 0:k], over
// the clipped columns only as in clippedProfileBlocks.
func (p *bandProblem) clippedSpectrumBlocks() {
	w, k := p.work, p.k
	k2 := 2 * k
	gy := w.gy
	w.rowsS.each(k, func(_ int, cols uint64, full, minus []float64) {
		for c := cols; c != 0; c &= c - 1 {
			p := bits.TrailingZeros64(c)
			mp := minus[p]
			if mp == 0 {
				continue
			}
			row := gy[(k+p)*k2 : (k+p)*k2+k2]
			for d := cols; d != 0; d &= d - 1 {
				q := bits.TrailingZeros64(d)
				row[k+q] += mp * minus[q]
			}
			bf := row[:len(full)]
			for q, v := range full {
				bf[q] += mp * v
			}
		}
	})
}

// denseRiseBlocks completes XᵀX and YᵀY from the Gram matrices' congruences
// AᵀA = Tᵀ CᵀC T and BᵀB = T⁻¹ SᵀS T⁻ᵀ and the clipped blocks:
// A₊ᵀA₊ = AᵀA − A₋ᵀA − AᵀA₋ + A₋ᵀA₋, A₋ᵀA₊ = A₋ᵀA − A₋ᵀA₋ and its
// transpose, BᵀB, and BᵀB₋ = (B₋ᵀB)ᵀ.
func (p *bandProblem) denseRiseBlocks() {
	w, k := p.work, p.k
	k2 := 2 * k
	gx, gy := w.gx, w.gy
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
}

// riseGradient adds f times the rise's gradient into w.gt and w.gbB (see
// riseSparse, whose blocks it reads): the profiles' side, then the
// spectra's.
func (p *bandProblem) riseGradient(f float64) {
	p.riseGradientC(f)
	p.riseGradientS(f)
}

// riseGradientC adds f times Cᵀ G_A into w.gt, G_A the rise's gradient
// with respect to the rotated profiles A = C T (Cᵀ G_A is its gradient
// with respect to T).
func (p *bandProblem) riseGradientC(f float64) {
	w, k := p.work, p.k
	k2 := 2 * k
	gy := w.gy
	ctam := w.sq[0]
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
	// (x_i YᵀY)_{k+j}: add the difference times c_i. The differences of
	// YᵀY's entries are the same for every row (formed once, column j's
	// contiguous), and so is each row's A₊ = A − A₋ for its clipped
	// columns: the same roundings, in the same sums, as formed per entry.
	d1, d2, plus := w.dg[0], w.dg[1], w.vec[3]
	for j := 0; j < k; j++ {
		for l := 0; l < k; l++ {
			d1[j*k+l] = gy[l*k2+j] - gy[l*k2+k+j]
			d2[j*k+l] = gy[(k+l)*k2+j] - gy[(k+l)*k2+k+j]
		}
	}
	w.rowsC.each(k, func(i int, cols uint64, full, minus []float64) {
		cr := w.c[i*k : i*k+k]
		plus := plus[:len(full)]
		minus = minus[:len(full)]
		for l, v := range full {
			plus[l] = v - minus[l]
		}
		for ; cols != 0; cols &= cols - 1 {
			j := bits.TrailingZeros64(cols)
			a, b := d1[j*k:j*k+k], d2[j*k:j*k+k]
			a, b = a[:len(plus)], b[:len(plus)]
			d := 0.0
			for l, m := range minus {
				d += m*a[l] + plus[l]*b[l]
			}
			gt := w.gt[j:]
			for r, c := range cr {
				gt[r*k] += f * c * d
			}
		}
	})
}

// riseGradientS adds f times G_Bᵀ B into w.gbB, G_B the rise's gradient
// with respect to the rotated spectra B = S T⁻ᵀ (projectGradient takes it
// to T).
func (p *bandProblem) riseGradientS(f float64) {
	w, k := p.work, p.k
	k2 := 2 * k
	gx, gy := w.gx, w.gy
	btb := w.sq[3]
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
	e1, e2 := w.dg[2], w.dg[3] // columns k+j of XᵀX's blocks, contiguous
	for j := 0; j < k; j++ {
		for l := 0; l < k; l++ {
			e1[j*k+l], e2[j*k+l] = gx[l*k2+k+j], gx[(k+l)*k2+k+j]
		}
	}
	w.rowsS.each(k, func(i int, cols uint64, full, minus []float64) {
		minus = minus[:len(full)]
		for ; cols != 0; cols &= cols - 1 {
			j := bits.TrailingZeros64(cols)
			a, b := e1[j*k:j*k+k], e2[j*k:j*k+k]
			a, b = a[:len(full)], b[:len(full)]
			d := 0.0
			for l, v := range full {
				d += v*a[l] + minus[l]*b[l]
			}
			fd := f * d
			gb := w.gbB[j*k : j*k+k]
			gb = gb[:len(full)]
			for c, v := range full {
				gb[c] += fd * v
			}
		}
	})
}

// clippedRows holds, for each row of X·V with clipped entries, the row
// x_iᵀV and its clipped entries (zero elsewhere): riseSparse visits them
// twice per evaluation (the Gram blocks, then the gradient's correction)
// and they are formed once.
//
// They are found one of two ways, whichever the last evaluation's share of
// clipped rows says is cheaper; both give every entry summed in the order
// of marginSide.entry, so the rows, the entries found and every sum over
// them are the same whichever is taken. Few rows clipped: the margin test
// (marginSide.collect) finds the clipped entries and only their rows are
// formed. Many (more than denseShare of them; 1670 of the 2000 profiles'
// rows on the default run's ranges within the noise): the margins would
// form most entries and then their rows again, so X·V is formed whole,
// eight sums in flight (rotatedRows), and read for its clipped entries.
type clippedRows struct {
	idx   []int
	cols  []uint64  // per row listed: bit j set when entry j is clipped
	dense bool      // X·V formed whole this time
	full  []float64 // the rows: len(idx) × k, or X·V (rows × k) when dense
	minus []float64 // their clipped entries, laid out as full
	// The rows' own storage when listed; formed whole, full and minus are
	// the marginSide's (formDense).
	listFull, listMinus []float64
}

// denseShare is the share of rows with a clipped entry above which X·V is
// formed whole (clippedRows). Within the noise, per evaluation (2000 × 3001,
// GOMAXPROCS 1): 83 % and 43 % of the rows clipped (the default run's five
// species), whole 220 µs against margins 350 µs; 40 % and 50 % (the
// six-species chain) 270 against 377; 18 % and 14 % (BenchmarkFeasibleBands'
// pair, k = 4) 113 against 75.
const denseShare = 0.3

// form fills cr with the clipped rows of X·V, X = ms.x and V = v (ms's
// constraints).
func (cr *clippedRows) form(ms *marginSide, v []float64) {
	if cr.listFull == nil {
		cr.listFull, cr.listMinus = make([]float64, len(ms.x)), make([]float64, len(ms.x))
		cr.idx, cr.cols = make([]int, 0, len(ms.norm)), make([]uint64, 0, len(ms.norm))
	}
	if float64(len(cr.idx)) > denseShare*float64(len(ms.norm)) {
		cr.formDense(ms, v)
		return
	}
	cr.formList(ms, v)
}

// formList fills cr from the clipped entries the margin test finds (or,
// when collect formed X·V whole, from that).
func (cr *clippedRows) formList(ms *marginSide, v []float64) {
	k := ms.k
	ms.collect(v)
	if ms.dense {
		cr.fromDense(ms)
		return
	}
	cr.dense = false
	cr.full, cr.minus = cr.listFull, cr.listMinus
	list := ms.entries()
	cr.idx, cr.cols = cr.idx[:0], cr.cols[:0]
	at := 0
	for q := 0; q < len(list); {
		i := list[q].i
		xr := ms.x[i*k : i*k+k]
		full, minus := cr.full[at:at+k], cr.minus[at:at+k]
		at += k
		clear(full)
		clear(minus)
		for l, xv := range xr {
			vr := v[l*k : l*k+k]
			vr = vr[:len(full)]
			for c, vv := range vr {
				full[c] += xv * vv
			}
		}
		var cols uint64
		for ; q < len(list) && list[q].i == i; q++ {
			minus[list[q].j] = full[list[q].j]
			cols |= 1 << list[q].j
		}
		cr.idx, cr.cols = append(cr.idx, i), append(cr.cols, cols)
	}
}

// formDense fills cr from X·V formed whole (marginSide.formDense).
func (cr *clippedRows) formDense(ms *marginSide, v []float64) {
	ms.transposeV(v)
	ms.formDense()
	cr.fromDense(ms)
}

// fromDense lists the rows of ms's X·V formed whole. Every row is written
// and the count moves on only past a clipped one: whether a row is
// clipped is as good as random (43 % of the spectra's rows on the default
// run), and a branch on it, with the slices' headers stored back at each
// row, took a tenth of the search (docs/performance-history.md).
func (cr *clippedRows) fromDense(ms *marginSide) {
	cr.dense = true
	cr.full, cr.minus = ms.full, ms.minus
	idx, cols := cr.idx[:len(ms.clip)], cr.cols[:len(ms.clip)]
	at := 0
	for i, c := range ms.clip {
		idx[at], cols[at] = i, c
		at += int(b2u(c != 0))
	}
	cr.idx, cr.cols = idx[:at], cols[:at]
}

// rowPanels lays the rows of x (row-major, k columns) out four at a time
// for rotatedPanels: entry l of rows 4p … 4p+3 at 4k·p + 4l + r. Rows
// beyond the last whole four are left out.
func rowPanels(x []float64, k int) []float64 {
	p := len(x) / k / 4
	out := make([]float64, 4*p*k)
	for q := 0; q < p; q++ {
		for r := 0; r < 4; r++ {
			row := x[(4*q+r)*k : (4*q+r)*k+k]
			for l, v := range row {
				out[4*k*q+4*l+r] = v
			}
		}
	}
	return out
}

// spreadBits[m] has bit r of m at bit 16r: rotatedPanels turns the four
// rows' signs of one column (VMOVMSKPD) into their places in four 16-bit
// words of clipped columns at once.
var spreadBits = func() (t [16]uint64) {
	for m := range t {
		for r := 0; r < 4; r++ {
			t[m] |= uint64(m>>r&1) << (16 * r)
		}
	}
	return t
}()

// b2u is 1 for true, 0 for false.
func b2u(b bool) uint64 {
	if b {
		return 1
	}
	return 0
}

// clipNeg returns s where it breaks non-negativity (nn = 1 and s < 0),
// else 0, and 1 or 0 for it. Without branches: the signs are as good as
// random. The sign bit is the test: s is never −0, its sum starts at +0.
func clipNeg(s float64, nn uint64) (float64, uint64) {
	bits := math.Float64bits(s)
	keep := bits >> 63 & nn
	return math.Float64frombits(bits & -keep), keep
}

// rotatedRows sets out = X·V for row-major X (rows × k), given Vᵀ (k × k),
// each entry summed in the order of marginSide.entry (l ascending from
// +0), minus to its entries breaking non-negativity (0 elsewhere) and
// clipped[i] to the bits of row i's (bit j for column j). Four rows by two columns at a
// time: eight sums in flight, where one entry's sum alone waits on each
// addition.
func rotatedRows(out, minus []float64, clipped []uint64, x, vt []float64, nn []uint64, k int) {
	rows := len(x) / k
	nn = nn[:k]
	i := 0
	for ; i+3 < rows; i += 4 {
		at, end := i*k, (i+4)*k
		cl := clipped[i : i+4]
		cl[0], cl[1], cl[2], cl[3] = rotatedFour(out[at:end], minus[at:end], x[at:end], vt, nn, k)
	}
	for ; i < rows; i++ {
		clipped[i] = rotatedRow(out[i*k:i*k+k], minus[i*k:i*k+k], x[i*k:i*k+k], vt, nn)
	}
}

// rotatedFour is rotatedRows for four rows (o, m and x hold them, k
// entries each): two columns at a time, then the last of an odd k. It
// returns the rows' clipped bits.
func rotatedFour(o, m, x, vt []float64, nn []uint64, k int) (c0, c1, c2, c3 uint64) {
	x0, x1, x2, x3 := x[:k], x[k:2*k], x[2*k:3*k], x[3*k:4*k]
	o0, o1, o2, o3 := o[:k], o[k:2*k], o[2*k:3*k], o[3*k:4*k]
	m0, m1, m2, m3 := m[:k], m[k:2*k], m[2*k:3*k], m[3*k:4*k]
	j := 0
	for ; j+1 < k; j += 2 {
		va, vb := vt[j*k:j*k+k], vt[(j+1)*k:(j+1)*k+k]
		vb = vb[:len(va)]
		x0, x1, x2, x3 := x0[:len(va)], x1[:len(va)], x2[:len(va)], x3[:len(va)]
		var a0, a1, a2, a3, b0, b1, b2, b3 float64
		for l, av := range va {
			bv := vb[l]
			a0 += x0[l] * av
			a1 += x1[l] * av
			a2 += x2[l] * av
			a3 += x3[l] * av
			b0 += x0[l] * bv
			b1 += x1[l] * bv
			b2 += x2[l] * bv
			b3 += x3[l] * bv
		}
		o0[j], o1[j], o2[j], o3[j] = a0, a1, a2, a3
		o0[j+1], o1[j+1], o2[j+1], o3[j+1] = b0, b1, b2, b3
		na, nb := nn[j], nn[j+1]
		c0 |= clipInto(m0, j, a0, na) | clipInto(m0, j+1, b0, nb)
		c1 |= clipInto(m1, j, a1, na) | clipInto(m1, j+1, b1, nb)
		c2 |= clipInto(m2, j, a2, na) | clipInto(m2, j+1, b2, nb)
		c3 |= clipInto(m3, j, a3, na) | clipInto(m3, j+1, b3, nb)
	}
	if j < k {
		vj := vt[j*k : j*k+k]
		x0, x1, x2, x3 := x0[:len(vj)], x1[:len(vj)], x2[:len(vj)], x3[:len(vj)]
		var a0, a1, a2, a3 float64
		for l, vv := range vj {
			a0 += x0[l] * vv
			a1 += x1[l] * vv
			a2 += x2[l] * vv
			a3 += x3[l] * vv
		}
		o0[j], o1[j], o2[j], o3[j] = a0, a1, a2, a3
		na := nn[j]
		c0 |= clipInto(m0, j, a0, na)
		c1 |= clipInto(m1, j, a1, na)
		c2 |= clipInto(m2, j, a2, na)
		c3 |= clipInto(m3, j, a3, na)
	}
	return c0, c1, c2, c3
}

// rotatedRow is rotatedRows for one row xr (into o and m), one entry at a
// time; it returns the row's clipped bits.
func rotatedRow(o, m, xr, vt []float64, nn []uint64) uint64 {
	k := len(xr)
	var ci uint64
	for j := range o {
		vj := vt[j*k : j*k+k]
		vj = vj[:len(xr)]
		s := 0.0
		for l, xv := range xr {
			s += xv * vj[l]
		}
		o[j] = s
		ci |= clipInto(m, j, s, nn[j])
	}
	return ci
}

// clipInto sets m[j] to s where it breaks non-negativity (clipNeg) and
// returns bit j set when it does.
func clipInto(m []float64, j int, s float64, nn uint64) uint64 {
	v, c := clipNeg(s, nn)
	m[j] = v
	return c << j
}

// each calls visit once per row, in order, with its full and clipped rows.
// cols has bit j set when entry j is clipped.
func (cr *clippedRows) each(k int, visit func(i int, cols uint64, full, minus []float64)) {
	for r, i := range cr.idx {
		at := r * k
		if cr.dense {
			at = i * k
		}
		visit(i, cr.cols[r], cr.full[at:at+k], cr.minus[at:at+k])
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

// bandNoise is the search for one end of a range within the noise as
// minimiseSQP takes it: g = sign·log f_j (plus the constant log‖C Sᵀ‖,
// as valueGram), c = √(rise/allowance) − 1. The square root makes c
// about linear in the rotation's move past the entries it clips (the
// rise is the square of a norm of them), so its linearisation, which
// SQP steps on, holds over the steps it takes.
type bandNoise struct {
	p    *bandProblem
	j    int
	sign float64
}

func (o bandNoise) evaluate(x []float64) (float64, float64, bool) {
	v := o.p.valueWork(o.j, o.sign, 0, x)
	at := o.p.work.at
	if !at.smooth {
		return v, 0, false
	}
	// The rise is a sum of products with cancelling terms: rounded below
	// zero it counts as zero, as in gradients, not as √ of a negative (NaN).
	return v, math.Sqrt(math.Max(at.rise, 0)/o.p.allow) - 1, true
}

func (o bandNoise) gradients(gg, gc []float64) {
	p := o.p
	w, k, at := p.work, p.k, p.work.at
	clear(w.gt)
	clear(w.gbB)
	ctA, bjB := w.vec[0], w.vec[2]
	for r := 0; r < k; r++ {
		w.gt[r*k+at.j] += at.sign * ctA[r] / at.na2
		w.gbB[at.j*k+r] += at.sign * bjB[r] / at.nb2
	}
	p.projectGradient(gg)
	clear(w.gt)
	clear(w.gbB)
	if !(at.rise > 0) {
		clear(gc)
		return
	}
	// ∂c/∂rise = 1/(2·allowance·√(rise/allowance)); riseGradient's
	// factor carries the 2 of ∂‖X Yᵀ‖² (see riseSparse).
	p.riseGradient(2 / (2 * p.allow * math.Sqrt(at.rise/p.allow)))
	p.projectGradient(gc)
}
