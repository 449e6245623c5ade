package mcr

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"testing"

	"github.com/bandsolve/bandsolve/internal/vecmath"
	"gonum.org/v1/gonum/mat"
)

type scipyCase struct {
	Name  string      `json:"name"`
	M     int         `json:"m"`
	N     int         `json:"n"`
	A     [][]float64 `json:"A"`
	B     []float64   `json:"b"`
	X     []float64   `json:"x"`
	RNorm float64     `json:"rnorm"`
}

func loadScipy(t *testing.T) []scipyCase {
	t.Helper()
	raw, err := os.ReadFile("../testdata/nnls/scipy_nnls.json")
	if err != nil {
		t.Fatal(err)
	}
	var f struct {
		Cases []scipyCase `json:"cases"`
	}
	if err := json.Unmarshal(raw, &f); err != nil {
		t.Fatal(err)
	}
	if len(f.Cases) == 0 {
		t.Fatal("no reference cases")
	}
	return f.Cases
}

func denseOf(rows [][]float64) *mat.Dense {
	a := mat.NewDense(len(rows), len(rows[0]), nil)
	for i, r := range rows {
		a.SetRow(i, r)
	}
	return a
}

// Reference: scipy.optimize.nnls 1.10.1 (Debian python3-scipy), stored by
// testdata/nnls/make_reference.py.
func TestNNLSMatchesSciPy(t *testing.T) {
	for _, c := range loadScipy(t) {
		a := denseOf(c.A)
		x, err := NNLS(a, c.B)
		if err != nil {
			t.Fatalf("%s: %v", c.Name, err)
		}
		for j := range x {
			if math.Abs(x[j]-c.X[j]) > 1e-8*math.Max(1, math.Abs(c.X[j])) {
				t.Errorf("%s: x[%d] = %.12g, scipy %.12g", c.Name, j, x[j], c.X[j])
			}
		}
		r := residualNorm(a, x, c.B)
		if math.Abs(r-c.RNorm) > 1e-8*math.Max(1, c.RNorm) {
			t.Errorf("%s: ‖Ax−b‖ = %.12g, scipy %.12g", c.Name, r, c.RNorm)
		}
	}
}

// The normal-equation solver must give the same minimiser as scipy on the
// same problems (G = AᵀA, b = Aᵀd), all columns at once.
func TestSolveManyMatchesSciPy(t *testing.T) {
	for _, c := range loadScipy(t) {
		a := denseOf(c.A)
		if c.M < c.N {
			continue // AᵀA singular: the minimiser is not unique
		}
		g := gram(a)
		var bt mat.Dense
		bt.Mul(a.T(), mat.NewDense(c.M, 1, c.B))
		x, err := SolveMany(Problem{G: g, B: &bt})
		if err != nil {
			t.Fatalf("%s: %v", c.Name, err)
		}
		for j := 0; j < c.N; j++ {
			// Normal equations square the condition number: a looser
			// tolerance than the QR path, still far below any noise.
			if math.Abs(x.At(j, 0)-c.X[j]) > 1e-6*math.Max(1, math.Abs(c.X[j])) {
				t.Errorf("%s: x[%d] = %.10g, scipy %.10g", c.Name, j, x.At(j, 0), c.X[j])
			}
		}
	}
}

func residualNorm(a *mat.Dense, x, b []float64) float64 {
	var r mat.VecDense
	r.MulVec(a, mat.NewVecDense(len(x), x))
	r.SubVec(&r, mat.NewVecDense(len(b), b))
	return mat.Norm(&r, 2)
}

// checkKKT verifies the Karush–Kuhn–Tucker conditions of
// min ½xᵀGx − bᵀx, x ≥ 0 [, aᵀx = t] (Lawson & Hanson 1974, ch. 23):
// x ≥ 0; with w = b − Gx − μa, w ≤ 0 where x = 0 and w = 0 where x > 0.
func checkKKT(t *testing.T, name string, g *mat.SymDense, b, x, a []float64, total float64) {
	t.Helper()
	k := len(x)
	w := make([]float64, k)
	for j := 0; j < k; j++ {
		w[j] = b[j]
		for i := 0; i < k; i++ {
			w[j] -= g.At(j, i) * x[i]
		}
	}
	scale := 0.0
	for j := 0; j < k; j++ {
		scale = math.Max(scale, math.Abs(b[j])+g.At(j, j)*math.Abs(x[j]))
	}
	tol := 1e-8 * math.Max(scale, 1)
	mu := 0.0
	if a != nil {
		// μ from the positive variables (where w_j − μ a_j = 0).
		num, den := 0.0, 0.0
		for j := 0; j < k; j++ {
			if x[j] > 1e-12 {
				num += w[j] * a[j]
				den += a[j] * a[j]
			}
		}
		if den > 0 {
			mu = num / den
		}
		sum := 0.0
		for j := 0; j < k; j++ {
			sum += a[j] * x[j]
		}
		if math.Abs(sum-total) > 1e-9*math.Max(1, math.Abs(total)) {
			t.Errorf("%s: closure Σ a x = %g, want %g", name, sum, total)
		}
	}
	for j := 0; j < k; j++ {
		wj := w[j]
		if a != nil {
			wj -= mu * a[j]
		}
		switch {
		case x[j] < 0:
			t.Errorf("%s: x[%d] = %g < 0", name, j, x[j])
		case x[j] > 1e-12 && math.Abs(wj) > tol:
			t.Errorf("%s: x[%d] = %g > 0 but gradient %g ≠ 0", name, j, x[j], wj)
		case x[j] <= 1e-12 && wj > tol:
			t.Errorf("%s: x[%d] = 0 but gradient %g > 0 (could decrease the objective)", name, j, wj)
		}
	}
}

func randomProblem(rng *rand.Rand, m, k, p int) (*mat.Dense, *mat.SymDense, *mat.Dense) {
	a := mat.NewDense(m, k, nil)
	for i := 0; i < m; i++ {
		for j := 0; j < k; j++ {
			a.Set(i, j, rng.NormFloat64())
		}
	}
	d := mat.NewDense(m, p, nil)
	for i := 0; i < m; i++ {
		for j := 0; j < p; j++ {
			d.Set(i, j, rng.NormFloat64())
		}
	}
	var b mat.Dense
	b.Mul(a.T(), d)
	return a, gram(a), &b
}

// KKT on random problems, with and without closure (definition of the
// optimum of a convex QP: KKT conditions are necessary and sufficient).
func TestSolveManyKKTRandom(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	for trial := 0; trial < 30; trial++ {
		k := 1 + trial%7
		_, g, b := randomProblem(rng, 30, k, 300)
		for _, closure := range []bool{false, true} {
			p := Problem{G: g, B: b}
			var a []float64
			if closure {
				a = ones(k)
				for j := range a {
					a[j] = 0.5 + float64(j%3)
				}
				p.Equality, p.Total = a, []float64{2}
			}
			x, err := SolveMany(p)
			if err != nil {
				t.Fatal(err)
			}
			for c := 0; c < 300; c++ {
				checkKKT(t, "random", g, mat.Col(nil, c, b), mat.Col(nil, c, x), a, 2)
			}
		}
	}
}

// Exhaustive oracle for the closure problem: the minimum over every passive
// set of the equality-constrained least squares with x_P ≥ 0 (definition).
func TestClosureAgainstExhaustiveSearch(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	for trial := 0; trial < 40; trial++ {
		k := 2 + trial%4
		a, g, b := randomProblem(rng, 12, k, 1)
		_ = a
		x, err := SolveMany(Problem{G: g, B: b, Equality: ones(k), Total: []float64{1}})
		if err != nil {
			t.Fatal(err)
		}
		bcol := mat.Col(nil, 0, b)
		obj := func(x []float64) float64 {
			v := 0.0
			for i := 0; i < k; i++ {
				v -= bcol[i] * x[i]
				for j := 0; j < k; j++ {
					v += 0.5 * x[i] * g.At(i, j) * x[j]
				}
			}
			return v
		}
		best := math.Inf(1)
		for mask := 1; mask < 1<<k; mask++ {
			var idx []int
			for j := 0; j < k; j++ {
				if mask&(1<<j) != 0 {
					idx = append(idx, j)
				}
			}
			// KKT system [G_PP 1; 1ᵀ 0][x; μ] = [b_P; 1].
			np := len(idx)
			kk := mat.NewDense(np+1, np+1, nil)
			rhs := mat.NewVecDense(np+1, nil)
			for i, ji := range idx {
				for j, jj := range idx {
					kk.Set(i, j, g.At(ji, jj))
				}
				kk.Set(i, np, 1)
				kk.Set(np, i, 1)
				rhs.SetVec(i, bcol[ji])
			}
			rhs.SetVec(np, 1)
			var sol mat.VecDense
			if err := sol.SolveVec(kk, rhs); err != nil {
				continue
			}
			cand := make([]float64, k)
			ok := true
			for i, ji := range idx {
				cand[ji] = sol.AtVec(i)
				if cand[ji] < -1e-12 {
					ok = false
				}
			}
			if ok {
				best = math.Min(best, obj(cand))
			}
		}
		got := obj(mat.Col(nil, 0, x))
		if got > best+1e-9*math.Max(1, math.Abs(best)) {
			t.Errorf("trial %d: objective %.12g, exhaustive minimum %.12g", trial, got, best)
		}
	}
}

// Results must not depend on the number of threads (determinism rule).
func TestSolveManyDeterministicAcrossChunks(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	_, g, b := randomProblem(rng, 40, 5, 1000)
	x1, err := SolveMany(Problem{G: g, B: b})
	if err != nil {
		t.Fatal(err)
	}
	// Solve each column alone: the per-column arithmetic must be identical.
	for c := 0; c < 1000; c += 97 {
		one := mat.NewDense(5, 1, mat.Col(nil, c, b))
		x2, err := SolveMany(Problem{G: g, B: one})
		if err != nil {
			t.Fatal(err)
		}
		for j := 0; j < 5; j++ {
			if x1.At(j, c) != x2.At(j, 0) {
				t.Fatalf("column %d differs when solved alone: %v vs %v", c, x1.At(j, c), x2.At(j, 0))
			}
		}
	}
}

// Unimodality against a brute-force reference: the least-squares unimodal
// fit is, for some peak index, the best non-decreasing fit before it and
// non-increasing after (Bro & Sidiropoulos 1998); brute force over a small
// grid of candidate values checks optimality on tiny problems.
func TestUnimodalBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	grid := []float64{0, 0.5, 1, 1.5, 2, 2.5, 3}
	for trial := 0; trial < 25; trial++ {
		x := make([]float64, 4)
		for i := range x {
			x[i] = grid[rng.IntN(len(grid))]
		}
		fit := Unimodal(x)
		if !isUnimodal(fit) {
			t.Fatalf("fit %v of %v is not unimodal", fit, x)
		}
		got := sqErr(fit, x)
		// Exhaustive search over unimodal sequences on a fine grid.
		best := math.Inf(1)
		fine := make([]float64, 0, 31)
		for v := 0.0; v <= 3.0001; v += 0.1 {
			fine = append(fine, v)
		}
		var rec func(i int, cur []float64)
		rec = func(i int, cur []float64) {
			if i == len(x) {
				if isUnimodal(cur) {
					best = math.Min(best, sqErr(cur, x))
				}
				return
			}
			for _, v := range fine {
				if math.Abs(v-x[i]) > 1.6 {
					continue
				}
				rec(i+1, append(cur, v))
			}
		}
		if trial < 6 { // exhaustive search is expensive: a few cases suffice
			rec(0, nil)
			if got > best+1e-9 {
				t.Errorf("%v: unimodal fit error %g, brute force %g", x, got, best)
			}
		}
	}
}

func isUnimodal(x []float64) bool {
	i := 0
	for i+1 < len(x) && x[i+1] >= x[i]-1e-12 {
		i++
	}
	for i+1 < len(x) {
		if x[i+1] > x[i]+1e-12 {
			return false
		}
		i++
	}
	return true
}

func sqErr(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		s += (a[i] - b[i]) * (a[i] - b[i])
	}
	return s
}

// nnlsThroughMatQR is NNLS as it stood before NNLSWork: the same active-set
// steps with each passive least-squares problem solved by gonum's mat.QR
// (Factorize, SolveVecTo), the reference NNLSWork must match bit for bit.
func nnlsThroughMatQR(a *mat.Dense, b []float64) ([]float64, error) {
	m, n := a.Dims()
	x := make([]float64, n)
	passive := make([]bool, n)
	bv := mat.NewVecDense(m, append([]float64(nil), b...))
	res := mat.NewVecDense(m, nil)
	w := mat.NewVecDense(n, nil)
	z := make([]float64, n)
	tol := 10 * eps * mat.Norm(a, 1) * math.Max(1, mat.Norm(bv, math.Inf(1))) * float64(max(m, n))
	for outer := 0; outer < 3*n+10; outer++ {
		res.MulVec(a, mat.NewVecDense(n, x))
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
			var cols []int
			for j := 0; j < n; j++ {
				z[j] = 0
				if passive[j] {
					cols = append(cols, j)
				}
			}
			sub := mat.NewDense(m, len(cols), nil)
			for k, j := range cols {
				for i := 0; i < m; i++ {
					sub.Set(i, k, a.At(i, j))
				}
			}
			var qr mat.QR
			qr.Factorize(sub)
			var sol mat.VecDense
			if err := qr.SolveVecTo(&sol, false, bv); err != nil {
				return x, fmt.Errorf("nnls: passive columns are linearly dependent: %w", err)
			}
			for k, j := range cols {
				z[j] = sol.AtVec(k)
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

// NNLSWork, one workspace reused across problems of several sizes (square
// q × q triangles as kinetics.NonNegativeCost passes them, tall systems,
// a nearly repeated column), gives NNLS's answers and errors bit for bit: the same LAPACK calls (Geqrf, Trcon,
// Ormqr, Trtrs) as gonum's mat.QR, the same order. Reference:
// nnlsThroughMatQR above (gonum v0.17's QR, Lawson & Hanson 1974's steps),
// which TestNNLSMatchesSciPy holds to SciPy's nnls.
func TestNNLSWorkMatchesMatQR(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 5))
	var ws NNLSWork
	solved, failed := 0, 0
	for trial := 0; trial < 600; trial++ {
		m, n := 1+rng.IntN(8), 1+rng.IntN(6)
		switch trial % 3 {
		case 0:
			m = n // square, as NonNegativeCost's R = QᵀC
		case 1:
			m = n + rng.IntN(40)
		}
		a := mat.NewDense(m, n, nil)
		for i := 0; i < m; i++ {
			for j := 0; j < n; j++ {
				a.Set(i, j, rng.NormFloat64())
				if trial%3 == 0 && j < i {
					a.Set(i, j, 0) // upper triangular
				}
			}
		}
		if trial%7 == 0 && n > 1 {
			for i := 0; i < m; i++ {
				// Nearly a repeated column: ill-conditioned passive sets.
				a.Set(i, n-1, a.At(i, 0)+1e-7*rng.NormFloat64())
			}
		}
		b := make([]float64, m)
		for i := range b {
			b[i] = rng.NormFloat64()
		}
		want, werr := nnlsThroughMatQR(a, b)
		got, gerr := ws.Solve(a, b)
		if (werr == nil) != (gerr == nil) || (werr != nil && werr.Error() != gerr.Error()) {
			t.Fatalf("trial %d (%d × %d): error %v, want %v", trial, m, n, gerr, werr)
		}
		if werr != nil {
			failed++
		} else {
			solved++
		}
		for j := range want {
			if math.Float64bits(got[j]) != math.Float64bits(want[j]) {
				t.Fatalf("trial %d (%d × %d): x[%d] = %v, want %v bit for bit", trial, m, n, j, got[j], want[j])
			}
		}
		if x, err := NNLS(a, b); (err == nil) != (werr == nil) || !vecmath.SameBits(x, want) {
			t.Fatalf("trial %d: NNLS differs from its reference", trial)
		}
	}
	t.Logf("%d solved, %d with an error, all as the reference", solved, failed)
	if solved == 0 {
		t.Fatal("no problem solved: the comparison tested nothing")
	}
}
