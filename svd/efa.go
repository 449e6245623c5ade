package svd

import (
	"errors"
	"fmt"
	"math"

	"github.com/bandsolve/bandsolve/internal/fanout"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"
)

// EFAResult holds evolving factor analysis curves (Gampp, Maeder, Meyer & Zuberbühler,
// Talanta 1985; Maeder, Anal. Chem. 1987).
type EFAResult struct {
	// Forward row i: log10 of the singular values of rows 0..i (descending).
	// Backward row i: log10 of the singular values of rows i..n−1.
	// Values at or below Floor are reported as log10(Floor), so there is never −Inf.
	Forward, Backward *mat.Dense // n x f
	Floor             float64    // smallest reported singular value: s_1·1e−15 (1e−300 for an all-zero matrix)
	Exact             bool       // true: exact singular values; false: of the projection onto the leading Columns right singular vectors
	Columns           int        // dimension of the row space used (min(n,m) when exact)
	Sigma             float64    // noise standard deviation estimated from D (used by Windows when noiseLevel ≤ 0)
	n, m              int
	fac               *Factors // the factors the sweeps used, handed on to InitialProfiles
}

// efaExactBudget bounds the flops of exact EFA: about a second of small SVDs.
const efaExactBudget = 1.5e9

// EFA computes forward and backward evolving factor analysis with maxFactors values per row
// (0 = min(n, m, 8)).
//
// Why it is cheap: with D = Y Vᵀ, Y = U S (n x c) and V orthonormal, the first i rows satisfy
// D_i = Y_i Vᵀ and so have the singular values of the small matrix Y_i. Rows are added one at
// a time to the triangular factor R of Y_i by Givens rotations (R is the QR factor, so no
// squaring of the condition number as a Gram matrix would do), and the singular values of the
// at most c x c matrix R are computed at each step. With c = min(n, m) this is exact. When that
// would cost more than ~1.5e9 flops, Y is the projection onto the leading p = max(2f, f+20)
// right singular vectors (randomized SVD): signal values are unchanged, noise values are lower
// bounds of the exact ones (a projection cannot raise singular values), so Windows' noise
// threshold, taken from the full m columns, stays conservative.
func EFA(d *mat.Dense, maxFactors int) (*EFAResult, error) {
	n, m, c, nf, err := efaArgs(d, maxFactors)
	if err != nil {
		return nil, err
	}
	exact := float64(n)*float64(m)*float64(c) <= exactWork && efaCost(n, c) <= efaExactBudget
	var fac *Factors
	if exact {
		fac, err = Decompose(d, DecomposeOptions{Method: MethodExact})
	} else {
		p := min(c, max(2*nf, nf+20))
		fac, err = Decompose(d, DecomposeOptions{Method: MethodRandomized, MaxFactors: p})
	}
	if err != nil {
		return nil, fmt.Errorf("svd: EFA: %w", err)
	}
	return efaFromFactors(d, fac, nf, exact)
}

// EFAFrom is EFA with the factors of d already at hand (from Decompose), so
// that a large matrix is not decomposed once more: a randomized SVD is
// several passes over the data, the sweeps themselves only touch the n × p
// scores. Full factors give the exact sweep where EFA would use it; otherwise
// the leading min(len(f.S), max(2·maxFactors, maxFactors+20)) factors give
// the projected sweep, with the same guarantees as in EFA (signal values
// unchanged when they lie in the span, noise values lower bounds).
func EFAFrom(d *mat.Dense, f *Factors, maxFactors int) (*EFAResult, error) {
	n, m, c, nf, err := efaArgs(d, maxFactors)
	if err != nil {
		return nil, err
	}
	if f == nil || f.U == nil || f.V == nil {
		return nil, fmt.Errorf("svd: EFA: no factors given")
	}
	if un, _ := f.U.Dims(); un != n {
		return nil, fmt.Errorf("svd: EFA: factors have %d rows, the data %d", un, n)
	}
	if vm, _ := f.V.Dims(); vm != m {
		return nil, fmt.Errorf("svd: EFA: factors have %d columns, the data %d", vm, m)
	}
	fac, exact, err := efaFactors(f, n, m, c, nf)
	if err != nil {
		return nil, err
	}
	return efaFromFactors(d, fac, nf, exact)
}

// EFAOfFactors is EFAFrom without the matrix: the sweeps need only the
// scores U S and the dimensions, so factors of a matrix that is no longer
// held (the noise-scaled √A D √B of weighted data, Wentzell et al.,
// J. Chemometrics 1997) serve as well. Without the matrix no noise level
// is estimated (Sigma is 0): give it to Windows (1 for noise-scaled data).
func EFAOfFactors(f *Factors, maxFactors int) (*EFAResult, error) {
	if f == nil || f.U == nil || f.V == nil {
		return nil, fmt.Errorf("svd: EFA: no factors given")
	}
	if maxFactors < 0 {
		return nil, fmt.Errorf("svd: EFA: maxFactors %d is negative", maxFactors)
	}
	n, _ := f.U.Dims()
	m, _ := f.V.Dims()
	c := min(n, m)
	nf := maxFactors
	if nf == 0 {
		nf = min(c, 8)
	}
	nf = min(nf, c)
	fac, exact, err := efaFactors(f, n, m, c, nf)
	if err != nil {
		return nil, err
	}
	return efaSweeps(fac, n, m, nf, exact)
}

// efaFactors decides whether the sweeps can afford every factor (exact)
// and otherwise keeps the leading max(2nf, nf+20) factors, shared by EFA
// of a held matrix and of factors alone.
func efaFactors(f *Factors, n, m, c, nf int) (fac *Factors, exact bool, err error) {
	exact = f.Full() && float64(n)*float64(m)*float64(c) <= exactWork && efaCost(n, c) <= efaExactBudget
	p := len(f.S)
	if !exact {
		p = min(p, max(2*nf, nf+20))
	}
	if p < nf {
		return nil, false, fmt.Errorf("svd: EFA: %d factors given, %d curves asked", len(f.S), nf)
	}
	fac = f
	if p < len(f.S) {
		fac = truncate(f.U, f.S, f.V, p)
		fac.Method, fac.FrobeniusSq = f.Method, f.FrobeniusSq
	}
	return fac, exact, nil
}

// efaArgs checks EFA's arguments and returns the sizes and the number of
// curves: maxFactors, or 8 when 0, never more than min(n, m).
func efaArgs(d *mat.Dense, maxFactors int) (n, m, c, nf int, err error) {
	if err := checkMatrix(d); err != nil {
		return 0, 0, 0, 0, fmt.Errorf("svd: EFA: %w", err)
	}
	if maxFactors < 0 {
		return 0, 0, 0, 0, fmt.Errorf("svd: EFA: maxFactors %d is negative", maxFactors)
	}
	n, m = d.Dims()
	c = min(n, m)
	nf = maxFactors
	if nf == 0 {
		nf = min(c, 8)
	}
	return n, m, c, min(nf, c), nil
}

func efaFromFactors(d *mat.Dense, fac *Factors, nf int, exact bool) (*EFAResult, error) {
	n, m := d.Dims()
	res, err := efaSweeps(fac, n, m, nf, exact)
	if err != nil {
		return nil, err
	}
	if fac.FrobeniusSq > 0 {
		res.Sigma = noiseSigma(d, fac)
	}
	return res, nil
}

// efaSweeps runs the forward and backward sweeps on the scores of fac, the
// factors of an n × m matrix.
func efaSweeps(fac *Factors, n, m, nf int, exact bool) (*EFAResult, error) {
	var err error
	p := len(fac.S)
	y := mat.NewDense(n, p, nil)
	for i := 0; i < n; i++ {
		for k := 0; k < p; k++ {
			y.Set(i, k, fac.U.At(i, k)*fac.S[k])
		}
	}
	floor := 1e-300
	if len(fac.S) > 0 && fac.S[0] > 0 {
		floor = fac.S[0] * 1e-15
	}
	res := &EFAResult{Floor: floor, Exact: exact, Columns: p, n: n, m: m, fac: fac}
	// The two sweeps share nothing but y (read only): one goroutine each,
	// and each sweep's arithmetic is the same whichever runs first.
	var errB error
	done := make(chan struct{})
	var fault fanout.Fault // the backward sweep's panic, raised again here
	go func() {
		defer close(done)
		defer fault.Catch(nil)
		res.Backward, errB = evolve(y, nf, floor, true)
	}()
	res.Forward, err = evolve(y, nf, floor, false)
	<-done
	fault.Raise()
	if err != nil {
		return nil, fmt.Errorf("svd: EFA forward: %w", err)
	}
	if errB != nil {
		return nil, fmt.Errorf("svd: EFA backward: %w", errB)
	}
	return res, nil
}

// noiseSigma is the data-only estimate of EstimateRank (no pre-reaction rows known).
func noiseSigma(d *mat.Dense, f *Factors) float64 {
	n, m := d.Dims()
	var s float64
	if f.Full() {
		s = sigmaFromSpectrum(f.S, n, m)
	} else {
		k := len(f.S)
		s = math.Sqrt(f.TailSq(k) / (float64(n-k) * float64(m-k)))
	}
	if n >= 3 {
		s = math.Min(s, sigmaFromRowPairs(d, 0, n, true))
	}
	return s
}

// efaCost estimates the flops of both sweeps with the full row space: a (w x c) SVD per row,
// w = min(i, c), about 4·w²·c flops, plus the Givens updates.
func efaCost(n, c int) float64 {
	var t float64
	for i := 1; i <= n; i++ {
		w := float64(min(i, c))
		t += 4*w*w*float64(c) + 6*float64(c)*float64(c)
	}
	return 2 * t
}

// evolve returns log10 singular values of growing leading (or trailing) row blocks of y.
// Once the blocks have as many rows as columns, their singular values are those of the
// triangular factor R, taken two rows at a time (squareValues.pair): R of the first row of
// a pair is held while the second row is added.
func evolve(y *mat.Dense, nf int, floor float64, backward bool) (*mat.Dense, error) {
	n, p := y.Dims()
	out := mat.NewDense(n, nf, nil)
	r := mat.NewDense(p, p, nil) // upper-triangular factor of the rows seen so far
	held := mat.NewDense(p, p, nil)
	heldRow := -1 // the row whose R is held, waiting for the next one
	row := make([]float64, p)
	var sv mat.SVD
	sq := newSquareValues(p)
	buf, heldBuf := make([]float64, p), make([]float64, p)
	logFloor := math.Log10(floor)
	put := func(i int, vals []float64) {
		for k := 0; k < nf; k++ {
			v := logFloor
			if k < len(vals) && vals[k] > floor {
				v = math.Log10(vals[k])
			}
			out.Set(i, k, v)
		}
	}
	// values are squareValues' when ok, else mat.SVD's of blk.
	values := func(vals []float64, ok bool, blk mat.Matrix) ([]float64, error) {
		if ok {
			return vals, nil
		}
		if !sv.Factorize(blk, mat.SVDNone) {
			return nil, errors.New("SVD of the triangular factor did not converge")
		}
		return sv.Values(nil), nil
	}
	for step := 0; step < n; step++ {
		i := step
		if backward {
			i = n - 1 - step
		}
		copy(row, y.RawRowView(i))
		givensAppend(r, row)
		var vals []float64
		var err error
		switch {
		case step+1 < p:
			// While fewer rows than columns have been seen, the block itself is the
			// smaller matrix (Givens may park a row anywhere in R when R is rank-deficient).
			blk := y.Slice(0, i+1, 0, p)
			if backward {
				blk = y.Slice(i, n, 0, p)
			}
			vals, err = values(nil, false, blk)
		case heldRow < 0 && step+1 < n: // wait for the next row
			held.Copy(r)
			heldRow = i
			continue
		case heldRow < 0: // the last row, alone
			vals, err = values(buf, sq.values(r, buf), r)
		default:
			ok1, ok2 := sq.pair(held, r, heldBuf, buf)
			var first []float64
			if first, err = values(heldBuf, ok1, held); err != nil {
				return nil, err
			}
			put(heldRow, first)
			heldRow = -1
			vals, err = values(buf, ok2, r)
		}
		if err != nil {
			return nil, err
		}
		put(i, vals)
	}
	return out, nil
}

// squareValues takes the singular values of one p × p matrix after another
// by the steps LAPACK's Dgesvd takes for a square matrix without vectors
// (its path 10: bidiagonal reduction by Dgebrd, then Dbdsqr, which hands
// the values to the dqds algorithm of Dlasq1), with its workspace sized by
// Dgesvd's own query, so the values are mat.SVD's to the bit. What is
// spared is per call: mat.SVD's copy of the matrix and its workspace query
// (which sizes every path's subroutines), a third of EFA's time for the
// 4000 windows of 24 columns at 2000 rows; and dqds is bidiagonalValues,
// gonum's Dlasq1 with its minima inlined, a fifth of what remained, run on
// two matrices at once (pair), which overlaps their chains of divisions.
type squareValues struct {
	p       int
	a, work [2][]float64 // two of everything, for pair
}

func newSquareValues(p int) *squareValues {
	q := &squareValues{p: p}
	if p == 0 {
		return q
	}
	work := []float64{0}
	a := blas64.General{Rows: p, Cols: p, Stride: p, Data: make([]float64, p*p)}
	lapack64.Gesvd(lapack.SVDNone, lapack.SVDNone, a, blas64.General{}, blas64.General{}, make([]float64, p), work, -1)
	for k := range q.a {
		q.a[k] = make([]float64, p*p)
		q.work[k] = make([]float64, int(work[0]))
	}
	return q
}

// values puts the singular values of r (p × p) into s, descending, and
// says whether it did: not when Dgesvd would first scale r (its largest
// |entry| outside [2⁻⁴⁵⁸, 2⁴⁵⁸]; here anything outside [1e-100, 1e100]
// is left to mat.SVD, a margin on the safe side) or when dqds did not
// converge, where mat.SVD's full routine decides.
func (q *squareValues) values(r *mat.Dense, s []float64) bool {
	if !q.bidiagonal(0, r, s) {
		return false
	}
	return bidiagonalValues(s[:q.p], q.work[0][:q.p], q.work[0][q.p:]) == 0
}

// pair is values of r1 into s1 and of r2 into s2, with the two dqds runs
// side by side (bidiagonalValuesPair); the values are each alone's.
func (q *squareValues) pair(r1, r2 *mat.Dense, s1, s2 []float64) (ok1, ok2 bool) {
	p := q.p
	ok1, ok2 = q.bidiagonal(0, r1, s1), q.bidiagonal(1, r2, s2)
	switch {
	case ok1 && ok2:
		info1, info2 := bidiagonalValuesPair(s1[:p], q.work[0][:p], q.work[0][p:], s2[:p], q.work[1][:p], q.work[1][p:])
		return info1 == 0, info2 == 0
	case ok1:
		return bidiagonalValues(s1[:p], q.work[0][:p], q.work[0][p:]) == 0, false
	case ok2:
		return false, bidiagonalValues(s2[:p], q.work[1][:p], q.work[1][p:]) == 0
	}
	return false, false
}

// bidiagonal reduces a copy of r in slot k by Dgebrd, as Dgesvd's path 10
// (ie = 0, itauq = p, itaup = 2p, iwork = 3p): the diagonal into s, the
// superdiagonal into q.work[k][:p−1]; false (nothing done) when r is not
// p × p or Dgesvd would scale it first (see values).
func (q *squareValues) bidiagonal(k int, r *mat.Dense, s []float64) bool {
	p := q.p
	if rr, rc := r.Dims(); rr != p || rc != p || p < 2 || len(s) < p {
		return false
	}
	raw := r.RawMatrix()
	a := q.a[k]
	big := 0.0
	for i := 0; i < p; i++ {
		src := raw.Data[i*raw.Stride : i*raw.Stride+p]
		copy(a[i*p:(i+1)*p], src)
		for _, v := range src {
			if a := math.Abs(v); a > big {
				big = a
			}
		}
	}
	if !(big >= 1e-100 && big <= 1e100) {
		return false
	}
	w := q.work[k]
	bidiagonalize(p, a, s, w[:p], w[3*p:])
	return true
}

// givensAppend updates the triangular factor R of a row block to include one more row:
// each rotation mixes row k of R with the new row so that its k-th entry vanishes.
func givensAppend(r *mat.Dense, x []float64) {
	p := len(x)
	for k := 0; k < p; k++ {
		if x[k] == 0 {
			continue
		}
		rk := r.RawRowView(k)
		a, b := rk[k], x[k]
		h := math.Hypot(a, b)
		cs, sn := a/h, b/h
		for j := k; j < p; j++ {
			u, v := rk[j], x[j]
			rk[j] = cs*u + sn*v
			x[j] = -sn*u + cs*v
		}
		x[k] = 0
	}
}

// EFAWindows are presence windows derived from EFA curves.
type EFAWindows struct {
	Appear, Disappear []int    // per component: first and last row present (−1: not detected)
	LocalRank         []int    // per row: the number of components present
	Present           [][]bool // n x rank
	threshold         []float64
	sigma             float64
	fwd, bwd          *mat.Dense
	fac               *Factors
}

// Windows turns the EFA curves into presence windows for rank components. noiseLevel is the
// noise standard deviation per data point (RankReport.Sigma); ≤ 0 uses e.Sigma.
//
// The k-th forward value of the first w rows is significant when it exceeds the noise
// threshold σ·√((√w+√m)² + 2.02·(√w+√m)(1/√w+1/√m)^{1/3}) of a w x m block of white noise
// (Marchenko–Pastur edge plus the 99 % Tracy–Widom margin, as in EstimateRank). Component k
// appears at the first row from which its forward value stays significant; the k-th backward
// value gives, symmetrically, the last row of the k-th-to-last disappearing component. Maeder's
// (1987) first-in-first-out rule pairs them: the j-th component to appear is the j-th to
// disappear, so component j is present from Appear[j] to Disappear[j] inclusive.
func (e *EFAResult) Windows(rank int, noiseLevel float64) *EFAWindows {
	if e == nil || e.Forward == nil {
		return &EFAWindows{}
	}
	n, nf := e.Forward.Dims()
	rank = min(max(rank, 0), nf)
	sigma := noiseLevel
	if !(sigma > 0) || math.IsInf(sigma, 0) {
		sigma = e.Sigma
	}
	thr := make([]float64, n+1) // by block size w
	sm := math.Sqrt(float64(e.m))
	for w := 1; w <= n; w++ {
		sw := math.Sqrt(float64(w))
		edge := sw + sm
		t := sigma * math.Sqrt(edge*edge+twMargin99*edge*math.Cbrt(1/sw+1/sm))
		thr[w] = math.Log10(math.Max(t, e.Floor))
	}
	w := &EFAWindows{
		Appear: make([]int, rank), Disappear: make([]int, rank),
		LocalRank: make([]int, n), Present: make([][]bool, n),
		threshold: thr, sigma: sigma, fwd: e.Forward, bwd: e.Backward, fac: e.fac,
	}
	for i := range w.Present {
		w.Present[i] = make([]bool, rank)
	}
	appear := make([]int, rank)
	last := make([]int, rank)
	for k := 0; k < rank; k++ {
		appear[k] = -1
		for i := n - 1; i >= 0; i-- { // stays significant from appear[k] to the end
			if e.Forward.At(i, k) > thr[i+1] {
				appear[k] = i
			} else {
				break
			}
		}
		last[k] = -1
		for i := 0; i < n; i++ { // significant from the start down to last[k]
			if e.Backward.At(i, k) > thr[n-i] {
				last[k] = i
			} else {
				break
			}
		}
	}
	for j := 0; j < rank; j++ {
		a, b := appear[j], last[rank-1-j]
		if a >= 0 && b >= 0 && a > b {
			a, b = b, a // crossing curves: keep the span rather than an empty window
		}
		if a < 0 || b < 0 {
			a, b = -1, -1
		}
		w.Appear[j], w.Disappear[j] = a, b
		if a < 0 {
			continue
		}
		for i := a; i <= b; i++ {
			w.Present[i][j] = true
			w.LocalRank[i]++
		}
	}
	return w
}

// InitialProfiles returns n x rank initial concentration estimates from the windows (nil if
// d or the windows do not fit). Each profile is c_j = Y t_j with Y = U_r S_r the scores of
// the leading rank factors of d and t_j the direction whose scores vanish, up to noise, on
// the rows where component j is absent — the zero constraints of Maeder (1987). When those
// rows hold too few other components to fix t_j (a null space of several dimensions), t_j is
// the member of the null space whose profile best fits Maeder's combined EFA curve (the
// smaller of the forward and paired backward values inside the window). Components present
// on every row get the combined curve itself. Profiles are zero outside their window,
// clipped at zero inside it, and scaled to a maximum of 1.
func (w *EFAWindows) InitialProfiles(d *mat.Dense, rank int) *mat.Dense {
	if w == nil || d == nil || d.IsEmpty() || checkMatrix(d) != nil {
		return nil
	}
	n, _ := d.Dims()
	if rank <= 0 || rank > len(w.Appear) || len(w.Present) != n {
		return nil
	}
	// The factors EFA already computed serve when they are of this matrix:
	// on large data a fresh randomized SVD would cost more than the rest.
	fac := w.fac
	if fac != nil {
		un, _ := fac.U.Dims()
		vm, _ := fac.V.Dims()
		if _, m := d.Dims(); un != n || vm != m || len(fac.S) < rank {
			fac = nil
		}
	}
	if fac == nil {
		var err error
		if fac, err = Decompose(d, DecomposeOptions{MaxFactors: rank}); err != nil {
			return nil
		}
	}
	return w.profiles(fac, n, rank)
}

// FactorProfiles is InitialProfiles from the factors the EFA curves were
// computed from (EFAOfFactors), when the matrix itself is not held; nil when
// the windows came without factors or hold fewer than rank.
func (w *EFAWindows) FactorProfiles(rank int) *mat.Dense {
	if w == nil || w.fac == nil || rank <= 0 || rank > len(w.Appear) || len(w.fac.S) < rank {
		return nil
	}
	n, _ := w.fac.U.Dims()
	if len(w.Present) != n {
		return nil
	}
	return w.profiles(w.fac, n, rank)
}

// profiles is InitialProfiles with the factors settled.
func (w *EFAWindows) profiles(fac *Factors, n, rank int) *mat.Dense {
	r := min(len(fac.S), rank)
	y := mat.NewDense(n, r, nil)
	for i := 0; i < n; i++ {
		for k := 0; k < r; k++ {
			y.Set(i, k, fac.U.At(i, k)*fac.S[k])
		}
	}
	out := mat.NewDense(n, rank, nil)
	prof := make([]float64, n)
	for j := 0; j < rank; j++ {
		for i := range prof {
			prof[i] = 0
		}
		var absent []int
		for i := 0; i < n; i++ {
			if !w.Present[i][j] {
				absent = append(absent, i)
			}
		}
		comb := w.combined(j, rank, n)
		ok := false
		if r >= 2 && len(absent) > 0 && len(absent) < n {
			t := w.zeroDirection(y, absent, comb)
			if t != nil {
				var sum float64
				for i := 0; i < n; i++ {
					var s float64
					for k := 0; k < r; k++ {
						s += y.At(i, k) * t[k]
					}
					prof[i] = s
					if w.Present[i][j] {
						sum += s
					}
				}
				if sum < 0 {
					for i := range prof {
						prof[i] = -prof[i]
					}
				}
				ok = true
			}
		} else if r == 1 {
			var sum float64
			for i := 0; i < n; i++ {
				prof[i] = y.At(i, 0)
				sum += prof[i]
			}
			if sum < 0 {
				for i := range prof {
					prof[i] = -prof[i]
				}
			}
			ok = true
		}
		if !ok {
			copy(prof, comb)
		}
		var mx float64
		for i := range prof {
			if !w.Present[i][j] || prof[i] < 0 {
				prof[i] = 0
			}
			mx = math.Max(mx, prof[i])
		}
		if mx <= 0 {
			// Zero constraints left nothing positive: use the combined curve.
			copy(prof, comb)
			for _, v := range prof {
				mx = math.Max(mx, v)
			}
		}
		for i := range prof {
			if mx > 0 {
				out.Set(i, j, prof[i]/mx)
			}
		}
	}
	return out
}

// combined is Maeder's combined EFA curve of component j: inside its window the smaller of
// its forward and its (FIFO-paired) backward singular value, zero outside.
func (w *EFAWindows) combined(j, rank, n int) []float64 {
	g := make([]float64, n)
	if w.fwd == nil || w.Appear[j] < 0 {
		return g
	}
	for i := w.Appear[j]; i <= w.Disappear[j]; i++ {
		g[i] = math.Pow(10, math.Min(w.fwd.At(i, j), w.bwd.At(i, rank-1-j)))
	}
	return g
}

// zeroDirection returns the unit r-vector t for which the scores Y t vanish, up to noise, on
// the absent rows. When the absent rows hold fewer than r−1 other components the null space
// has several dimensions; then t is the member of it whose profile best fits the combined
// EFA curve g (least squares), which picks the component that rises where g rises.
func (w *EFAWindows) zeroDirection(y *mat.Dense, absent []int, g []float64) []float64 {
	n, r := y.Dims()
	sub := mat.NewDense(len(absent), r, nil)
	for a, i := range absent {
		sub.SetRow(a, y.RawRowView(i))
	}
	var sv mat.SVD
	// Only V is needed: the full U of a block of up to n rows would be n × n.
	if !sv.Factorize(sub, mat.SVDFullV) {
		return nil
	}
	vals := sv.Values(nil)
	var v mat.Dense
	sv.VTo(&v)
	// Singular values of the absent block below twice the noise edge of a block of that
	// size in r dimensions count as null.
	thr := 2 * w.sigma * (math.Sqrt(float64(len(absent))) + math.Sqrt(float64(r)))
	first := r - 1 // first null direction (at least the smallest one)
	for k := 0; k < r-1; k++ {
		if k >= len(vals) || vals[k] <= thr {
			first = k
			break
		}
	}
	if first == r-1 {
		t := make([]float64, r)
		for k := range t {
			t[k] = v.At(k, r-1)
		}
		return t
	}
	// Fit g with Y N z, N the null directions.
	nb := mat.DenseCopyOf(v.Slice(0, r, first, r))
	var yn mat.Dense
	yn.Mul(y, nb)
	var z mat.VecDense
	if err := z.SolveVec(&yn, mat.NewVecDense(n, g)); err != nil {
		return nil
	}
	var t mat.VecDense
	t.MulVec(nb, &z)
	nrm := mat.Norm(&t, 2)
	if !(nrm > 0) || math.IsInf(nrm, 0) {
		return nil
	}
	out := make([]float64, r)
	for k := range out {
		out[k] = t.AtVec(k) / nrm
	}
	return out
}
