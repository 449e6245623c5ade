package kinetics

import (
	"errors"
	"math"
	"runtime"
	"sort"

	"github.com/bandsolve/bandsolve/internal/product"
	"gonum.org/v1/gonum/mat"
)

// Sensitivities of the exact first-order solution to the parameters a fit
// varies (θ = ln k_j of the free steps, then θ = ln c0_i of the free
// initial concentrations). For a first-order network the species block is
// linear in the rate constants, K = Σ_j k_j E_j with E_j = ∂K/∂k_j (the
// step's stoichiometric column times the unit row of its reactant), and
// c(t) = exp(K t) c0, so that (the derivative of the matrix exponential;
// Van Loan, IEEE Trans. Autom. Control 1978; Najfeld & Havel, Adv. Appl.
// Math. 1995)
//
//	∂c/∂k_j = ∫0^t exp(K (t − s)) E_j exp(K s) c0 ds,   ∂c/∂c0_i = exp(K t) e_i.
//
// Through the eigendecomposition K = V Λ V⁻¹ (eigenExp) this is
//
//	∂c/∂k_j = V [(V⁻¹ E_j V) ∘ Φ(t)] w,  w = V⁻¹ c0,
//	Φ_ab(t) = (e^{λ_a t} − e^{λ_b t})/(λ_a − λ_b)  (t e^{λ_a t} when λ_a = λ_b),
//
// the divided difference of x ↦ e^{xt} at λ_a and λ_b, taken as
// e^{λ_b t}·expm1((λ_a − λ_b) t)/(λ_a − λ_b) so that close eigenvalues do not
// cancel. Through the path sums (pathExp), every term is a weight
// Π K_{s(l+1) s(l)} times e_t[κ_s0, …, κ_sL]; the weight is a product of
// rate constants and the derivative of a divided difference in one of its
// points is the divided difference with that point repeated,
// ∂e_t[x0..xL]/∂x_l = e_t[x0..xL, x_l] (a confluent divided difference;
// de Boor, A Practical Guide to Splines, 1978, from memory), which the
// Taylor series of expDD sums like any cluster. Both are exact to rounding,
// whereas central differences lose about ε^{2/3} and cost two simulations
// per parameter.

// sensitivityJob is what the sensitivities of one solution need: the
// parameters (free steps, free initial concentrations) and their values.
type sensitivityJob struct {
	s            *Scheme
	k, c0, times []float64
	t0           float64
	kFree        []int
	c0Free       []int
	// buf, when set, lends c and dc (cleared first, as fresh ones are):
	// they are then the caller's only until it gives buf back.
	buf *fitScratch
}

// sensitivities returns c(t) at every time (n × ns) and, per parameter in
// the order kFree then c0Free, ∂c/∂ln θ (n × ns). ok is false when the
// scheme is not first order or neither exact solution applies (cycles with
// a nearly defective K, solved by Padé): the caller then differences.
func (job sensitivityJob) sensitivities() (c *mat.Dense, dc []*mat.Dense, ok bool) {
	s := job.s
	if !s.FirstOrder() {
		return nil, nil, false
	}
	ns := len(s.Species)
	sys := newNetwork(s, job.k)
	kmat := mat.DenseCopyOf(sys.linearMatrix().Slice(0, ns, 0, ns))
	// E_j: K is linear in k, so the network with k = e_j has K = E_j.
	np := len(job.kFree) + len(job.c0Free)
	dirs := make([]*mat.Dense, len(job.kFree))
	for a, j := range job.kFree {
		unit := make([]float64, len(s.Steps))
		unit[j] = 1
		dirs[a] = mat.DenseCopyOf(newNetwork(s, unit).linearMatrix().Slice(0, ns, 0, ns))
	}
	n := len(job.times)
	if b := job.buf; b != nil {
		c, dc = sized(&b.c, n, ns), sizedList(&b.dc, np, n, ns)
		c.Zero()
		for _, m := range dc {
			m.Zero()
		}
	} else {
		c = mat.NewDense(n, ns, nil)
		dc = make([]*mat.Dense, np)
		for a := range dc {
			dc[a] = mat.NewDense(n, ns, nil)
		}
	}
	y0 := make([]float64, ns)
	copy(y0, job.c0)
	// One evaluator per half of the times: the evaluators' buffers are
	// their own, what they read is shared, and each time's values are
	// formed by the same operations whichever half holds it. Hard–soft ALS makes a
	// profile fit per cycle, one after the other, and about a third of each
	// was this loop on one core.
	var evaluator func() func(t float64, y []float64, d [][]float64)
	if ex := newEigenExp(kmat, ns, y0); ex != nil {
		es := newEigenSens(ex, dirs, job)
		if es == nil {
			return nil, nil, false
		}
		evaluator = func() func(t float64, y []float64, d [][]float64) { return es.clone().at }
	} else if pe := newPathExp(kmat, ns, y0); pe != nil {
		ps := newPathSens(pe, kmat, dirs, job)
		evaluator = func() func(t float64, y []float64, d [][]float64) { return ps.clone().at }
	} else {
		return nil, nil, false
	}
	halves(n, sensBlock, func(r0, r1 int) {
		eval := evaluator()
		d := make([][]float64, np)
		for i := r0; i < r1; i++ {
			t := job.times[i]
			if t <= job.t0 {
				c.SetRow(i, job.c0)
				// Before the start c = c0: only c0's own entries move.
				for b, l := range job.c0Free {
					dc[len(job.kFree)+b].Set(i, l, job.c0[l])
				}
				continue
			}
			for a := range d {
				d[a] = dc[a].RawRowView(i)
			}
			eval(t-job.t0, c.RawRowView(i), d)
		}
	})
	if !finiteDense(c) {
		return nil, nil, false
	}
	for _, m := range dc {
		if !finiteDense(m) {
			return nil, nil, false
		}
	}
	return c, dc, true
}

// sensBlock is the fewest times worth a second goroutine in sensitivities.
const sensBlock = 256

// halves runs f on [0, n) in two halves at once, the second on a goroutine
// of its own, when there are two processors and at least 2·min times; on
// the caller otherwise. One goroutine per call: a Jacobian takes about a
// millisecond, and more blocks cost more in waking and parking than they
// save. It returns, or panics, once both halves have ended; a panic in the
// second is raised again on the caller, where the caller's recovery sees
// it (on its own goroutine it would end the program).
func halves(n, min int, f func(r0, r1 int)) {
	if runtime.GOMAXPROCS(0) < 2 || n < 2*min {
		f(0, n)
		return
	}
	h := n / 2
	fault := make(chan any, 1)
	go func() {
		defer func() { fault <- recover() }()
		f(h, n)
	}()
	defer func() {
		if p := <-fault; p != nil {
			panic(p)
		}
	}()
	f(0, h)
}

// eigenSens holds G = V⁻¹ E V per rate constant and V⁻¹ e_i per initial
// concentration, each already multiplied by the parameter (∂/∂ln θ).
type eigenSens struct {
	ex  *eigenExp
	g   []*mat.Dense // per free step
	h   [][]float64  // per free c0: c0_i · V⁻¹ e_i
	e   []float64    // e^{λ_a t}
	phi []float64    // Φ_ab(t), ns × ns
	tmp []float64
}

// clone shares what es reads and has buffers of its own.
func (es *eigenSens) clone() *eigenSens {
	ns := es.ex.ns
	return &eigenSens{ex: es.ex, g: es.g, h: es.h, e: make([]float64, ns), phi: make([]float64, ns*ns), tmp: make([]float64, ns)}
}

func newEigenSens(ex *eigenExp, dirs []*mat.Dense, job sensitivityJob) *eigenSens {
	ns := ex.ns
	var lu mat.LU
	lu.Factorize(ex.v)
	es := &eigenSens{ex: ex, e: make([]float64, ns), phi: make([]float64, ns*ns), tmp: make([]float64, ns)}
	for a, e := range dirs {
		var ev, g mat.Dense
		ev.Mul(e, ex.v)
		if err := lu.SolveTo(&g, false, &ev); err != nil {
			return nil
		}
		g.Scale(job.k[job.kFree[a]], &g)
		es.g = append(es.g, &g)
	}
	for _, i := range job.c0Free {
		unit := mat.NewVecDense(ns, nil)
		unit.SetVec(i, job.c0[i])
		var h mat.VecDense
		if err := lu.SolveVecTo(&h, false, unit); err != nil {
			return nil
		}
		es.h = append(es.h, h.RawVector().Data)
	}
	return es
}

// at writes c(t) into y and ∂c/∂ln θ into d[a]. c is V (e^{Λt} ∘ w) as
// eigenExp.at forms it (the same products and sums, so the same bits).
// P_ab = Φ_ab w_b is formed once per time for every parameter; Φ is
// symmetric, and when the exponents differ by more than 1/2 the direct
// difference loses at most a factor 1/(1 − e^{−1/2}) ≈ 2.5 of ε, so
// expm1 is needed only for close pairs.
func (es *eigenSens) at(t float64, y []float64, d [][]float64) {
	ex := es.ex
	ns := ex.ns
	for a, l := range ex.lambda {
		es.e[a] = math.Exp(l * t)
		es.tmp[a] = es.e[a] * ex.w[a]
	}
	mulRaw(ex.v, es.tmp, y[:ns])
	for a, la := range ex.lambda {
		es.phi[a*ns+a] = t * es.e[a] * ex.w[a]
		for b := a + 1; b < ns; b++ {
			lb := ex.lambda[b]
			var v float64
			switch x := (la - lb) * t; {
			case la == lb:
				v = t * es.e[a]
			case math.Abs(x) > 0.5:
				v = (es.e[a] - es.e[b]) / (la - lb)
			default:
				v = es.e[b] * math.Expm1(x) / (la - lb)
			}
			es.phi[a*ns+b] = v * ex.w[b]
			es.phi[b*ns+a] = v * ex.w[a]
		}
	}
	for p, g := range es.g {
		for a := 0; a < ns; a++ {
			row, pa := g.RawRowView(a), es.phi[a*ns:(a+1)*ns]
			var v float64
			for b, gab := range row {
				v += gab * pa[b]
			}
			es.tmp[a] = v
		}
		mulRaw(ex.v, es.tmp, d[p])
	}
	for q, h := range es.h {
		for a := 0; a < ns; a++ {
			es.tmp[a] = es.e[a] * h[a]
		}
		mulRaw(ex.v, es.tmp, d[len(es.g)+q])
	}
}

// pathSens lists, per parameter, the terms of ∂c/∂ln θ over the paths of
// pathExp: a coefficient times either the divided difference of a path's
// own points (the weight's derivative; term ≥ 0) or of its points with one
// repeated (the derivative in a decay rate; pts).
type pathSens struct {
	pe    *pathExp
	terms [][]sensTerm
	own   []float64 // e_t of each path's own points, at the time under way
}

type sensTerm struct {
	to   int
	coef float64
	term int       // index into pe.terms, or −1
	pts  []float64 // the path's points with one repeated (term < 0)
}

// clone shares the paths and terms and has buffers of its own (pathExp's
// divided differences keep theirs in pe.dd, reset by every call).
func (ps *pathSens) clone() *pathSens {
	pe := *ps.pe
	pe.dd = ddScratch{}
	return &pathSens{pe: &pe, terms: ps.terms, own: make([]float64, len(ps.own))}
}

func newPathSens(pe *pathExp, kmat *mat.Dense, dirs []*mat.Dense, job sensitivityJob) *pathSens {
	ps := &pathSens{pe: pe, own: make([]float64, len(pe.terms))}
	for a, e := range dirs {
		kj := job.k[job.kFree[a]]
		var list []sensTerm
		for ti, p := range pe.terms {
			// The weight Π K along the path: each factor K_{s(l+1) s(l)}
			// that E_j touches contributes E/K times the weight.
			var dw float64
			for l := 0; l+1 < len(p.path); l++ {
				from, to := p.path[l], p.path[l+1]
				if v := e.At(to, from); v != 0 {
					dw += v / kmat.At(to, from)
				}
			}
			if dw != 0 {
				list = append(list, sensTerm{to: p.to, coef: kj * dw * p.weight, term: ti})
			}
			// The decay rates κ_s = K_ss along the path.
			for _, sp := range p.path {
				if v := e.At(sp, sp); v != 0 {
					pts := append(append([]float64(nil), p.pts...), kmat.At(sp, sp))
					sort.Float64s(pts)
					list = append(list, sensTerm{to: p.to, coef: kj * v * p.weight, term: -1, pts: pts})
				}
			}
		}
		ps.terms = append(ps.terms, list)
	}
	for _, i := range job.c0Free {
		// The weight starts with c0 of the path's first species.
		var list []sensTerm
		for ti, p := range pe.terms {
			if p.path[0] == i {
				list = append(list, sensTerm{to: p.to, coef: p.weight, term: ti})
			}
		}
		ps.terms = append(ps.terms, list)
	}
	return ps
}

// at writes c(t) into y and ∂c/∂ln θ into d[a], the sums in the order of
// pe.at for c.
func (ps *pathSens) at(t float64, y []float64, d [][]float64) {
	pe := ps.pe
	for i := range y {
		y[i] = 0
	}
	for ti, p := range pe.terms {
		v := pe.dd.expDD(p.pts, t)
		ps.own[ti] = v
		y[p.to] += p.weight * v
	}
	for a, list := range ps.terms {
		out := d[a]
		for i := range out {
			out[i] = 0
		}
		for _, st := range list {
			var v float64
			if st.term >= 0 {
				v = ps.own[st.term]
			} else {
				v = pe.dd.expDD(st.pts, t)
			}
			out[st.to] += st.coef * v
		}
	}
}

// jacobianFunc returns the analytic Jacobian of the fit's residual, its
// n-row matrices in sc, or nil when the model is not solved exactly
// (higher orders, integrators forced, extents): Levenberg–Marquardt then
// differences.
func (p *fitProblem) jacobianFunc(sc *fitScratch) JacobianFunc {
	if !p.s.FirstOrder() || p.opt.UseExtents || (p.opt.Sim.Method != "" && p.opt.Sim.Method != "expm") {
		return nil
	}
	return func(theta []float64, jac *mat.Dense) error { return p.jacobianWith(sc, theta, jac) }
}

// jacobian writes ∂r/∂θ at theta into jac from the sensitivities of the
// model columns (sensitivities), for either residual of the fit: the
// projected data (dataJacobian) or the observed columns (profileJacobian).
func (p *fitProblem) jacobian(theta []float64, jac *mat.Dense) error {
	return p.jacobianWith(&fitScratch{}, theta, jac)
}

// jacobianWith is jacobian with its n-row matrices in sc.
func (p *fitProblem) jacobianWith(sc *fitScratch, theta []float64, jac *mat.Dense) error {
	slope := 0.0
	if p.t0Free {
		slope = p.t0Slope(theta)
	}
	return p.jacobianScaled(sc, theta, jac, slope)
}

// jacobianScaled is jacobianWith with a fitted t0's column ∂r/∂t0 times
// t0f: dt0/dφ for the fit's own parameter, the time span for the reported
// Jacobian (reportT0).
func (p *fitProblem) jacobianScaled(sc *fitScratch, theta []float64, jac *mat.Dense, t0f float64) error {
	k, c0, err := p.unpack(theta)
	if err != nil {
		return err
	}
	t0 := p.t0At(theta)
	job := sensitivityJob{s: p.s, k: k, c0: c0, times: p.times, t0: t0, kFree: p.kFree, c0Free: p.c0Free, buf: sc}
	c, dc, ok := job.sensitivities()
	if !ok {
		return ErrUseDifferences
	}
	if p.t0Free {
		dc = append(dc[:len(dc):len(dc)], p.t0Sensitivity(k, c, t0, t0f))
	}
	if p.dred != nil {
		if p.opt.RowWeights != nil {
			n, q := c.Dims()
			wc, wdc := sized(&sc.wc, n, q), sizedList(&sc.wdc, len(dc), n, q)
			scaleRowsSqrtTo(wc, c, p.opt.RowWeights)
			for a := range dc {
				scaleRowsSqrtTo(wdc[a], dc[a], p.opt.RowWeights)
			}
			c, dc = wc, wdc
		}
		return p.dataJacobian(sc, c, dc, jac)
	}
	p.profileJacobian(c, dc, jac)
	return nil
}

// dataJacobian is the Jacobian of the variable-projection residual
// r(θ) = (I − P_M) D (row-major, D the reduced data, M the model columns):
// with M = U Σ Vᵀ on its numerical rank (as projector takes it),
// M⁺ = V Σ⁻¹ Uᵀ, S = M⁺ D and the residual R = (I − P_M) D, the derivative
// of the projector (Golub & Pereyra, SIAM J. Numer. Anal. 1973) gives
//
//	∂r/∂θ = −[(I − P_M) (∂M/∂θ) S + (M⁺)ᵀ (∂M/∂θ)ᵀ R]
//	      = −[(∂M/∂θ) S − U (Uᵀ(∂M/∂θ) S − Σ⁻¹ Vᵀ (∂M/∂θ)ᵀ R)].
//
// Kaufman (BIT 1975) drops the second term, exact only at zero residual;
// it is kept here, so the Jacobian is the derivative itself and the
// standard errors built on it are those of the differenced one.
// Its n-row matrices are written into sc.
func (p *fitProblem) dataJacobian(sc *fitScratch, m *mat.Dense, dm []*mat.Dense, jac *mat.Dense) error {
	u, sv, v, err := projection(m)
	if err != nil {
		return err
	}
	d := p.dred
	n, w := d.Dims()
	r := len(sv)
	if r == 0 {
		jac.Zero()
		return nil
	}
	// The products with n rows by internal/product, bit for bit those of
	// mat.Dense.Mul (the same sums in the same order) without Dgemm's
	// goroutine per 64-row block and vector call per entry.
	utd := product.MulT(u, d) // r × w
	var s mat.Dense
	sigInv := mat.NewDense(r, r, nil)
	for a, x := range sv {
		sigInv.Set(a, a, 1/x)
	}
	var vs mat.Dense
	vs.Mul(v, sigInv) // q × r: V Σ⁻¹
	s.Mul(&vs, utd)   // q × w: S = M⁺ D
	res := sized(&sc.res, n, w)
	product.MulTo(res, u, utd)
	res.Sub(d, res) // n × w: R = (I − P) D
	q, _ := s.Dims()
	ds, col := sized(&sc.ds, n, w), sized(&sc.col, n, w)
	utdm, t := mat.NewDense(r, q, nil), mat.NewDense(q, w, nil)
	var inner, z mat.Dense
	for a, dma := range dm {
		product.MulTo(ds, dma, &s)   // n × w
		product.MulTTo(utdm, u, dma) // r × q
		inner.Mul(utdm, &s)          // r × w
		product.MulTTo(t, dma, res)  // q × w
		z.Mul(vs.T(), t)             // r × w: Σ⁻¹ Vᵀ (∂M)ᵀ R
		inner.Sub(&inner, &z)
		product.MulTo(col, u, &inner) // n × w
		for i := 0; i < n; i++ {
			dsr, cr := ds.RawRowView(i), col.RawRowView(i)
			for j := 0; j < w; j++ {
				jac.Set(i*w+j, a, cr[j]-dsr[j])
			}
		}
	}
	return nil
}

// profileJacobian is the Jacobian of the profile residual
// r_ij = y_ij − a_j m_i,col(j): with amplitudes a_j = ⟨y_j, m_j⟩/⟨m_j, m_j⟩
// solved inside (variable projection again) ∂a_j = (⟨y_j, ∂m_j⟩ −
// 2 a_j ⟨m_j, ∂m_j⟩)/⟨m_j, m_j⟩, so ∂r_ij = −(a_j ∂m_ij + ∂a_j m_ij); without
// them a_j = 1 and ∂a_j = 0.
func (p *fitProblem) profileJacobian(m *mat.Dense, dm []*mat.Dense, jac *mat.Dense) {
	var amp []float64
	if p.opt.Amplitudes {
		amp = p.amplitudes(m)
	}
	for a, dma := range dm {
		for j, col := range p.columns {
			aj, daj := 1.0, 0.0
			if amp != nil {
				aj = amp[j]
				var ydm, mdm, mm float64
				for i := 0; i < p.n; i++ {
					mv, dv := m.At(i, col), dma.At(i, col)
					ydm += p.observed.At(i, j) * dv
					mdm += mv * dv
					mm += mv * mv
				}
				if mm > 0 {
					daj = (ydm - 2*aj*mdm) / mm
				}
			}
			for i := 0; i < p.n; i++ {
				jac.Set(i*p.q+j, a, -(aj*dma.At(i, col) + daj*m.At(i, col)))
			}
		}
	}
}

// projection is the thin SVD of the model columns on their numerical rank
// (tolerance 1e-10·σ_max, as projector): U (n × r), σ and V (q × r).
func projection(m *mat.Dense) (*mat.Dense, []float64, *mat.Dense, error) {
	rows, cols := m.Dims()
	var svd mat.SVD
	if !svd.Factorize(m, mat.SVDThin) {
		return nil, nil, nil, errors.New("SVD of the model columns failed")
	}
	s := svd.Values(nil)
	rank := 0
	for _, x := range s {
		if x > 1e-10*s[0] {
			rank++
		}
	}
	if rank == 0 {
		return mat.NewDense(rows, 1, nil), nil, mat.NewDense(cols, 1, nil), nil
	}
	var u, v mat.Dense
	svd.UTo(&u)
	svd.VTo(&v)
	return mat.DenseCopyOf(u.Slice(0, rows, 0, rank)), s[:rank], mat.DenseCopyOf(v.Slice(0, cols, 0, rank)), nil
}
