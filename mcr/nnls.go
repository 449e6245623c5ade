package mcr

import (
	"errors"
	"fmt"
	"math"
	"math/bits"
	"runtime"
	"sync"

	"github.com/bandsolve/bandsolve/internal/fanout"
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"
)

// ErrNotConverged reports that an active-set solve hit its iteration limit.
var ErrNotConverged = errors.New("active-set iteration limit reached")

// NNLS solves min ‖A x − b‖₂ subject to x ≥ 0 by the active-set method of
// Lawson & Hanson (Solving Least Squares Problems, 1974, ch. 23). It works on
// A itself (QR of the passive columns) rather than on AᵀA, so it is the
// accurate reference for single problems; ALS uses SolveMany instead.
func NNLS(a *mat.Dense, b []float64) ([]float64, error) {
	var w NNLSWork
	x, err := w.Solve(a, b)
	return x, err // w is the caller's no longer: x is not shared
}

// NNLSWork holds NNLS's buffers, so that a caller solving many problems of
// one size (kinetics.NonNegativeCost: one per channel, thousands per call)
// makes no garbage per problem: the LAPACK calls of gonum's mat.QR
// (Geqrf, Trcon, Ormqr, Trtrs), on buffers kept here instead of fresh ones.
// The answers and errors are NNLS's bit for bit. The zero value is ready;
// a NNLSWork is not for concurrent use.
type NNLSWork struct {
	x, z, res, w, bv []float64
	passive          []bool
	cols             []int
	qr, tau, work    []float64
	qtb              []float64
	cwork            []float64
	iwork            []int
}

// Solve is NNLS(a, b). The x returned is the workspace's own: valid until
// the next Solve.
func (ws *NNLSWork) Solve(a *mat.Dense, b []float64) ([]float64, error) {
	m, n := a.Dims()
	if len(b) != m {
		return nil, fmt.Errorf("nnls: b has %d rows, A has %d", len(b), m)
	}
	ws.size(m, n)
	x, z, passive := ws.x, ws.z, ws.passive
	bv := mat.NewVecDense(m, ws.bv)
	copy(ws.bv, b)
	res := mat.NewVecDense(m, ws.res)
	w := mat.NewVecDense(n, ws.w)
	xv := mat.NewVecDense(n, x)
	// Tolerance on the dual: scaled to the problem so that it is unit-free.
	tol := 10 * eps * mat.Norm(a, 1) * math.Max(1, mat.Norm(bv, math.Inf(1))) * float64(max(m, n))
	for outer := 0; outer < 3*n+10; outer++ {
		// w = Aᵀ(b − A x)
		res.MulVec(a, xv)
		res.SubVec(bv, res)
		w.MulVec(a.T(), res)
		best, bestW := -1, tol
		for j := 0; j < n; j++ {
			if !passive[j] && w.AtVec(j) > bestW {
				best, bestW = j, w.AtVec(j)
			}
		}
		if best < 0 {
			return x, nil
		}
		passive[best] = true
		for inner := 0; ; inner++ {
			if inner > 3*n+10 {
				return x, ErrNotConverged
			}
			if err := ws.lsqPassive(a, passive, z); err != nil {
				return x, err
			}
			alpha, blocked := 1.0, false
			for j := 0; j < n; j++ {
				if passive[j] && z[j] <= 0 {
					if t := x[j] / (x[j] - z[j]); t < alpha {
						alpha, blocked = t, true
					}
				}
			}
			if !blocked {
				copy(x, z)
				break
			}
			for j := 0; j < n; j++ {
				if passive[j] {
					x[j] += alpha * (z[j] - x[j])
					if x[j] <= tol && z[j] <= 0 {
						x[j], passive[j] = 0, false
					}
				} else {
					x[j] = 0
				}
			}
		}
	}
	return x, ErrNotConverged
}

// size readies the buffers for an m × n problem: x zero, every column
// active. A fresh x per call unless the last one was of the same size;
// NNLS's callers get theirs from a workspace of their own.
func (ws *NNLSWork) size(m, n int) {
	grow := func(s []float64, l int) []float64 {
		if cap(s) < l {
			return make([]float64, l)
		}
		return s[:l]
	}
	ws.x, ws.z, ws.w = grow(ws.x, n), grow(ws.z, n), grow(ws.w, n)
	ws.res, ws.bv, ws.qtb = grow(ws.res, m), grow(ws.bv, m), grow(ws.qtb, m)
	ws.qr, ws.tau, ws.cwork = grow(ws.qr, m*n), grow(ws.tau, n), grow(ws.cwork, 3*n)
	clear(ws.x)
	if cap(ws.passive) < n {
		ws.passive, ws.cols, ws.iwork = make([]bool, n), make([]int, 0, n), make([]int, n)
	}
	ws.passive, ws.iwork = ws.passive[:n], ws.iwork[:n]
	clear(ws.passive)
}

// lsqPassive solves the unconstrained least-squares problem on the passive
// columns by QR, which keeps the conditioning of A rather than squaring it:
// the calls mat.QR's Factorize and SolveVecTo make, in their order, with
// their workspace sizes (so LAPACK takes the same paths), and their errors
// (a zero pivot, or a condition number past mat.ConditionTolerance).
func (ws *NNLSWork) lsqPassive(a *mat.Dense, passive []bool, z []float64) error {
	m, n := a.Dims()
	cols := ws.cols[:0]
	for j := 0; j < n; j++ {
		z[j] = 0
		if passive[j] {
			cols = append(cols, j)
		}
	}
	k := len(cols)
	qr := blas64.General{Rows: m, Cols: k, Stride: k, Data: ws.qr[:m*k]}
	for i := 0; i < m; i++ {
		for c, j := range cols {
			qr.Data[i*k+c] = a.At(i, j)
		}
	}
	tau := ws.tau[:k]
	var query [1]float64
	lapack64.Geqrf(qr, tau, query[:], -1)
	lapack64.Geqrf(qr, tau, ws.workOf(int(query[0])), int(query[0]))
	r := blas64.Triangular{N: k, Stride: k, Data: qr.Data, Uplo: blas.Upper, Diag: blas.NonUnit}
	cond := 1 / lapack64.Trcon(mat.CondNorm, r, ws.cwork[:3*k], ws.iwork[:k])
	c := blas64.General{Rows: m, Cols: 1, Stride: 1, Data: ws.qtb}
	copy(c.Data, ws.bv)
	lapack64.Ormqr(blas.Left, blas.Trans, qr, tau, c, query[:], -1)
	lapack64.Ormqr(blas.Left, blas.Trans, qr, tau, c, ws.workOf(int(query[0])), int(query[0]))
	if !lapack64.Trtrs(blas.NoTrans, r, c) {
		return fmt.Errorf("nnls: passive columns are linearly dependent: %w", mat.Condition(math.Inf(1)))
	}
	if cond > mat.ConditionTolerance {
		return fmt.Errorf("nnls: passive columns are linearly dependent: %w", mat.Condition(cond))
	}
	for c, j := range cols {
		z[j] = ws.qtb[c]
	}
	ws.cols = cols
	return nil
}

// workOf is LAPACK's workspace of length l.
func (ws *NNLSWork) workOf(l int) []float64 {
	if cap(ws.work) < l {
		ws.work = make([]float64, l)
	}
	return ws.work[:l]
}

const eps = 2.220446049250313e-16

// Problem describes many small constrained least-squares problems that share
// one Gram matrix: for each column b of B find
//
//	x = argmin ½ xᵀ G x − bᵀ x   s.t. x_j ≥ 0 (j in NonNeg), aᵀx = Total (if Equality != nil)
//
// which is min ‖M x − d‖² with G = MᵀM and b = Mᵀd. This is the
// normal-equation form of Bro & De Jong (J. Chemometrics 1997).
type Problem struct {
	G        *mat.SymDense // k × k
	B        *mat.Dense    // k × p, one right-hand side per column
	NonNeg   []bool        // per variable; nil = all non-negative
	Equality []float64     // closure weights a (all > 0), nil = no equality
	Total    []float64     // per column (len p) or a single value for all
	// Fixed, if non-nil, pins variable j of column c to Fixed.At(j, c) when
	// FixMask[j][c] is true (zero windows, known values).
	FixMask [][]bool
	Fixed   *mat.Dense
	// Passive, if non-nil (length p), holds each column's final passive set
	// on return and, when non-zero on entry, the set to try first. ALS
	// passes the sets of the previous iteration: late in a resolution they
	// rarely change, so most columns then need one solve instead of several
	// active-set steps (warm start, as in Bro & De Jong 1997). The answer is
	// the same unique minimiser either way (strictly convex problem).
	Passive []uint64
	// rows: B and the answer are p × k, one problem a row, instead of
	// k × p. ALS's products give its right-hand sides that way and it
	// keeps its factors that way, so each half step took two transposes
	// of a data-sized factor (solveRows).
	rows bool
}

// SolveMany solves every column of p by the primal active-set method,
// started from the all-passive set as in fast combinatorial NNLS (Van Benthem
// & Keenan, J. Chemometrics 2004): each distinct passive set is factorised
// once (Cholesky of the small Gram block, which is positive definite when the
// components are independent) and reused for every column that reaches it.
// Columns are processed in fixed-size chunks in parallel; each column's
// arithmetic does not depend on the chunking, so results are identical for
// any GOMAXPROCS. The equality constraint is handled inside each passive-set
// solve through its Lagrange multiplier (Schur complement), not by rescaling.
func SolveMany(p Problem) (*mat.Dense, error) { return solveMany(p, nil) }

// solveMany is SolveMany writing into x when x is not nil (k × p, or p × k
// with p.rows); every entry is written, so x may hold anything before.
func solveMany(p Problem, x *mat.Dense) (*mat.Dense, error) {
	k, cols := p.B.Dims()
	if p.rows {
		k, cols = cols, k
	}
	if k > 64 {
		return nil, fmt.Errorf("solve: %d components is more than the 64 supported", k)
	}
	if r, _ := p.G.Dims(); r != k {
		return nil, fmt.Errorf("solve: Gram is %d×%d but B has %d rows", r, r, k)
	}
	xr, xc := k, cols
	if p.rows {
		xr, xc = cols, k
	}
	if x == nil {
		x = mat.NewDense(xr, xc, nil)
	} else if r, c := x.Dims(); r != xr || c != xc {
		return nil, fmt.Errorf("solve: answer is %d×%d, want %d×%d", r, c, xr, xc)
	}
	const chunk = 128
	nchunks := (cols + chunk - 1) / chunk
	errs := make([]error, nchunks)
	workers := min(runtime.GOMAXPROCS(0), nchunks)
	var wg sync.WaitGroup
	next := make(chan int, nchunks)
	for c := 0; c < nchunks; c++ {
		next <- c
	}
	close(next)
	var fault fanout.Fault // a chunk's panic, raised again below
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			c := 0
			defer fault.Catch(&c)
			s := newSolver(p, k)
			for c = range next {
				lo, hi := c*chunk, min(cols, (c+1)*chunk)
				for j := lo; j < hi; j++ {
					err := s.column(j, x)
					if errors.Is(err, ErrNotConverged) {
						err = s.recover(j, x, err)
					}
					if err != nil {
						errs[c] = err
						break
					}
				}
			}
		}()
	}
	wg.Wait()
	fault.Raise()
	for _, err := range errs {
		if err != nil {
			return x, err
		}
	}
	return x, nil
}

// factorCache holds, for one passive set, the Cholesky factor of G_PP and
// (with closure) G_PP⁻¹ a_P and aᵀ G_PP⁻¹ a, which depend on the set only.
// Flat slices and hand-written triangular solves: the blocks are at most a
// few components across, where gonum's general routines spend more time in
// bookkeeping and allocation than in arithmetic.
type factorCache struct {
	idx []int
	l   []float64 // np × np lower triangle, row-major
	u   []float64 // its transpose Lᵀ, row-major, so both sweeps run along rows
	az  []float64 // G_PP⁻¹ a_P
	den float64   // a_Pᵀ G_PP⁻¹ a_P
	ok  bool
}

type solver struct {
	p     Problem
	k     int
	g     []float64 // G row-major
	gDiag float64   // the largest diagonal entry of G (part of every column's scale)
	cache map[uint64]*factorCache
	// last and lastMask: the factor used last. Late in ALS most columns keep
	// one passive set, so this spares the map lookup of nearly every solve.
	last     *factorCache
	lastMask uint64
	b, x     []float64
	z        []float64
	rhs      []float64
	fv       []float64
	// nz lists the variables whose fixed value is not zero (setFixed), the
	// only ones solvePassive moves to the right-hand side.
	nz []int
}

func newSolver(p Problem, k int) *solver {
	g := make([]float64, k*k)
	diag := 0.0
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			g[i*k+j] = p.G.At(i, j)
		}
		diag = math.Max(diag, g[i*k+i])
	}
	return &solver{p: p, k: k, g: g, gDiag: diag, cache: map[uint64]*factorCache{},
		b: make([]float64, k), x: make([]float64, k), z: make([]float64, k),
		rhs: make([]float64, k), fv: make([]float64, k), nz: make([]int, 0, k)}
}

// setFixed records which entries of fixedVal are not zero, for solvePassive.
func (s *solver) setFixed(fixedVal []float64) {
	s.nz = s.nz[:0]
	for j, v := range fixedVal[:s.k] {
		if v != 0 {
			s.nz = append(s.nz, j)
		}
	}
}

func (s *solver) nonneg(j int) bool { return s.p.NonNeg == nil || s.p.NonNeg[j] }

func (s *solver) total(c int) float64 {
	switch len(s.p.Total) {
	case 0:
		return 0
	case 1:
		return s.p.Total[0]
	}
	return s.p.Total[c]
}

// cholesky factors the np × np symmetric matrix a (row-major, overwritten
// by L in its lower triangle); false if it is not positive definite.
func cholesky(a []float64, np int) bool {
	for j := 0; j < np; j++ {
		d := a[j*np+j]
		for q := 0; q < j; q++ {
			d -= a[j*np+q] * a[j*np+q]
		}
		if !(d > 0) {
			return false
		}
		d = math.Sqrt(d)
		a[j*np+j] = d
		for i := j + 1; i < np; i++ {
			v := a[i*np+j]
			for q := 0; q < j; q++ {
				v -= a[i*np+q] * a[j*np+q]
			}
			a[i*np+j] = v / d
		}
	}
	return true
}

// cholSolve solves L Lᵀ x = b in place, given L and u = Lᵀ (both row-major
// np × np). Each sweep reads one row at a time: the forward sweep of L, the
// backward sweep of Lᵀ (the column of L it needs), with the same products in
// the same order as reading L's columns.
func cholSolve(l, u []float64, np int, b []float64) {
	b = b[:np]
	for i := range b {
		row := l[i*np : i*np+i+1]
		v := b[i]
		for q, lq := range row[:i] {
			v -= lq * b[q]
		}
		b[i] = v / row[i]
	}
	for i := np - 1; i >= 0; i-- {
		row := u[i*np+i : (i+1)*np]
		rest := b[i+1:]
		v := b[i]
		for q, uq := range row[1:] {
			v -= uq * rest[q]
		}
		b[i] = v / row[0]
	}
}

// transposeSquare returns the transpose of the np × np row-major matrix a.
func transposeSquare(a []float64, np int) []float64 {
	t := make([]float64, np*np)
	for i := 0; i < np; i++ {
		for j := 0; j < np; j++ {
			t[j*np+i] = a[i*np+j]
		}
	}
	return t
}

// factor returns the Cholesky factor of G restricted to the passive set.
// Cholesky is the stable choice here: G_PP is a small symmetric positive
// definite Gram block whenever the passive components are independent.
func (s *solver) factor(mask uint64) *factorCache {
	if s.last != nil && s.lastMask == mask {
		return s.last
	}
	if f, ok := s.cache[mask]; ok {
		s.last, s.lastMask = f, mask
		return f
	}
	f := &factorCache{}
	for j := 0; j < s.k; j++ {
		if mask&(1<<uint(j)) != 0 {
			f.idx = append(f.idx, j)
		}
	}
	np := len(f.idx)
	if np > 0 {
		load := func(ridge float64) {
			f.l = make([]float64, np*np)
			for a, ja := range f.idx {
				for b, jb := range f.idx {
					f.l[a*np+b] = s.g[ja*s.k+jb]
				}
				f.l[a*np+a] += ridge
			}
		}
		load(0)
		f.ok = cholesky(f.l, np)
		if !f.ok {
			// A singular block means collinear components: a tiny ridge keeps
			// the solve defined; ALS reports collinearity separately.
			tr := 0.0
			for _, ja := range f.idx {
				tr += s.g[ja*s.k+ja]
			}
			load(1e-10 * math.Max(tr/float64(np), 1e-300))
			f.ok = cholesky(f.l, np)
		}
		if f.ok {
			f.u = transposeSquare(f.l, np)
		}
		if f.ok && s.p.Equality != nil {
			f.az = make([]float64, np)
			for a, ja := range f.idx {
				f.az[a] = s.p.Equality[ja]
			}
			cholSolve(f.l, f.u, np, f.az)
			for a, ja := range f.idx {
				f.den += s.p.Equality[ja] * f.az[a]
			}
		}
	}
	if len(s.cache) > 4096 {
		clear(s.cache)
	}
	s.cache[mask] = f
	s.last, s.lastMask = f, mask
	return f
}

// solvePassive returns z, the minimiser on the passive set (others zero or
// fixed), and the multiplier of the equality constraint. s.nz must list the
// non-zero entries of fixedVal (setFixed).
func (s *solver) solvePassive(mask uint64, c int, fixedVal []float64) ([]float64, float64, error) {
	f := s.factor(mask)
	copy(s.z, fixedVal)
	if len(f.idx) == 0 {
		return s.z, 0, nil
	}
	if !f.ok {
		return nil, 0, errors.New("solve: Gram block is singular (components are collinear)")
	}
	np := len(f.idx)
	y := s.rhs[:np]
	// b_P − G_{P,F} x_F moves the fixed variables to the right-hand side.
	for a, ja := range f.idx {
		v := s.b[ja]
		for _, j := range s.nz {
			v -= s.g[ja*s.k+j] * fixedVal[j]
		}
		y[a] = v
	}
	cholSolve(f.l, f.u, np, y)
	mu := 0.0
	if s.p.Equality != nil {
		target := s.total(c)
		for j := 0; j < s.k; j++ {
			target -= s.p.Equality[j] * fixedVal[j]
		}
		// den = aᵀ G_PP⁻¹ a is zero only when every passive variable has
		// closure weight zero (an inert component): the closure then does
		// not involve this passive set and there is no multiplier.
		if f.den > 0 {
			ay := 0.0
			for a, ja := range f.idx {
				ay += s.p.Equality[ja] * y[a]
			}
			mu = (ay - target) / f.den
			for a := range y {
				y[a] -= mu * f.az[a]
			}
		}
	}
	for a, ja := range f.idx {
		s.z[ja] = y[a]
	}
	return s.z, mu, nil
}

// column solves problem column c and writes it into x.
func (s *solver) column(c int, x *mat.Dense) error {
	free, fv := s.loadColumn(c)
	cur := s.x
	if err := s.feasibleStart(c, free, fv, cur); err != nil {
		return err
	}
	st := activeSet{passive: free, added: -1}
	s.warmStart(c, free, fv, cur, &st)
	tol := s.kktTolerance()
	limit := 6*s.k + 20
	for outer := 0; outer < limit; outer++ {
		if err := s.toPassiveMinimiser(c, fv, cur, limit, &st); err != nil {
			return err
		}
		best := s.mostViolated(free, cur, tol, &st)
		if best < 0 {
			s.put(x, c, cur)
			if s.p.Passive != nil {
				s.p.Passive[c] = st.passive
			}
			return nil
		}
		st.passive |= 1 << uint(best)
		st.added = best
	}
	return fmt.Errorf("solve column %d (%d passive): %w", c, bits.OnesCount64(st.passive), ErrNotConverged)
}

// put writes column c's answer v into x (row c when the problem is in rows).
func (s *solver) put(x *mat.Dense, c int, v []float64) {
	if s.p.rows {
		copy(x.RawRowView(c)[:s.k], v)
		return
	}
	for j := 0; j < s.k; j++ {
		x.Set(j, c, v[j])
	}
}

// solveRows is SolveMany for right-hand sides given as the rows of bt
// (p × k); the answer is p × k too, written into out when it is not nil.
func solveRows(p Problem, bt, out *mat.Dense) (*mat.Dense, error) {
	p.B, p.rows = bt, true
	return solveMany(p, out)
}

// activeSet is where one column's solve stands between its steps.
type activeSet struct {
	passive uint64 // the variables off their bound
	// banned holds variables that were just freed and at once wanted to
	// turn negative: with nearly collinear components rounding makes the
	// KKT test and the passive solve disagree, and freeing the same
	// variable again would cycle. Lawson & Hanson (1974, ch. 23, step 6)
	// guard against it the same way; the ban lasts until the point moves.
	banned uint64
	added  int // the variable the last KKT step freed (−1: none yet)
	// warm says that s.z holds the solve on passive with multiplier warmMu
	// (the warm start's): the first passive solve would repeat it (same
	// set, same right-hand side) and is skipped.
	warm   bool
	warmMu float64
	mu     float64 // the closure's multiplier at the last passive solve
}

// loadColumn loads column c's right-hand side into s.b and returns the
// variables free to move and the values of the fixed ones (zero where free).
func (s *solver) loadColumn(c int) (free uint64, fv []float64) {
	k := s.k
	if s.p.rows {
		copy(s.b, s.p.B.RawRowView(c)[:k])
	} else {
		for j := 0; j < k; j++ {
			s.b[j] = s.p.B.At(j, c)
		}
	}
	fv = s.fv
	for j := 0; j < k; j++ {
		fv[j] = 0
		if s.p.FixMask != nil && s.p.FixMask[j] != nil && s.p.FixMask[j][c] {
			fv[j] = s.p.Fixed.At(j, c)
			continue
		}
		free |= 1 << uint(j)
	}
	s.setFixed(fv)
	return free, fv
}

// feasibleStart writes into cur a feasible start: zero for plain NNLS; for
// closure, the remaining total shared evenly over the free variables, which
// is strictly interior.
func (s *solver) feasibleStart(c int, free uint64, fv, cur []float64) error {
	k := s.k
	for j := 0; j < k; j++ {
		cur[j] = fv[j]
	}
	if s.p.Equality == nil {
		return nil
	}
	rest := s.total(c)
	wsum := 0.0
	for j := 0; j < k; j++ {
		if free&(1<<uint(j)) != 0 {
			wsum += s.p.Equality[j]
		} else {
			rest -= s.p.Equality[j] * fv[j]
		}
	}
	if wsum == 0 {
		if math.Abs(rest) > 1e-9*math.Max(1, math.Abs(s.total(c))) {
			return fmt.Errorf("solve: closure cannot hold: every component is fixed in column %d", c)
		}
		return nil
	}
	if rest < 0 {
		rest = 0
	}
	for j := 0; j < k; j++ {
		if free&(1<<uint(j)) != 0 {
			cur[j] = rest / wsum
		}
	}
	return nil
}

// warmStart accepts the previous passive set of column c if its minimiser
// is feasible; the KKT check decides whether it is optimal.
func (s *solver) warmStart(c int, free uint64, fv, cur []float64, st *activeSet) {
	if s.p.Passive == nil || s.p.Passive[c]&free == 0 {
		return
	}
	set := s.p.Passive[c] & free
	z, m, err := s.solvePassive(set, c, fv)
	if err != nil {
		return
	}
	for j := 0; j < s.k; j++ {
		if set&(1<<uint(j)) != 0 && s.nonneg(j) && z[j] < 0 {
			return
		}
	}
	copy(cur, z)
	st.passive, st.warm, st.warmMu = set, true, m
}

// kktTolerance is the gradient a bound variable may have and stay bound:
// 10⁻¹² of the largest of |b_j| and G_jj (math.Max's order does not matter,
// it selects, and a NaN stays NaN as it would there).
func (s *solver) kktTolerance() float64 {
	scale := s.gDiag
	for _, v := range s.b[:s.k] {
		if v = math.Abs(v); v > scale || v != v {
			scale = v
		}
	}
	return 1e-12 * math.Max(scale, 1e-300)
}

// toPassiveMinimiser moves cur toward the passive-set minimiser, dropping
// the variables that would turn negative (Lawson & Hanson's inner loop),
// until the minimiser itself is feasible and cur is it.
func (s *solver) toPassiveMinimiser(c int, fv, cur []float64, limit int, st *activeSet) error {
	k := s.k
	for inner := 0; ; inner++ {
		if inner > limit {
			return fmt.Errorf("solve column %d: %w", c, ErrNotConverged)
		}
		z, m, err := s.z, st.warmMu, error(nil)
		if !st.warm {
			z, m, err = s.solvePassive(st.passive, c, fv)
		}
		st.warm = false
		if err != nil {
			return err
		}
		if inner == 0 && st.added >= 0 && s.nonneg(st.added) && z[st.added] <= 0 {
			st.passive &^= 1 << uint(st.added)
			st.banned |= 1 << uint(st.added)
			if z, m, err = s.solvePassive(st.passive, c, fv); err != nil {
				return err
			}
		}
		st.mu = m
		alpha, blocker := 1.0, -1
		for j := 0; j < k; j++ {
			if st.passive&(1<<uint(j)) != 0 && s.nonneg(j) && z[j] < 0 {
				t := cur[j] / (cur[j] - z[j])
				if t < alpha {
					alpha, blocker = t, j
				}
			}
		}
		if blocker < 0 {
			if movedFrom(cur, z, st.passive) {
				st.banned = 0
			}
			copy(cur, z)
			return nil
		}
		if alpha > 0 {
			st.banned = 0
		}
		for j := 0; j < k; j++ {
			if st.passive&(1<<uint(j)) != 0 {
				cur[j] += alpha * (z[j] - cur[j])
			}
		}
		cur[blocker] = 0
		st.passive &^= 1 << uint(blocker)
		for j := 0; j < k; j++ {
			if st.passive&(1<<uint(j)) != 0 && s.nonneg(j) && cur[j] <= 0 && z[j] < 0 {
				cur[j] = 0
				st.passive &^= 1 << uint(j)
			}
		}
	}
}

// mostViolated returns the bound free variable whose gradient w = b − G x − μ a
// (KKT: w ≤ 0 on the active bounds) is largest above tol, or −1 when none is.
func (s *solver) mostViolated(free uint64, cur []float64, tol float64, st *activeSet) int {
	k := s.k
	best, bestW := -1, tol
	for j := 0; j < k; j++ {
		bit := uint64(1) << uint(j)
		if free&bit == 0 || st.passive&bit != 0 || st.banned&bit != 0 {
			continue
		}
		w := s.b[j]
		for i := 0; i < k; i++ {
			w -= s.g[j*k+i] * cur[i]
		}
		if s.p.Equality != nil {
			w -= st.mu * s.p.Equality[j]
		}
		if w > bestW {
			best, bestW = j, w
		}
	}
	return best
}

// movedFrom reports whether z differs from cur on the passive set.
func movedFrom(cur, z []float64, passive uint64) bool {
	for j := range cur {
		if passive&(1<<uint(j)) != 0 && cur[j] != z[j] {
			return true
		}
	}
	return false
}

// recover solves column c again after the active-set method reached its
// iteration limit, which happens only when rounding makes nearly collinear
// components (real baselines, a rank set too high) cycle between passive
// sets. First the exact Lawson–Hanson solver (NNLS) on a square factor of
// the Gram block, G = L Lᵀ, so ‖Lᵀx − L⁻¹b‖² = xᵀGx − 2bᵀx + const, with
// closure added as a heavily weighted row (the weighting method of Lawson &
// Hanson 1974, ch. 22) and the result then polished on its passive set so
// that closure holds exactly; then, if that fails too, the same problem
// with a tiny ridge on G. Either answer is feasible, and the first is the
// minimiser to rounding.
func (s *solver) recover(c int, x *mat.Dense, cause error) error {
	if s.recoverExact(c, x) {
		return nil
	}
	for _, rel := range []float64{1e-12, 1e-9, 1e-6} {
		p := s.p
		p.G = ridged(s.p.G, rel)
		p.Passive = nil
		r := newSolver(p, s.k)
		if err := r.column(c, x); err == nil {
			if s.p.Passive != nil {
				s.p.Passive[c] = 0
			}
			return nil
		}
	}
	return cause
}

// recoverExact is recover's Lawson–Hanson step; false when it does not
// apply (unconstrained variables) or fails.
func (s *solver) recoverExact(c int, x *mat.Dense) bool {
	idx, fv, ok := s.recoverFree(c)
	if !ok {
		return false
	}
	l, rhs, diag := s.freeGramBlock(idx, fv)
	if !(diag > 0) || !choleskyRidged(l, len(idx), diag) {
		return false
	}
	a, d, ok := s.squareRootProblem(c, idx, fv, l, rhs, diag)
	if !ok {
		return false
	}
	sol, err := NNLS(a, d)
	if err != nil {
		return false
	}
	out := append([]float64(nil), fv...)
	var mask uint64
	for q, j := range idx {
		out[j] = sol[q]
		if sol[q] > 0 {
			mask |= 1 << uint(j)
		}
	}
	if s.p.Equality != nil && mask != 0 {
		s.polishClosure(c, mask, fv, out)
	}
	s.put(x, c, out)
	if s.p.Passive != nil {
		s.p.Passive[c] = mask
	}
	return true
}

// recoverFree lists column c's free variables (idx) and holds the fixed
// ones' values (fv, zero for the free); false when a free variable is
// unconstrained, which Lawson–Hanson does not take, or none is free.
func (s *solver) recoverFree(c int) (idx []int, fv []float64, ok bool) {
	k := s.k
	fv = make([]float64, k)
	for j := 0; j < k; j++ {
		if s.p.FixMask != nil && s.p.FixMask[j] != nil && s.p.FixMask[j][c] {
			fv[j] = s.p.Fixed.At(j, c)
			continue
		}
		if !s.nonneg(j) {
			return nil, nil, false
		}
		idx = append(idx, j)
	}
	return idx, fv, len(idx) > 0
}

// freeGramBlock is the Gram block of the free variables (row-major), their
// right-hand side with the fixed variables' share taken off, and the
// block's largest diagonal entry (the ridges' and closure weight's scale).
func (s *solver) freeGramBlock(idx []int, fv []float64) (l, rhs []float64, diag float64) {
	k, np := s.k, len(idx)
	l = make([]float64, np*np)
	rhs = make([]float64, np)
	for a, ja := range idx {
		for b, jb := range idx {
			l[a*np+b] = s.g[ja*k+jb]
		}
		diag = math.Max(diag, s.g[ja*k+ja])
		rhs[a] = s.b[ja]
		for j := 0; j < k; j++ {
			rhs[a] -= s.g[ja*k+j] * fv[j]
		}
	}
	return l, rhs, diag
}

// choleskyRidged factors the np × np block l in place, L Lᵀ, adding a
// ridge of 1e-14, 1e-12, … 1e-8 times diag to the diagonal when rounding
// leaves it not positive definite (collinear components); false when even
// the largest ridge does not.
func choleskyRidged(l []float64, np int, diag float64) bool {
	g0 := append([]float64(nil), l...)
	ok := cholesky(l, np)
	for ridge := 1e-14; !ok && ridge <= 1e-8; ridge *= 100 {
		copy(l, g0)
		for a := 0; a < np; a++ {
			l[a*np+a] += ridge * diag
		}
		ok = cholesky(l, np)
	}
	return ok
}

// squareRootProblem is the least-squares problem ‖A x − d‖² with A = Lᵀ
// and d = L⁻¹ rhs (forward substitution), whose normal equations are the
// block's; with closure, one more row w·a = w·(total − fixed share),
// with w = 10⁴·√diag over the largest closure weight, heavy against the
// block so that closure nearly holds (Lawson & Hanson's weighting). False when the closure weights of the
// free variables are not positive.
func (s *solver) squareRootProblem(c int, idx []int, fv, l, rhs []float64, diag float64) (*mat.Dense, []float64, bool) {
	np := len(idx)
	rows := np
	if s.p.Equality != nil {
		rows++
	}
	a := mat.NewDense(rows, np, nil)
	d := make([]float64, rows)
	for i := 0; i < np; i++ {
		v := rhs[i]
		for q := 0; q < i; q++ {
			v -= l[i*np+q] * d[q]
		}
		d[i] = v / l[i*np+i]
		for j := 0; j <= i; j++ {
			a.Set(j, i, l[i*np+j])
		}
	}
	if s.p.Equality == nil {
		return a, d, true
	}
	target := s.total(c)
	amax := 0.0
	for j := 0; j < s.k; j++ {
		target -= s.p.Equality[j] * fv[j]
	}
	for _, j := range idx {
		amax = math.Max(amax, s.p.Equality[j])
	}
	if !(amax > 0) {
		return nil, nil, false
	}
	w := 1e4 * math.Sqrt(diag) / amax
	for q, j := range idx {
		a.Set(np, q, w*s.p.Equality[j])
	}
	d[np] = w * target
	return a, d, true
}

// polishClosure replaces out by the exact closure-constrained minimiser on
// Lawson–Hanson's passive set when that stays feasible: the weighted row
// holds closure only nearly, the passive set's minimiser exactly.
func (s *solver) polishClosure(c int, mask uint64, fv, out []float64) {
	s.setFixed(fv)
	z, _, err := s.solvePassive(mask, c, fv)
	if err != nil {
		return
	}
	for j := 0; j < s.k; j++ {
		if mask&(1<<uint(j)) != 0 && z[j] < 0 {
			return
		}
	}
	copy(out, z)
}
