package mcr

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"testing"

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
