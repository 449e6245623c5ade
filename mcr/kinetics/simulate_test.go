package kinetics

import (
	"encoding/json"
	"math"
	"math/big"
	"os"
	"path/filepath"
	"testing"
)

func mustParse(t testing.TB, text string) *Scheme {
	t.Helper()
	s, err := ParseScheme(text)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

func linspace(a, b float64, n int) []float64 {
	v := make([]float64, n)
	for i := range v {
		v[i] = a + (b-a)*float64(i)/float64(n-1)
	}
	return v
}

// bateman returns a, b, c for A → B → C with [A]0 = 1 (Bateman 1910; Harcourt & Esson 1866),
// using the limit b = k t e^{−kt} when k1 = k2.
func bateman(k1, k2, t float64) (a, b, c float64) {
	a = math.Exp(-k1 * t)
	if k1 == k2 {
		b = k1 * t * math.Exp(-k1*t)
	} else {
		b = k1 / (k2 - k1) * (math.Exp(-k1*t) - math.Exp(-k2*t))
	}
	return a, b, 1 - a - b
}

func TestBatemanAllMethods(t *testing.T) {
	s := mustParse(t, "A -> B -> C")
	times := linspace(-1, 20, 43)
	const t0 = 0.5
	for _, ks := range [][2]float64{{0.7, 0.2}, {0.2, 0.7}, {0.4, 0.4}, {3, 0.05}} {
		for _, method := range []string{"expm", "dopri5", "rosenbrock23"} {
			set := SimSettings{Method: method}
			tol := 1e-12 // matrix exponential: exact up to rounding
			if method == "dopri5" {
				set.RelTol, set.AbsTol = 1e-10, 1e-13
				tol = 1e-8
			}
			if method == "rosenbrock23" {
				set.RelTol, set.AbsTol = 1e-8, 1e-11
				tol = 1e-6
			}
			sim, err := s.SimulateWith(ks[:], []float64{1, 0, 0}, times, t0, set)
			if err != nil {
				t.Fatal(err)
			}
			for i, tt := range times {
				var a, b, c float64 = 1, 0, 0
				if tt > t0 {
					a, b, c = bateman(ks[0], ks[1], tt-t0)
				}
				// Bateman (1910) / Harcourt & Esson (1866) analytic solution; extents are
				// ξ1 = 1 − a and ξ2 = c by c = c0 + N ξ.
				got := []float64{sim.C.At(i, 0), sim.C.At(i, 1), sim.C.At(i, 2), sim.Extents.At(i, 0), sim.Extents.At(i, 1)}
				want := []float64{a, b, c, 1 - a, c}
				for j := range got {
					if math.Abs(got[j]-want[j]) > tol {
						t.Fatalf("%s k=%v t=%g: column %d = %.15g, want %.15g (Bateman)", method, ks, tt, j, got[j], want[j])
					}
				}
			}
		}
	}
}

func TestMatrixExponentialFirstOrderNetworks(t *testing.T) {
	// Analytic solutions of linear first-order networks (textbook results; c0 = (1, 0, …)).
	tt := []float64{0.3, 1, 2.5, 7}
	t.Run("reversible A <-> B", func(t *testing.T) {
		k1, k2 := 0.8, 0.3
		sim, err := mustParse(t, "A -> B; B -> A").Simulate([]float64{k1, k2}, []float64{1, 0}, tt, 0)
		if err != nil {
			t.Fatal(err)
		}
		for i, x := range tt {
			a := (k2 + k1*math.Exp(-(k1+k2)*x)) / (k1 + k2) // relaxation to K = k1/k2
			if math.Abs(sim.C.At(i, 0)-a) > 1e-13 || math.Abs(sim.C.At(i, 1)-(1-a)) > 1e-13 {
				t.Errorf("t=%g: %v %v, want a = %v", x, sim.C.At(i, 0), sim.C.At(i, 1), a)
			}
		}
	})
	t.Run("parallel A -> B, A -> C", func(t *testing.T) {
		k1, k2 := 0.8, 0.3
		sim, err := mustParse(t, "A -> B; A -> C").Simulate([]float64{k1, k2}, []float64{1, 0, 0}, tt, 0)
		if err != nil {
			t.Fatal(err)
		}
		for i, x := range tt {
			f := 1 - math.Exp(-(k1+k2)*x)
			// Branching ratio k1/(k1+k2) of parallel first-order reactions.
			if math.Abs(sim.C.At(i, 1)-k1/(k1+k2)*f) > 1e-13 || math.Abs(sim.C.At(i, 2)-k2/(k1+k2)*f) > 1e-13 {
				t.Errorf("t=%g: %v %v", x, sim.C.At(i, 1), sim.C.At(i, 2))
			}
		}
	})
	t.Run("A -> 2 B", func(t *testing.T) {
		sim, err := mustParse(t, "A -> 2 B").Simulate([]float64{0.5}, []float64{1, 0}, tt, 0)
		if err != nil {
			t.Fatal(err)
		}
		for i, x := range tt {
			// b = 2(1 − a) by stoichiometry.
			if math.Abs(sim.C.At(i, 1)-2*(1-math.Exp(-0.5*x))) > 1e-13 {
				t.Errorf("t=%g: b = %v", x, sim.C.At(i, 1))
			}
		}
	})
}

func TestSecondOrderIntegratedLaw(t *testing.T) {
	// Integrated second-order rate law. With the IUPAC rate of reaction r = k[A]² for 2A → P,
	// d[A]/dt = −2k[A]², so 1/[A] − 1/[A]0 = 2kt (k_A = 2k in the form k_A t); for A + B → P
	// with [A]0 = [B]0, d[A]/dt = −k[A]², so 1/[A] − 1/[A]0 = kt.
	tt := linspace(0.1, 30, 25)
	for _, tc := range []struct {
		scheme string
		c0     []float64
		factor float64
	}{
		{"2 A -> P", []float64{0.8, 0}, 2},
		{"A + B -> P", []float64{0.8, 0.8, 0}, 1},
	} {
		for _, method := range []string{"dopri5", "rosenbrock23"} {
			k := 0.35
			set := SimSettings{Method: method, RelTol: 1e-10, AbsTol: 1e-13}
			sim, err := mustParse(t, tc.scheme).SimulateWith([]float64{k}, tc.c0, tt, 0, set)
			if err != nil {
				t.Fatal(err)
			}
			for i, x := range tt {
				want := 1 / (1/tc.c0[0] + tc.factor*k*x)
				tol := 1e-9
				if method == "rosenbrock23" {
					tol = 1e-7
				}
				if math.Abs(sim.C.At(i, 0)-want) > tol {
					t.Errorf("%s %s t=%g: [A] = %.12g, want %.12g", tc.scheme, method, x, sim.C.At(i, 0), want)
				}
			}
			// Half-life of the integrated law: t½ = 1/(factor·k[A]0).
			hl, _ := halfLives(mustParse(t, tc.scheme), []float64{k}, tc.c0, nil)
			half, err := mustParse(t, tc.scheme).Simulate([]float64{k}, tc.c0, []float64{hl[0]}, 0)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(half.C.At(0, 0)-tc.c0[0]/2) > 1e-8 {
				t.Errorf("%s: [A](t½) = %v, want %v", tc.scheme, half.C.At(0, 0), tc.c0[0]/2)
			}
		}
	}
}

func TestDopriCoefficients(t *testing.T) {
	// Butcher's order conditions for the Dormand–Prince (1980) pair: row sums equal c_i,
	// Σb = 1, Σbc = 1/2, Σbc² = 1/3, Σbc³ = 1/4, Σbc⁴ = 1/5 for the 5th-order weights, and
	// the 4th-order weights satisfy the same up to Σbc³.
	for i := 1; i < 7; i++ {
		var s float64
		for j := 0; j < i; j++ {
			s += dpA[i][j]
		}
		if math.Abs(s-dpC[i]) > 1e-15 {
			t.Errorf("row %d sums to %v, c = %v", i, s, dpC[i])
		}
	}
	for _, b := range []struct {
		w     [7]float64
		order int
	}{{dpB5, 5}, {dpB4, 4}} {
		for p := 0; p < b.order; p++ {
			var s float64
			for j := 0; j < 7; j++ {
				s += b.w[j] * math.Pow(dpC[j], float64(p))
			}
			if math.Abs(s-1/float64(p+1)) > 1e-14 {
				t.Errorf("order %d weights: Σ b c^%d = %v, want 1/%d", b.order, p, s, p+1)
			}
		}
	}
}

func TestDopriConvergenceOrder(t *testing.T) {
	// A fifth-order method's global error falls ≈ 2⁵-fold when h halves (definition of
	// order). Fixed steps on y' = −y (A → B, k = 1), exact e^{−t}.
	sys := newNetwork(mustParse(t, "A -> B"), []float64{1})
	errAt := func(nsteps int) float64 {
		y := []float64{1, 0, 0}
		f0 := make([]float64, 3)
		dp := newDopri(3)
		h := 4.0 / float64(nsteps)
		for i := 0; i < nsteps; i++ {
			sys.deriv(y, f0)
			dp.step(sys, y, f0, h, 1, 1)
			copy(y, dp.ynew)
		}
		return math.Abs(y[0] - math.Exp(-4))
	}
	// Observed order log2(e(h)/e(h/2)) approaches 5 from above as h shrinks.
	e1, e2 := errAt(32), errAt(64)
	if p := math.Log2(e1 / e2); p < 4.7 || p > 5.4 {
		t.Errorf("observed order %v, want ≈ 5", p)
	}
}

type refCase struct {
	Name    string      `json:"name"`
	Scheme  string      `json:"scheme"`
	K       []float64   `json:"k"`
	C0      []float64   `json:"c0"`
	T0      float64     `json:"t0"`
	Times   []float64   `json:"times"`
	C       [][]float64 `json:"C"`
	Extents [][]float64 `json:"extents"`
}

type refFile struct {
	SciPy   string    `json:"scipy"`
	Cases   []refCase `json:"cases"`
	Misra1a struct {
		B      []float64 `json:"b"`
		SSR    float64   `json:"ssr"`
		Stderr []float64 `json:"stderr"`
	} `json:"misra1a"`
}

func loadReference(t testing.TB) *refFile {
	t.Helper()
	raw, err := os.ReadFile(filepath.Join("..", "..", "testdata", "kinetics", "reference.json"))
	if err != nil {
		t.Fatal(err)
	}
	var ref refFile
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	return &ref
}

func TestSimulateAgainstSciPy(t *testing.T) {
	// Reference values: scipy.integrate.solve_ivp (RK45 at rtol 1e-12, Radau at rtol 1e-11,
	// cross-checked against a second SciPy method), see testdata/kinetics/make_reference.py.
	ref := loadReference(t)
	for _, rc := range ref.Cases {
		s := mustParse(t, rc.Scheme)
		set := SimSettings{RelTol: 1e-10}
		sim, err := s.SimulateWith(rc.K, rc.C0, rc.Times, rc.T0, set)
		if err != nil {
			t.Fatal(err)
		}
		stiff := rc.Name == "robertson-radau"
		// Robertson's problem is the textbook stiff system (Hairer & Wanner, Solving ODEs II):
		// the integrator must notice and the eigenvalue ratio along the path must be large.
		if stiff && sim.StiffnessRatio < 1e3 {
			t.Errorf("%s: stiffness ratio %g", rc.Name, sim.StiffnessRatio)
		}
		if sim.Stiff != stiff {
			t.Errorf("%s: Stiff = %v (method %s, ratio %g), want %v", rc.Name, sim.Stiff, sim.Method, sim.StiffnessRatio, stiff)
		}
		for i := range rc.Times {
			for j := range rc.C0 {
				got, want := sim.C.At(i, j), rc.C[i][j]
				// Relative 1e-6 for the stiff case (order-2 Rosenbrock), else 1e-8; absolute
				// floor for values near zero.
				rtol := 1e-8
				if stiff {
					rtol = 1e-6
				}
				if math.Abs(got-want) > rtol*math.Abs(want)+1e-12 {
					t.Errorf("%s t=%g %s: %.12g, SciPy %.12g", rc.Name, rc.Times[i], s.Species[j], got, want)
				}
			}
			for j := range rc.K {
				got, want := sim.Extents.At(i, j), rc.Extents[i][j]
				if math.Abs(got-want) > 1e-6*math.Abs(want)+1e-12 {
					t.Errorf("%s t=%g extent %d: %.12g, SciPy %.12g", rc.Name, rc.Times[i], j, got, want)
				}
			}
		}
	}
}

func TestStiffnessRatioFirstOrder(t *testing.T) {
	// K of A → B → C is triangular with eigenvalues −k1, −k2, 0, so the ratio is k1/k2
	// (Lambert's stiffness ratio, definition); with k1·span ≫ 1e3 the exact solution is flagged.
	s := mustParse(t, "A -> B -> C")
	sim, err := s.Simulate([]float64{1000, 0.01}, []float64{1, 0, 0}, []float64{1, 100}, 0)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(sim.StiffnessRatio/1e5-1) > 1e-9 || !sim.Stiff || sim.Method != "expm" {
		t.Errorf("ratio %v stiff %v method %s, want 1e5, true, expm", sim.StiffnessRatio, sim.Stiff, sim.Method)
	}
	sim, _ = s.Simulate([]float64{0.5, 0.1}, []float64{1, 0, 0}, []float64{1, 100}, 0)
	if sim.Stiff {
		t.Errorf("ratio %v reported stiff", sim.StiffnessRatio)
	}
}

func TestSimulateBadInput(t *testing.T) {
	s := mustParse(t, "A -> B")
	cases := []struct {
		name      string
		k, c0, tt []float64
		t0        float64
	}{
		{"k count", []float64{1, 2}, []float64{1, 0}, []float64{1}, 0},
		{"c0 count", []float64{1}, []float64{1}, []float64{1}, 0},
		{"negative k", []float64{-1}, []float64{1, 0}, []float64{1}, 0},
		{"NaN k", []float64{math.NaN()}, []float64{1, 0}, []float64{1}, 0},
		{"negative c0", []float64{1}, []float64{-1, 0}, []float64{1}, 0},
		{"Inf time", []float64{1}, []float64{1, 0}, []float64{math.Inf(1)}, 0},
		{"NaN t0", []float64{1}, []float64{1, 0}, []float64{1}, math.NaN()},
		{"no times", []float64{1}, []float64{1, 0}, nil, 0},
	}
	for _, tc := range cases {
		if _, err := s.Simulate(tc.k, tc.c0, tc.tt, tc.t0); err == nil {
			t.Errorf("%s: no error", tc.name)
		}
	}
	if _, err := mustParse(t, "2 A -> B").SimulateWith([]float64{1}, []float64{1, 0}, []float64{1}, 0, SimSettings{Method: "expm"}); err == nil {
		t.Error("expm on a second-order scheme: no error")
	}
}

// TestConcentrationsOnlySameNumbers: a fit of concentrations simulates
// without the extents (SimSettings.concentrationsOnly). The species block of
// the first-order rate matrix does not involve the extents (dc/dt = K c
// alone; the extents only integrate R c), so the concentrations must be the
// same numbers bit for bit, for the eigendecomposition (distinct rate
// constants) and for the path sums (equal ones, the Bateman limit), and
// still match Bateman's solution (Bateman 1910).
func TestConcentrationsOnlySameNumbers(t *testing.T) {
	s := mustParse(t, "A -> B -> C")
	times := linspace(-1, 20, 43)
	const t0 = 0.5
	for _, ks := range [][]float64{{0.7, 0.2}, {0.4, 0.4}} {
		full, err := s.SimulateWith(ks, []float64{1, 0, 0}, times, t0, SimSettings{})
		if err != nil {
			t.Fatal(err)
		}
		conc, err := s.SimulateWith(ks, []float64{1, 0, 0}, times, t0, SimSettings{concentrationsOnly: true})
		if err != nil {
			t.Fatal(err)
		}
		for i, tt := range times {
			var a, b, c float64 = 1, 0, 0
			if tt > t0 {
				a, b, c = bateman(ks[0], ks[1], tt-t0)
			}
			for j, want := range []float64{a, b, c} {
				if got := conc.C.At(i, j); got != full.C.At(i, j) || math.Abs(got-want) > 1e-12 {
					t.Fatalf("k=%v t=%g species %d: %.17g without extents, %.17g with, Bateman %.17g", ks, tt, j, got, full.C.At(i, j), want)
				}
			}
		}
	}
}

// The factors of the clusters' Taylor sums are 1/(L+m)! (definition; the
// factorial exact in big integers), formed once per L and reused.
func TestTaylorFactorsAreInverseFactorials(t *testing.T) {
	var s ddScratch
	for L := 0; L <= 12; L++ {
		f := s.taylorFactors(L)
		if g := s.taylorFactors(L); &g[0] != &f[0] {
			t.Fatalf("L = %d: factors formed twice", L)
		}
		for m := 0; m <= ddTaylorTerms; m++ {
			var fact big.Int
			fact.MulRange(1, int64(L+m))
			want, _ := new(big.Float).Quo(big.NewFloat(1), new(big.Float).SetInt(&fact)).Float64()
			if math.Abs(f[m]/want-1) > 1e-13 {
				t.Errorf("L = %d, m = %d: %.17g, 1/(L+m)! = %.17g", L, m, f[m], want)
			}
		}
	}
}
