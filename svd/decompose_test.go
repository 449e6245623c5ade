package svd

import (
	"fmt"
	"math"
	"runtime"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Reference: numpy.linalg.svd 1.24.2 (testdata/svd/make_reference.py, VERSIONS.txt).
func TestDecomposeSmallAgainstNumpy(t *testing.T) {
	d := readCSVMatrix(t, "small.csv")
	var ref struct {
		S    []float64
		U, V [][]float64
	}
	readJSON(t, "small_svd.json", &ref)
	for _, method := range []string{MethodExact, MethodGram, MethodRandomized} {
		f, err := Decompose(d, DecomposeOptions{Method: method})
		if err != nil {
			t.Fatal(err)
		}
		if f.Method != method || len(f.S) != 5 {
			t.Fatalf("%s: method %q, %d values", method, f.Method, len(f.S))
		}
		tol := 1e-12
		if method == MethodGram {
			tol = 1e-10 // squared condition number of the Gram route
		}
		for k, s := range ref.S {
			if !(math.Abs(f.S[k]-s) <= tol*ref.S[0]) {
				t.Errorf("%s: s_%d = %.16g, numpy %.16g", method, k+1, f.S[k], s)
			}
			// Vectors, with the shared sign convention (largest |v| positive).
			for i := 0; i < 7; i++ {
				if !(math.Abs(f.U.At(i, k)-ref.U[i][k]) <= 1e3*tol) {
					t.Errorf("%s: U[%d,%d] = %g, numpy %g", method, i, k, f.U.At(i, k), ref.U[i][k])
				}
			}
			for j := 0; j < 5; j++ {
				if !(math.Abs(f.V.At(j, k)-ref.V[j][k]) <= 1e3*tol) {
					t.Errorf("%s: V[%d,%d] = %g, numpy %g", method, j, k, f.V.At(j, k), ref.V[j][k])
				}
			}
		}
		// Reconstruction D = U diag(S) Vᵀ (definition of the SVD).
		if e := reconstructionError(d, f); e > 1e-12*math.Sqrt(f.FrobeniusSq) {
			t.Errorf("%s: ‖D − USVᵀ‖ = %g", method, e)
		}
	}
}

func reconstructionError(d *mat.Dense, f *Factors) float64 {
	var us, r mat.Dense
	us.Mul(f.U, mat.NewDiagDense(len(f.S), f.S))
	r.Mul(&us, f.V.T())
	r.Sub(d, &r)
	return mat.Norm(&r, 2)
}

// Reference: numpy.linalg.svd 1.24.2 singular values of formula(n, m), rebuilt here.
func TestDecomposeFormulaAgainstNumpy(t *testing.T) {
	var ref struct {
		Cases []struct {
			N, M        int
			S           []float64
			FrobeniusSq float64 `json:"frobenius_sq"`
		}
	}
	readJSON(t, "formula_svd.json", &ref)
	for _, cs := range ref.Cases {
		d := formulaMatrix(cs.N, cs.M)
		s1 := cs.S[0]
		for _, tc := range []struct {
			method  string
			max     int
			compare int     // leading values compared
			tol     float64 // absolute, in units of s_1
		}{
			{MethodExact, 0, len(cs.S), 1e-13},
			{MethodGram, 0, len(cs.S), 1e-11}, // s_j error ≈ eps·s_1²/s_j for the Gram route
			{MethodRandomized, 6, 3, 1e-12},   // the three smooth components; the rest is the rough term
		} {
			f, err := Decompose(d, DecomposeOptions{Method: tc.method, MaxFactors: tc.max})
			if err != nil {
				t.Fatal(err)
			}
			if tc.max == 0 && len(f.S) != len(cs.S) {
				t.Fatalf("%s %dx%d: %d values, want %d", tc.method, cs.N, cs.M, len(f.S), len(cs.S))
			}
			for k := 0; k < tc.compare; k++ {
				if !(math.Abs(f.S[k]-cs.S[k]) <= tc.tol*s1) {
					t.Errorf("%s %dx%d: s_%d = %.15g, numpy %.15g", tc.method, cs.N, cs.M, k+1, f.S[k], cs.S[k])
				}
			}
			if !(math.Abs(f.FrobeniusSq-cs.FrobeniusSq) <= 1e-12*cs.FrobeniusSq) {
				t.Errorf("%s: ‖D‖² = %.15g, numpy %.15g", tc.method, f.FrobeniusSq, cs.FrobeniusSq)
			}
			checkOrthonormal(t, tc.method+" U", f.U)
			checkOrthonormal(t, tc.method+" V", f.V)
			// Eckart–Young: ‖D − D_r‖² equals the tail energy FrobeniusSq − Σ s_k².
			if tc.max > 0 {
				e := reconstructionError(d, f)
				if !(math.Abs(e*e-f.TailSq(len(f.S))) <= 1e-8*cs.FrobeniusSq) {
					t.Errorf("%s: ‖D − D_r‖² = %g, tail %g", tc.method, e*e, f.TailSq(len(f.S)))
				}
			}
		}
	}
}

func checkOrthonormal(t *testing.T, name string, a *mat.Dense) {
	t.Helper()
	_, r := a.Dims()
	var g mat.Dense
	g.Mul(a.T(), a)
	for i := 0; i < r; i++ {
		for j := 0; j < r; j++ {
			want := 0.0
			if i == j {
				want = 1
			}
			if !(math.Abs(g.At(i, j)-want) <= 1e-9) {
				t.Errorf("%s: (AᵀA)[%d,%d] = %g (definition: orthonormal columns)", name, i, j, g.At(i, j))
				return
			}
		}
	}
}

// gram and randomized against gonum's LAPACK SVD on a bilinear + noise matrix larger than
// the auto exact limit, both shapes.
func TestDecomposeMethodsAgree(t *testing.T) {
	rng := newRNG(11)
	for _, shape := range [][2]int{{150, 500}, {500, 150}} {
		n, m := shape[0], shape[1]
		var d *mat.Dense
		if n < m {
			d = product(randomProfiles(rng, n, 4, 0), randomSpectra(rng, m, 4))
		} else {
			d = product(randomProfiles(rng, n, 4, 0), randomSpectra(rng, m, 4))
		}
		addNoise(rng, d, 1e-3)
		ex, err := Decompose(d, DecomposeOptions{Method: MethodExact})
		if err != nil {
			t.Fatal(err)
		}
		gr, err := Decompose(d, DecomposeOptions{Method: MethodGram, MaxFactors: 10})
		if err != nil {
			t.Fatal(err)
		}
		rd, err := Decompose(d, DecomposeOptions{Method: MethodRandomized, MaxFactors: 4})
		if err != nil {
			t.Fatal(err)
		}
		for k := 0; k < 10; k++ {
			if !(math.Abs(gr.S[k]-ex.S[k]) <= 1e-10*ex.S[0]) {
				t.Errorf("%dx%d gram s_%d = %.15g, exact %.15g", n, m, k+1, gr.S[k], ex.S[k])
			}
		}
		for k := 0; k < 4; k++ {
			if !(math.Abs(rd.S[k]-ex.S[k]) <= 1e-9*ex.S[k]) {
				t.Errorf("%dx%d randomized s_%d = %.15g, exact %.15g", n, m, k+1, rd.S[k], ex.S[k])
			}
			// Same vectors, same sign (shared sign convention).
			for _, p := range []struct {
				name string
				a, b *mat.Dense
			}{{"U", rd.U, ex.U}, {"V", rd.V, ex.V}, {"gram U", gr.U, ex.U}, {"gram V", gr.V, ex.V}} {
				dot := mat.Dot(p.a.ColView(k), p.b.ColView(k))
				if !(math.Abs(dot-1) <= 1e-6) {
					t.Errorf("%dx%d %s_%d · exact = %g", n, m, p.name, k+1, dot)
				}
			}
		}
	}
}

func TestDecomposeAutoAndErrors(t *testing.T) {
	rng := newRNG(3)
	small := noiseMatrix(rng, 20, 30, 1)
	if f, _ := Decompose(small, DecomposeOptions{}); f.Method != MethodExact {
		t.Errorf("auto on 20x30 chose %s", f.Method)
	}
	big := noiseMatrix(rng, 500, 1000, 1)
	if f, _ := Decompose(big, DecomposeOptions{MaxFactors: 5}); f.Method != MethodRandomized || len(f.S) != 5 {
		t.Errorf("auto on 500x1000 r=5 chose %s with %d values", f.Method, len(f.S))
	}
	if f, _ := Decompose(big, DecomposeOptions{}); f.Method != MethodGram || len(f.S) != 500 {
		t.Errorf("auto on 500x1000 all chose %s with %d values", f.Method, len(f.S))
	}
	bad := mat.NewDense(2, 2, []float64{1, math.NaN(), 0, 1})
	for name, c := range map[string]struct {
		d   *mat.Dense
		opt DecomposeOptions
	}{
		"nil":    {nil, DecomposeOptions{}},
		"nan":    {bad, DecomposeOptions{}},
		"method": {small, DecomposeOptions{Method: "qr"}},
		"max":    {small, DecomposeOptions{MaxFactors: -1}},
	} {
		if _, err := Decompose(c.d, c.opt); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
}

// Determinism rule of the project: byte-identical output whatever GOMAXPROCS.
func TestDeterministicAcrossGOMAXPROCS(t *testing.T) {
	rng := newRNG(5)
	d := noisyBilinear(rng, 300, 700, 3, 1e-2)
	run := func() (string, string, string) {
		g, err := Decompose(d, DecomposeOptions{Method: MethodGram, MaxFactors: 6})
		if err != nil {
			t.Fatal(err)
		}
		r, err := Decompose(d, DecomposeOptions{Method: MethodRandomized, MaxFactors: 6})
		if err != nil {
			t.Fatal(err)
		}
		rep, err := EstimateRank(d, r, RankOptions{ReferenceRow: -1})
		if err != nil {
			t.Fatal(err)
		}
		e, err := EFA(d, 4)
		if err != nil {
			t.Fatal(err)
		}
		p := e.Windows(3, 0).InitialProfiles(d, 3)
		// %v prints the shortest decimal that round-trips, so equal strings mean equal bits.
		return fmt.Sprint(g.S, g.U.RawMatrix().Data, g.V.RawMatrix().Data), fmt.Sprint(r.S, r.U.RawMatrix().Data, r.V.RawMatrix().Data), fmt.Sprintf("%+v", *rep) + fmt.Sprint(e.Forward.RawMatrix().Data, e.Backward.RawMatrix().Data, p.RawMatrix().Data)
	}
	old := runtime.GOMAXPROCS(1)
	a1, b1, c1 := run()
	runtime.GOMAXPROCS(max(old, 2))
	a2, b2, c2 := run()
	runtime.GOMAXPROCS(old)
	if a1 != a2 || b1 != b2 || c1 != c2 {
		t.Error("results differ between GOMAXPROCS 1 and 2")
	}
}

// A randomized SVD started from a basis the row space is known to lie near
// (DecomposeOptions.Start) against gonum's LAPACK SVD (the reference): difference rows
// ΔD = D − 1 gᵀ of a bilinear + noise matrix D lie in D's row space plus g, so the
// start is D's leading right singular vectors and g. With no power iteration the leading
// values and vectors must agree with the exact ones as closely as the random start's two
// (TestDecomposeMethodsAgree's tolerances). A start whose rows do not match is an error.
func TestDecomposeWarmStart(t *testing.T) {
	rng := newRNG(17)
	n, m := 400, 600
	d := noisyBilinear(rng, n, m, 4, 1e-3)
	g := mat.Row(nil, 0, d)
	dd := mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		row := dd.RawRowView(i)
		for j, v := range d.RawRowView(i) {
			row[j] = v - g[j]
		}
	}
	fd, err := Decompose(d, DecomposeOptions{Method: MethodRandomized, MaxFactors: 6})
	if err != nil {
		t.Fatal(err)
	}
	start := mat.NewDense(m, 7, nil)
	start.Slice(0, m, 0, 6).(*mat.Dense).Copy(fd.V)
	start.SetCol(6, g)
	ws, err := Decompose(dd, DecomposeOptions{Method: MethodRandomized, MaxFactors: 6, Start: start})
	if err != nil {
		t.Fatal(err)
	}
	ex, err := Decompose(dd, DecomposeOptions{Method: MethodExact})
	if err != nil {
		t.Fatal(err)
	}
	for k := 0; k < 4; k++ {
		if !(math.Abs(ws.S[k]-ex.S[k]) <= 1e-9*ex.S[k]) {
			t.Errorf("warm start s_%d = %.15g, exact %.15g", k+1, ws.S[k], ex.S[k])
		}
		for _, p := range []struct {
			name string
			a, b *mat.Dense
		}{{"U", ws.U, ex.U}, {"V", ws.V, ex.V}} {
			if dot := mat.Dot(p.a.ColView(k), p.b.ColView(k)); !(math.Abs(dot-1) <= 1e-6) {
				t.Errorf("warm start %s_%d · exact = %g", p.name, k+1, dot)
			}
		}
	}
	if _, err := Decompose(dd, DecomposeOptions{Method: MethodRandomized, MaxFactors: 6, Start: mat.NewDense(m-1, 3, nil)}); err == nil {
		t.Error("a start with the wrong number of rows was accepted")
	}
}

// Every non-finite value (IEEE 754: +Inf, −Inf and NaN) is refused with its
// position, wherever it sits in the row (the check sums four columns at a
// time, so the positions cover each of the four and the tail past them),
// and the largest finite values pass.
func TestCheckMatrixFindsEveryNonFinite(t *testing.T) {
	for _, v := range []float64{math.Inf(1), math.Inf(-1), math.NaN()} {
		for _, at := range [][2]int{{0, 0}, {1, 1}, {2, 2}, {2, 3}, {1, 4}, {0, 8}, {2, 9}} {
			d := mat.NewDense(3, 10, nil)
			for i := 0; i < 3; i++ {
				for j := 0; j < 10; j++ {
					d.Set(i, j, float64(i*10+j)-7.5)
				}
			}
			d.Set(at[0], at[1], v)
			err := checkMatrix(d)
			want := fmt.Sprintf("non-finite value %v at row %d, column %d", v, at[0], at[1])
			if err == nil || err.Error() != want {
				t.Errorf("%v at (%d, %d): got %v, want %q", v, at[0], at[1], err, want)
			}
		}
	}
	ok := mat.NewDense(2, 5, []float64{math.MaxFloat64, -math.MaxFloat64, math.SmallestNonzeroFloat64, 0, math.Copysign(0, -1), 1, 2, 3, 4, 5})
	if err := checkMatrix(ok); err != nil {
		t.Errorf("finite extremes refused: %v", err)
	}
}
