package svd

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"sort"

	products "github.com/bandsolve/bandsolve/internal/product"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"
)

// Method names accepted by DecomposeOptions.Method and reported in Factors.Method.
const (
	MethodAuto       = "auto"
	MethodExact      = "exact"
	MethodGram       = "gram"
	MethodRandomized = "randomized"
)

// DefaultSeed is the seed of the randomized method when DecomposeOptions.Seed is 0,
// so that a zero-valued options struct still gives reproducible factors.
const DefaultSeed uint64 = 0x5eed_ba4d

// Randomized-SVD tuning after Halko, Martinsson & Tropp (SIAM Review 2011, §4.3–4.5):
// ten extra sample columns and two power iterations make the leading values accurate to
// many digits whenever they stand clear of the noise, at the cost of six passes over D.
const (
	randOversample = 10
	randPowerIters = 2
)

// exactWork is the n·m·min(n,m) product below which auto uses the full LAPACK SVD:
// about a tenth of a second of work, so small matrices always get the reference method.
const exactWork = 2e8

// Factors of D (n x m) = U diag(S) V^T, possibly truncated to r factors.
//
// Signs are fixed so that the largest-magnitude entry of each column of V is positive
// (first such entry on ties): the methods then agree on signs as well as on values.
type Factors struct {
	U           *mat.Dense // n x r
	S           []float64  // r singular values, descending
	V           *mat.Dense // m x r
	Method      string     // "exact", "gram" or "randomized"
	FrobeniusSq float64    // ||D||_F^2 of the full matrix (so tails are known without all values)
}

// Full reports whether S holds all min(n, m) singular values, so that tail statistics
// can use the individual values instead of FrobeniusSq alone.
func (f *Factors) Full() bool {
	if f == nil || f.U == nil || f.V == nil {
		return false
	}
	n, _ := f.U.Dims()
	m, _ := f.V.Dims()
	return len(f.S) == min(n, m)
}

// TailSq returns Σ_{j>k} s_j², the energy left after the first k factors, from
// FrobeniusSq − Σ_{j≤k} s_j² (exact identity for the SVD). It is clamped at zero because
// rounding can make the difference slightly negative for an exactly low-rank matrix.
func (f *Factors) TailSq(k int) float64 {
	k = min(max(k, 0), len(f.S))
	var lead float64
	for _, s := range f.S[:k] {
		lead += s * s
	}
	return math.Max(f.FrobeniusSq-lead, 0)
}

// DecomposeOptions selects the factorization.
type DecomposeOptions struct {
	MaxFactors int    // 0 = all
	Method     string // "" or "auto", "exact", "gram", "randomized"
	Seed       uint64 // seed of the randomized method; 0 = DefaultSeed
	// Start (m × p) holds directions the leading row space of D is known to lie
	// close to, such as another matrix's leading right singular vectors when D
	// differs from it by a known low-rank change. The randomized method then
	// opens its sketch with them, fills it up to MaxFactors + 10 columns with
	// random ones, and takes no power iteration (see randomizedSVD): two
	// passes over D instead of six. Ignored by the other methods; nil: a
	// random sketch.
	Start *mat.Dense
	// Screen, when it is a complete screen of D as it is (see Screen), stands
	// for the check that every entry is finite and, when summed, for the sum
	// of squares FrobeniusSq: two passes over D fewer. Of other dimensions, or
	// incomplete, it is not used.
	Screen *Screen
	// Beside (m × c) and BesideInto (n × c), when both are given, ask for
	// D Beside as well, written into BesideInto: internal/product's sums,
	// mat.Dense.Mul's bits. The randomized method forms it in its first
	// pass over D, as c more columns of the test matrix (each entry of a
	// product is its own sum, so the sketch keeps its bits), instead of a
	// pass of its own; the other methods form it apart.
	Beside, BesideInto *mat.Dense
	// Work (may be nil) keeps the randomized method's scratch matrices (the
	// test matrix, the sketches, the copy its small SVD overwrites) from one
	// decomposition to the next, so that a second decomposition of the same
	// shape takes memory already touched: 2.2 MB at 2000 × 3001. Not for
	// decompositions running at the same time.
	Work *Workspace
}

// Workspace is scratch memory for Decompose (DecomposeOptions.Work); the
// zero value is ready. Nothing Decompose returns lives in it.
type Workspace struct {
	bufs [workBuffers][]float64
}

// The randomized method's scratch matrices in a Workspace.
const (
	workOmega = iota // the test matrix Ω (m × l, and the columns beside), later the sketches of the row space
	workY            // the range's basis Y (n × l)
	workBoth         // D [Ω | beside] (n × l + c)
	workB            // Zᵀ, which the small SVD overwrites (l × m)
	workBuffers
)

// take is n float64 from buffer k of w, grown when short; fresh ones when
// w is nil. Their values are left as they were: every user overwrites
// them whole.
func (w *Workspace) take(k, n int) []float64 {
	if w == nil {
		return make([]float64, n)
	}
	w.bufs[k] = grow(w.bufs[k], n)
	return w.bufs[k]
}

// grow is buf[:n], in new memory when buf has not the room; the values are
// left as they were.
func grow(buf []float64, n int) []float64 {
	if cap(buf) < n {
		return make([]float64, n)
	}
	return buf[:n]
}

// Decompose picks by size: exact (gonum mat.SVD) for small matrices; for large ones the eigen-decomposition
// of the smaller Gram matrix (mat.EigenSym) or a randomized SVD with power iterations
// (Halko, Martinsson & Tropp, SIAM Review 2011). Deterministic (fixed seed), independent of GOMAXPROCS.
//
// Auto rule: exact when n·m·min(n,m) ≤ 2e8; otherwise randomized when MaxFactors+10 is at most a
// quarter of min(n,m) (a thin sketch is then far cheaper than forming the Gram matrix), else gram.
// The gram method squares the condition number: singular values below about 1e-8·s_1 lose
// relative accuracy, which does not matter for factor analysis where they are noise.
func Decompose(d *mat.Dense, opt DecomposeOptions) (*Factors, error) {
	scr := opt.Screen.of(d)
	if err := scr.check(d); err != nil {
		return nil, fmt.Errorf("svd: decompose: %w", err)
	}
	n, m := d.Dims()
	c := min(n, m)
	if opt.MaxFactors < 0 {
		return nil, fmt.Errorf("svd: decompose: MaxFactors %d is negative", opt.MaxFactors)
	}
	r := c
	if opt.MaxFactors > 0 && opt.MaxFactors < c {
		r = opt.MaxFactors
	}
	method := opt.Method
	switch method {
	case "", MethodAuto:
		switch {
		case float64(n)*float64(m)*float64(c) <= exactWork:
			method = MethodExact
		case r+randOversample <= c/4:
			method = MethodRandomized
		default:
			method = MethodGram
		}
	case MethodExact, MethodGram, MethodRandomized:
	default:
		return nil, fmt.Errorf("svd: decompose: unknown method %q (want auto, exact, gram or randomized)", opt.Method)
	}
	seed := opt.Seed
	if seed == 0 {
		seed = DefaultSeed
	}

	beside, besideInto, err := opt.besides(n, m)
	if err != nil {
		return nil, fmt.Errorf("svd: decompose: %w", err)
	}
	if beside != nil && method != MethodRandomized {
		products.MulTo(besideInto, d, beside)
	}
	var f *Factors
	switch method {
	case MethodExact:
		f, err = exactSVD(d, r)
	case MethodGram:
		f, err = gramSVD(d, r)
	case MethodRandomized:
		f, err = randomizedSVD(d, r, seed, opt.Start, beside, besideInto, opt.Work)
	}
	if err != nil {
		return nil, fmt.Errorf("svd: decompose (%s): %w", method, err)
	}
	f.Method = method
	if scr != nil && scr.sum {
		f.FrobeniusSq = scr.frob
	} else {
		f.FrobeniusSq = frobeniusSq(d)
	}
	fixSigns(f)
	return f, nil
}

// besides are Beside and BesideInto when both are given (nil, nil when
// either is not), checked against D's n × m.
func (opt DecomposeOptions) besides(n, m int) (beside, into *mat.Dense, err error) {
	if opt.Beside == nil || opt.BesideInto == nil {
		return nil, nil, nil
	}
	bm, c := opt.Beside.Dims()
	in, ic := opt.BesideInto.Dims()
	if bm != m || in != n || ic != c {
		return nil, nil, fmt.Errorf("beside is %d × %d and its product %d × %d for %d × %d data", bm, c, in, ic, n, m)
	}
	return opt.Beside, opt.BesideInto, nil
}

// checkMatrix rejects inputs that would otherwise panic inside gonum or poison the
// results with NaN.
func checkMatrix(d *mat.Dense) error {
	if d == nil {
		return errors.New("nil matrix")
	}
	if d.IsEmpty() {
		return errors.New("empty matrix")
	}
	n, _ := d.Dims()
	for i := 0; i < n; i++ {
		if err := rowError(d.RawRowView(i), i); err != nil {
			return err
		}
	}
	return nil
}

// rowError is checkMatrix's error for the first non-finite entry of row i (nil when
// all are finite).
func rowError(row []float64, i int) error {
	if finiteRow(row) {
		return nil
	}
	for j, v := range row {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("non-finite value %v at row %d, column %d", v, i, j)
		}
	}
	return nil
}

// finiteRow says whether every entry of x is finite: v − v is +0 for a
// finite v and NaN for ±Inf or NaN, so the sums stay +0 exactly when all
// are. Four sums in flight and no branch per entry: the test runs on every
// matrix decomposed, several times per analysis, and the per-entry
// IsNaN/IsInf test cost as much as a pass of the data.
func finiteRow(x []float64) bool {
	var z0, z1, z2, z3 float64
	j := 0
	for ; j+4 <= len(x); j += 4 {
		q := x[j : j+4 : j+4]
		z0 += q[0] - q[0]
		z1 += q[1] - q[1]
		z2 += q[2] - q[2]
		z3 += q[3] - q[3]
	}
	for ; j < len(x); j++ {
		z0 += x[j] - x[j]
	}
	return z0+z1+z2+z3 == 0
}

// frobeniusSq sums row by row in index order so that the value does not depend on
// blocking or goroutine scheduling.
func frobeniusSq(d *mat.Dense) float64 {
	n, _ := d.Dims()
	var s float64
	for i := 0; i < n; i++ {
		s = sumSquares(s, d.RawRowView(i))
	}
	return s
}

// sumSquares adds the squares of x to s in index order, the one loop frobeniusSq
// and Screen share (so that their sums are the same bits).
func sumSquares(s float64, x []float64) float64 {
	for _, v := range x {
		s += v * v
	}
	return s
}

func exactSVD(d *mat.Dense, r int) (*Factors, error) {
	var s mat.SVD
	if !s.Factorize(d, mat.SVDThin) {
		return nil, errors.New("LAPACK SVD did not converge")
	}
	vals := s.Values(nil)
	var u, v mat.Dense
	s.UTo(&u)
	s.VTo(&v)
	return truncate(&u, vals, &v, r), nil
}

func truncate(u *mat.Dense, vals []float64, v *mat.Dense, r int) *Factors {
	n, _ := u.Dims()
	m, _ := v.Dims()
	uu := mat.DenseCopyOf(u.Slice(0, n, 0, r))
	vv := mat.DenseCopyOf(v.Slice(0, m, 0, r))
	return &Factors{U: uu, S: append([]float64(nil), vals[:r]...), V: vv}
}

// gramSVD eigen-decomposes the smaller of D Dᵀ and DᵀD. The other side's vectors follow
// from D v = s u; for values at rounding level (s ≤ tol) that division is meaningless, so
// those vectors are completed to an orthonormal set by QR instead.
func gramSVD(d *mat.Dense, r int) (*Factors, error) {
	n, m := d.Dims()
	trans := n > m // work with DᵀD (m x m) when there are more rows than columns
	a := mat.Matrix(d)
	if trans {
		a = d.T()
	}
	p, q := a.Dims() // p ≤ q
	var g mat.Dense
	g.Mul(a, a.T())
	sym := mat.NewSymDense(p, nil)
	for i := 0; i < p; i++ {
		for j := i; j < p; j++ {
			sym.SetSym(i, j, g.At(i, j))
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(sym, true) {
		return nil, errors.New("symmetric eigen-decomposition did not converge")
	}
	lam := eig.Values(nil) // ascending
	var vec mat.Dense
	eig.VectorsTo(&vec)
	// Ascending -> descending with a stable order for equal values.
	idx := make([]int, p)
	for i := range idx {
		idx[i] = p - 1 - i
	}
	sort.SliceStable(idx, func(x, y int) bool { return lam[idx[x]] > lam[idx[y]] })
	vals := make([]float64, r)
	left := mat.NewDense(p, r, nil)
	for k := 0; k < r; k++ {
		vals[k] = math.Sqrt(math.Max(lam[idx[k]], 0))
		for i := 0; i < p; i++ {
			left.Set(i, k, vec.At(i, idx[k]))
		}
	}
	// right = aᵀ left / s. Its columns lose orthogonality like eps·s_1²/s_k², so they are
	// re-orthonormalized by Householder QR (in order of decreasing s, leaving the accurate
	// leading vectors as they are); columns with s at rounding level become an arbitrary
	// orthonormal completion, which is all they can be.
	right := mat.NewDense(q, r, nil)
	right.Mul(a.T(), left)
	for k := 0; k < r; k++ {
		if vals[k] > 0 {
			col := right.Slice(0, q, k, k+1).(*mat.Dense)
			col.Scale(1/vals[k], col)
		}
	}
	orthonormalizeKeepSigns(right)
	if trans {
		return &Factors{U: right, S: vals, V: left}, nil
	}
	return &Factors{U: left, S: vals, V: right}, nil
}

const eps = 0x1p-52

// randomizedSVD is Algorithm 4.4 (randomized subspace iteration) followed by Algorithm 5.1
// of Halko, Martinsson & Tropp (2011). Each power step re-orthonormalizes by Householder QR
// because plain powers (D Dᵀ)^q D Ω lose the smaller directions to rounding.
//
// start (m × p, may be nil) replaces the first p random columns of the test matrix Ω.
// For any Ω the range Q found obeys ‖(I − Q Qᵀ) D‖² ≤ ‖Σ₂‖² + ‖Σ₂ Ω₂ Ω₁⁺‖², Ω₁ and Ω₂
// being Ω's coordinates in the k leading right singular vectors and in the rest, Σ₂
// the values past the kth (Halko et al., Theorem 9.1, a deterministic bound; from
// memory). Power iterations are there to shrink the second term when Ω is random
// (each multiplies Σ₂ by (Σ₂/σ_k)²); a start that already spans the leading
// directions makes Ω₂ Ω₁⁺ as small as its misalignment, so none is taken, and the
// random columns keep the oversampling for what the start misses. On the
// 2000 × 3001 benchmark's scaled differences the leading values agreed with the
// random sketch's two iterations to six digits and the noise values came out
// closer to the edge (67.1 against 65.6 for the sixth, edge 99.5).
//
// beside (m × c, may be nil) rides along in the first pass as c more columns
// of Ω, and D beside is copied out into besideInto (n × c).
func randomizedSVD(d *mat.Dense, r int, seed uint64, start, beside, besideInto *mat.Dense, work *Workspace) (*Factors, error) {
	n, m := d.Dims()
	l := min(r+randOversample, min(n, m))
	rng := rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15))
	c := 0
	if beside != nil {
		_, c = beside.Dims()
	}
	omega := mat.NewDense(m, l+c, work.take(workOmega, m*(l+c)))
	raw := omega.RawMatrix()
	p, iters := 0, randPowerIters
	if start != nil {
		sm, sp := start.Dims()
		if sm != m {
			return nil, fmt.Errorf("start has %d rows for %d columns", sm, m)
		}
		p, iters = min(sp, l-randOversample/2), 0
	}
	for i := 0; i < m; i++ {
		row := raw.Data[i*raw.Stride : i*raw.Stride+l]
		for j := range row {
			if j < p {
				row[j] = start.At(i, j)
			} else {
				row[j] = rng.NormFloat64()
			}
		}
		if c > 0 {
			copy(raw.Data[i*raw.Stride+l:i*raw.Stride+l+c], beside.RawRowView(i)[:c])
		}
	}
	// The passes over D take internal/product's register-tiled kernels:
	// gonum's Dgemm's sums term for term (the same bits), without its
	// vector-kernel call per entry of D.
	y := firstPass(d, omega, l, besideInto, work)
	var qr qrWork
	qr.orthonormalize(y)
	// Ω is spent once Y is formed: its memory takes the row space's
	// sketches, and later the right vectors.
	z := mat.NewDense(m, l, raw.Data[:m*l])
	for it := 0; it < iters; it++ {
		products.MulTTo(z, d, y)
		qr.orthonormalize(z)
		products.MulTo(y, d, z)
		qr.orthonormalize(y)
	}
	// B = Yᵀ D is (Dᵀ Y)ᵀ entry for entry: each sum runs over the rows
	// of D in ascending order either way.
	products.MulTTo(z, d, y)
	return sketchFactors(y, z, r, work)
}

// firstPass is Y = D Ω for the first l columns of omega (n × l); its
// further columns, when there are any, are the product asked for beside
// the sketch, copied into besideInto.
func firstPass(d, omega *mat.Dense, l int, besideInto *mat.Dense, work *Workspace) *mat.Dense {
	n, _ := d.Dims()
	_, k := omega.Dims()
	y := mat.NewDense(n, l, work.take(workY, n*l))
	if k == l {
		products.MulTo(y, d, omega)
		return y
	}
	both := mat.NewDense(n, k, work.take(workBoth, n*k))
	products.MulTo(both, d, omega)
	y.Copy(both.Slice(0, n, 0, l))
	besideInto.Copy(both.Slice(0, n, l, k))
	return y
}

// sketchFactors are the leading r factors of D from its range's basis Y
// (n × l) and Z = Dᵀ Y (m × l), whose memory it reuses: B = Zᵀ = Ũ Σ Vᵀ by
// the LAPACK call mat.SVD's Factorize(B, SVDThin) makes (thinSVD), then
// U = Y Ũ. Only the r leading columns of Ũ and rows of Vᵀ are taken, each
// entry of U the same sum over Y's l columns as in the whole product (the
// columns of a product are independent), so the factors are the first r
// of the whole SVD's bit for bit, without the whole U and V formed first
// and copied: 2000 × 3001 at l = 34, 3 MB fewer per decomposition.
func sketchFactors(y, z *mat.Dense, r int, work *Workspace) (*Factors, error) {
	_, l := y.Dims()
	m, _ := z.Dims()
	b := mat.NewDense(l, m, work.take(workB, l*m))
	b.Copy(z.T()) // Factorize's own copy of Zᵀ
	vt := blas64.General{Rows: l, Cols: m, Stride: m, Data: z.RawMatrix().Data[:l*m]}
	vals, ub, ok := thinSVD(b.RawMatrix(), vt)
	if !ok {
		return nil, errors.New("SVD of the sketch did not converge")
	}
	// mat.Dense.Mul's bits (internal/product), without a vector call per
	// entry of Y with r products each: 2000 × 34 by r ≈ 26 took gonum's
	// Dgemm about 2 ms.
	n, _ := y.Dims()
	u := mat.NewDense(n, r, nil)
	products.MulTo(u, y, mat.NewDense(l, l, ub.Data).Slice(0, l, 0, r).(*mat.Dense))
	return &Factors{U: u, S: append([]float64(nil), vals[:r]...), V: rightVectors(vt, r)}, nil
}

// rightVectors is V (c × k) from the first k rows of Vᵀ as thinSVD writes them
// (vt, c columns): a new matrix, so that vt's lent memory may serve again.
func rightVectors(vt blas64.General, k int) *mat.Dense {
	v := mat.NewDense(vt.Cols, k, nil)
	vr := v.RawMatrix()
	for a := 0; a < k; a++ {
		for j, x := range vt.Data[a*vt.Stride : a*vt.Stride+vt.Cols] {
			vr.Data[j*vr.Stride+a] = x
		}
	}
	return v
}

// thinSVD is mat.SVD's Factorize(a, SVDThin) on a itself, which it
// overwrites (LAPACK's Dgesvd, jobs S and S, the workspace its query
// asks for: the call Factorize makes on its copy, so the same bits), with
// the right vectors' rows written into vt (min(r, c) × c, memory the caller
// lends). It returns the values and the left vectors (r × min(r, c)).
func thinSVD(a, vt blas64.General) (vals []float64, u blas64.General, ok bool) {
	k := min(a.Rows, a.Cols)
	u = blas64.General{Rows: a.Rows, Cols: k, Stride: k, Data: make([]float64, a.Rows*k)}
	vals = make([]float64, k)
	vt.Rows, vt.Cols = k, a.Cols
	work := []float64{0}
	lapack64.Gesvd(lapack.SVDStore, lapack.SVDStore, a, u, vt, vals, work, -1)
	work = make([]float64, int(work[0]))
	ok = lapack64.Gesvd(lapack.SVDStore, lapack.SVDStore, a, u, vt, vals, work, len(work))
	return vals, u, ok
}

// valuesInPlace is mat.SVD's Factorize(a, SVDNone) and Values on a itself,
// which it overwrites: the same LAPACK call (Dgesvd, no vectors, the
// workspace its query asks for), so the same bits, without the copy.
func valuesInPlace(a blas64.General) (vals []float64, ok bool) {
	vals = make([]float64, min(a.Rows, a.Cols))
	work := []float64{0}
	lapack64.Gesvd(lapack.SVDNone, lapack.SVDNone, a, blas64.General{}, blas64.General{}, vals, work, -1)
	work = make([]float64, int(work[0]))
	ok = lapack64.Gesvd(lapack.SVDNone, lapack.SVDNone, a, blas64.General{}, blas64.General{}, vals, work, len(work))
	return vals, ok
}

// orthonormalizeKeepSigns is orthonormalize with each Q column's sign chosen so that it
// points the same way as the column it replaced (R_kk ≥ 0).
func orthonormalizeKeepSigns(x *mat.Dense) {
	rows, cols := x.Dims()
	orig := mat.DenseCopyOf(x)
	orthonormalize(x)
	for k := 0; k < cols; k++ {
		var dot float64
		for i := 0; i < rows; i++ {
			dot += orig.At(i, k) * x.At(i, k)
		}
		if dot < 0 {
			for i := 0; i < rows; i++ {
				x.Set(i, k, -x.At(i, k))
			}
		}
	}
}

// orthonormalize overwrites the tall matrix x (rows ≥ cols) with the thin Q of its QR
// factorization.
func orthonormalize(x *mat.Dense) {
	var qr qrWork
	qr.orthonormalize(x)
}

// qrWork is orthonormalize's workspace, kept between the factorizations of
// one randomized SVD (five with the power iterations: three of Y, two of Z).
type qrWork struct {
	tau, work []float64
}

// orthonormalize is the package's orthonormalize with q's workspace: each
// LAPACK call gets a workspace of the length its query asks for (at least
// rows and cols), as before, so the blocking and the bits are the same.
func (q *qrWork) orthonormalize(x *mat.Dense) {
	rows, cols := x.Dims()
	raw := x.RawMatrix()
	a := blas64.General{Rows: rows, Cols: cols, Stride: raw.Stride, Data: raw.Data}
	q.tau = grow(q.tau, cols)
	tau := q.tau
	query := []float64{0}
	lapack64.Geqrf(a, tau, query, -1)
	lw := max(int(query[0]), rows, cols)
	q.work = grow(q.work, lw)
	lapack64.Geqrf(a, tau, q.work, lw)
	lapack64.Orgqr(a, tau, query, -1)
	lw = max(int(query[0]), rows, cols)
	q.work = grow(q.work, lw)
	lapack64.Orgqr(a, tau, q.work, lw)
}

// fixSigns makes the largest |v_jk| of every factor positive; singular vectors are only
// defined up to a common sign flip of u_k and v_k.
func fixSigns(f *Factors) {
	n, _ := f.U.Dims()
	m, r := f.V.Dims()
	for k := 0; k < r; k++ {
		best, at := -1.0, 0
		for j := 0; j < m; j++ {
			if a := math.Abs(f.V.At(j, k)); a > best {
				best, at = a, j
			}
		}
		if f.V.At(at, k) < 0 {
			for j := 0; j < m; j++ {
				f.V.Set(j, k, -f.V.At(j, k))
			}
			for i := 0; i < n; i++ {
				f.U.Set(i, k, -f.U.At(i, k))
			}
		}
	}
}
