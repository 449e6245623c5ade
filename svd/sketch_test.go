package svd

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/bandsolve/bandsolve/internal/vecmath"
	"gonum.org/v1/gonum/mat"
)

// TestSketchFactorsAreGonumSVDs checks the last step of the randomized SVD
// against gonum's mat.SVD (reference library) used as its documentation
// says: B = Zᵀ factorized with SVDThin, U = Y Ũ, V from VTo, the leading r
// taken. sketchFactors skips the copies and writes into Z's memory; every
// value must be the same bits.
func TestSketchFactorsAreGonumSVDs(t *testing.T) {
	for _, tc := range []struct{ n, m, l, r int }{
		{40, 60, 12, 2}, {300, 200, 34, 24}, {200, 301, 34, 34}, {57, 90, 11, 1}, {120, 80, 20, 10},
	} {
		rng := rand.New(rand.NewPCG(uint64(tc.n), uint64(tc.m)))
		y := mat.NewDense(tc.n, tc.l, nil)
		z := mat.NewDense(tc.m, tc.l, nil)
		for _, x := range []*mat.Dense{y, z} {
			raw := x.RawMatrix()
			for i := range raw.Data {
				raw.Data[i] = rng.NormFloat64() * math.Exp(-float64(i%tc.l)/3)
			}
		}
		// The reference, from copies of the inputs.
		var sv mat.SVD
		if !sv.Factorize(mat.DenseCopyOf(z).T(), mat.SVDThin) {
			t.Fatalf("%v: reference SVD did not converge", tc)
		}
		var ub, v, u mat.Dense
		sv.UTo(&ub)
		sv.VTo(&v)
		u.Mul(y, &ub)
		vals := sv.Values(nil)

		f, err := sketchFactors(mat.DenseCopyOf(y), mat.DenseCopyOf(z), tc.r, nil)
		if err != nil {
			t.Fatalf("%v: %v", tc, err)
		}
		// The leading r of the reference, every value the same bits (and
		// U n × r, V m × r).
		if !vecmath.SameBits(f.S, vals[:tc.r]) {
			t.Errorf("%v: values %v, reference %v", tc, f.S, vals[:tc.r])
		}
		sameMatrixBits(t, fmt.Sprintf("%v: U", tc), f.U, u.Slice(0, tc.n, 0, tc.r))
		sameMatrixBits(t, fmt.Sprintf("%v: V", tc), f.V, v.Slice(0, tc.m, 0, tc.r))
	}
}

// TestDecomposeBesideKeepsTheBits: asking for D Q beside the decomposition
// changes no bit of the factors, and D Q is gonum's mat.Dense.Mul's
// (reference library), whether it rides in the randomized method's first
// pass (4 columns more than the 34 of the sketch: one register tile, and
// 8 more: two) or is formed apart (the exact method).
func TestDecomposeBesideKeepsTheBits(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	d := mat.NewDense(300, 401, nil)
	raw := d.RawMatrix()
	for i := 0; i < 300; i++ {
		for j := 0; j < 401; j++ {
			raw.Data[i*raw.Stride+j] = math.Sin(float64(i)/40)*math.Cos(float64(j)/30) + 0.01*rng.NormFloat64()
		}
	}
	for _, tc := range []struct {
		method string
		r, c   int
	}{{MethodRandomized, 24, 4}, {MethodRandomized, 24, 8}, {MethodRandomized, 5, 1}, {MethodExact, 0, 3}} {
		q := mat.NewDense(401, tc.c, nil)
		for j := 0; j < 401; j++ {
			for k := 0; k < tc.c; k++ {
				q.Set(j, k, math.Pow(float64(j)/400, float64(k)))
			}
		}
		plain, err := Decompose(d, DecomposeOptions{Method: tc.method, MaxFactors: tc.r})
		if err != nil {
			t.Fatal(err)
		}
		dq := mat.NewDense(300, tc.c, nil)
		with, err := Decompose(d, DecomposeOptions{Method: tc.method, MaxFactors: tc.r, Beside: q, BesideInto: dq})
		if err != nil {
			t.Fatal(err)
		}
		var want mat.Dense
		want.Mul(d, q)
		sameMatrixBits(t, tc.method+" D Q", dq, &want)
		sameMatrixBits(t, tc.method+" U", with.U, plain.U)
		sameMatrixBits(t, tc.method+" V", with.V, plain.V)
		if !vecmath.SameBits(with.S, plain.S) {
			t.Fatalf("%s: values %v beside D Q, %v alone", tc.method, with.S, plain.S)
		}
	}
}

func sameMatrixBits(t *testing.T, what string, got, want mat.Matrix) {
	t.Helper()
	if !vecmath.SameBitsMatrix(got, want) {
		gr, gc := got.Dims()
		r, c := want.Dims()
		t.Fatalf("%s (%d × %d) is not bit for bit the %d × %d wanted", what, gr, gc, r, c)
	}
}

// TestWorkspaceKeepsTheBits: decompositions that hand a Workspace on (the
// same shape twice, with and without a start and columns beside, then a
// larger shape, then the first again) give the bits of each alone, and the
// first's factors are not changed by the later ones (nothing returned lives
// in the workspace).
func TestWorkspaceKeepsTheBits(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 1))
	data := func(n, m int) *mat.Dense {
		d := mat.NewDense(n, m, nil)
		for i := 0; i < n; i++ {
			for j := 0; j < m; j++ {
				d.Set(i, j, math.Sin(float64(i*(j%7))/50)+0.01*rng.NormFloat64())
			}
		}
		return d
	}
	a, b, c := data(200, 301), data(200, 301), data(260, 340)
	q := mat.NewDense(301, 3, nil)
	for j := 0; j < 301; j++ {
		q.Set(j, 0, 1)
		q.Set(j, 1, float64(j))
		q.Set(j, 2, float64(j*j))
	}
	start := mat.NewDense(301, 4, nil)
	for j := 0; j < 301; j++ {
		for k := 0; k < 4; k++ {
			start.Set(j, k, math.Cos(float64(j*(k+1))/90))
		}
	}
	opts := []DecomposeOptions{
		{Method: MethodRandomized, MaxFactors: 12, Beside: q, BesideInto: mat.NewDense(200, 3, nil)},
		{Method: MethodRandomized, MaxFactors: 12, Start: start},
		{Method: MethodRandomized, MaxFactors: 20},
		{Method: MethodRandomized, MaxFactors: 12},
	}
	mats := []*mat.Dense{a, b, c, a}
	var work Workspace
	var kept []*Factors
	for k, d := range mats {
		alone, err := Decompose(d, opts[k])
		if err != nil {
			t.Fatal(err)
		}
		o := opts[k]
		o.Work = &work
		shared, err := Decompose(d, o)
		if err != nil {
			t.Fatal(err)
		}
		sameMatrixBits(t, "U", shared.U, alone.U)
		sameMatrixBits(t, "V", shared.V, alone.V)
		if !vecmath.SameBits(shared.S, alone.S) {
			t.Fatalf("singular values %v with the workspace, %v alone", shared.S, alone.S)
		}
		kept = append(kept, alone, shared)
	}
	first, err := Decompose(a, opts[0])
	if err != nil {
		t.Fatal(err)
	}
	sameMatrixBits(t, "first U after the others", kept[1].U, first.U)
	sameMatrixBits(t, "first V after the others", kept[1].V, first.V)
	if !vecmath.SameBits(kept[1].S, first.S) {
		t.Fatalf("first singular values %v after the others, %v alone", kept[1].S, first.S)
	}
}
