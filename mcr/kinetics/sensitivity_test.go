package kinetics

import (
	"math"
	"math/rand/v2"
	"runtime"
	"strconv"
	"testing"

	"github.com/bandsolve/bandsolve/internal/fanout/fanouttest"
	"time"

	"github.com/bandsolve/bandsolve/internal/vecmath"
	"gonum.org/v1/gonum/mat"
)

// TestSensitivitiesFirstOrderAnalytic: for A -> B from [A]0 = a0,
// [A] = a0 e^{−kt} and [B] = a0 (1 − e^{−kt}) (first-order decay; any
// kinetics text), so ∂[A]/∂ln k = −a0 k t e^{−kt} = −∂[B]/∂ln k and
// ∂[A]/∂ln a0 = [A], ∂[B]/∂ln a0 = [B]. For A -> B -> C with k1 ≠ k2,
// Bateman (1910): [B] = a0 k1 (e^{−k1 t} − e^{−k2 t})/(k2 − k1), whose
// derivatives in k1 and k2 are written out below; with k1 = k2 = k the
// limit [B] = a0 k t e^{−kt} (a defective K, solved by the path sums) has
// ∂[B]/∂k1 = a0 t e^{−kt}(1 − kt/2) and ∂[B]/∂k2 = −a0 k t² e^{−kt}/2
// (differentiating a0 k1 t e^{−k1 t} e[k1,k2] by hand, from memory; the
// same as the limit of the distinct-rate formulas).
func TestSensitivitiesFirstOrderAnalytic(t *testing.T) {
	const a0 = 0.8
	times := []float64{-1, 0, 0.5, 3, 10, 40}
	check := func(label string, got, want float64) {
		t.Helper()
		if math.Abs(got-want) > 1e-12*math.Max(1, math.Abs(want)) {
			t.Errorf("%s: %.15g, want %.15g", label, got, want)
		}
	}
	s := mustParse(t, "A -> B")
	k := 0.17
	job := sensitivityJob{s: s, k: []float64{k}, c0: []float64{a0, 0}, times: times, kFree: []int{0}, c0Free: []int{0}}
	c, dc, ok := job.sensitivities()
	if !ok {
		t.Fatal("A -> B: no sensitivities")
	}
	for i, tm := range times {
		tt := math.Max(tm, 0)
		e := math.Exp(-k * tt)
		check("A -> B [A]", c.At(i, 0), a0*e)
		check("A -> B ∂[A]/∂ln k", dc[0].At(i, 0), -a0*k*tt*e)
		check("A -> B ∂[B]/∂ln k", dc[0].At(i, 1), a0*k*tt*e)
		check("A -> B ∂[A]/∂ln a0", dc[1].At(i, 0), a0*e)
		check("A -> B ∂[B]/∂ln a0", dc[1].At(i, 1), a0*(1-e))
	}

	s = mustParse(t, "A -> B -> C")
	for _, kk := range [][]float64{{0.3, 0.07}, {0.11, 0.11}} {
		k1, k2 := kk[0], kk[1]
		job := sensitivityJob{s: s, k: kk, c0: []float64{a0, 0, 0}, times: times, kFree: []int{0, 1}}
		_, dc, ok := job.sensitivities()
		if !ok {
			t.Fatalf("A -> B -> C %v: no sensitivities", kk)
		}
		for i, tm := range times {
			tt := math.Max(tm, 0)
			e1, e2 := math.Exp(-k1*tt), math.Exp(-k2*tt)
			var db1, db2 float64
			if k1 == k2 {
				db1 = a0 * tt * e1 * (1 - k1*tt/2)
				db2 = -a0 * k1 * tt * tt * e1 / 2
			} else {
				d := k2 - k1
				// ∂/∂k1 of a0 k1 (e1 − e2)/d and ∂/∂k2 of the same.
				db1 = a0 * ((e1-e2)/d - k1*tt*e1/d + k1*(e1-e2)/(d*d))
				db2 = a0 * (k1*tt*e2/d - k1*(e1-e2)/(d*d))
			}
			check("A -> B -> C ∂[A]/∂ln k1", dc[0].At(i, 0), -a0*k1*tt*e1)
			check("A -> B -> C ∂[B]/∂ln k1", dc[0].At(i, 1), k1*db1)
			check("A -> B -> C ∂[B]/∂ln k2", dc[1].At(i, 1), k2*db2)
			// Closure: the three concentrations sum to a0 at every k.
			check("A -> B -> C Σ ∂c/∂ln k2", dc[1].At(i, 0)+dc[1].At(i, 1)+dc[1].At(i, 2), 0)
		}
	}
}

// centralJacobian differences r(θ) as Levenberg–Marquardt does without a
// Jacobian (step h·max(|θ|, 1)), the reference the analytic one must meet.
func centralJacobian(t *testing.T, f ResidualFunc, theta []float64, m int, h float64) *mat.Dense {
	t.Helper()
	j := mat.NewDense(m, len(theta), nil)
	rp, rm := make([]float64, m), make([]float64, m)
	x := append([]float64(nil), theta...)
	for a := range theta {
		step := h * math.Max(math.Abs(theta[a]), 1)
		x[a] = theta[a] + step
		if err := f(x, rp); err != nil {
			t.Fatal(err)
		}
		x[a] = theta[a] - step
		if err := f(x, rm); err != nil {
			t.Fatal(err)
		}
		x[a] = theta[a]
		for i := 0; i < m; i++ {
			j.Set(i, a, (rp[i]-rm[i])/(2*step))
		}
	}
	return j
}

// TestJacobianAgainstCentralDifferences: the analytic Jacobians of both
// residuals (variable projection of the data, Golub & Pereyra 1973, with
// and without noise weights; profiles with and without amplitudes) equal
// the central differences of the residual, the definition of the
// derivative, within the differences' own error (truncation h² and
// rounding ε/h: about 10⁻⁸ of the largest entry at h = 10⁻⁵). The schemes
// cover both exact solutions: well-separated rates (eigendecomposition),
// equal rates (path sums), a branch, a reversible step, initial
// concentrations fitted.
func TestJacobianAgainstCentralDifferences(t *testing.T) {
	times := linspace(-2, 60, 45)
	cases := []struct {
		scheme string
		k, c0  []float64
		fitC0  bool
	}{
		{"A -> B -> C", []float64{0.21, 0.05}, nil, false},
		{"A -> B -> C", []float64{0.08, 0.08}, nil, false},
		{"A -> B; A -> C; C -> D", []float64{0.1, 0.04, 0.03}, nil, false},
		{"A -> B -> C -> D -> E -> F", []float64{0.4, 0.22, 0.13, 0.08, 0.045}, nil, false},
		{"A -> B; B -> A; B -> C", []float64{0.2, 0.05, 0.03}, nil, false},
		{"A -> B -> C; D -> E", []float64{0.3, 0.08, 0.15}, []float64{1, 0, 0, 0.6, 0}, true},
	}
	rng := rand.New(rand.NewPCG(21, 4))
	for _, tc := range cases {
		s := mustParse(t, tc.scheme)
		ns := len(s.Species)
		c0 := tc.c0
		if c0 == nil {
			c0 = make([]float64, ns)
			c0[0] = 1
		}
		sim, err := s.Simulate(tc.k, c0, times, 0)
		if err != nil {
			t.Fatal(err)
		}
		n := len(times)
		// Data: the concentrations times made-up spectra plus noise; the
		// fit is taken away from the truth so the residual is not small.
		const m = 12
		spec := mat.NewDense(m, ns, nil)
		for j := 0; j < m; j++ {
			for c := 0; c < ns; c++ {
				spec.Set(j, c, math.Exp(-0.5*math.Pow(float64(j-2*c)/2, 2)))
			}
		}
		var d mat.Dense
		d.Mul(sim.C, spec.T())
		for i := 0; i < n; i++ {
			for j := 0; j < m; j++ {
				d.Set(i, j, d.At(i, j)+0.01*rng.NormFloat64())
			}
		}
		rowW := make([]float64, n)
		for i := range rowW {
			rowW[i] = 0.5 + rng.Float64()
		}
		off := make([]float64, len(tc.k))
		for j := range off {
			off[j] = tc.k[j] * (1 + 0.3*(rng.Float64()-0.5))
		}
		obs := noisy(t, sim.C, []int{1, ns - 1}, []float64{2, 0.5}, 0.01, 3)
		for _, mode := range []string{"data", "weighted data", "profiles", "profiles with amplitudes"} {
			opt := FitOptions{InitialK: off, C0: c0, FitC0: tc.fitC0}
			var p *fitProblem
			switch mode {
			case "data", "weighted data":
				p, err = newFitProblem(s, times, opt, n)
				if err != nil {
					t.Fatal(err)
				}
				p.dred = &d
				if mode == "weighted data" {
					p.opt.RowWeights = rowW
				}
			default:
				opt.Amplitudes = mode == "profiles with amplitudes"
				p, err = newFitProblem(s, times, opt, n)
				if err != nil {
					t.Fatal(err)
				}
				p.observed, p.columns, p.q = obs, []int{1, ns - 1}, 2
			}
			rows := n * p.q
			if p.dred != nil {
				rows = n * m
			}
			theta := p.pack(p.k0, p.c00)
			if p.jacobianFunc(&fitScratch{}) == nil {
				t.Fatalf("%s %s: no analytic Jacobian for a first-order scheme", tc.scheme, mode)
			}
			got := mat.NewDense(rows, len(theta), nil)
			if err := p.jacobian(theta, got); err != nil {
				t.Fatalf("%s %s: %v", tc.scheme, mode, err)
			}
			want := centralJacobian(t, p.residual, theta, rows, 1e-5)
			scale := mat.Norm(want, math.Inf(1))
			var worst float64
			for i := 0; i < rows; i++ {
				for a := range theta {
					worst = math.Max(worst, math.Abs(got.At(i, a)-want.At(i, a)))
				}
			}
			if !(scale > 0) || worst > 1e-7*scale {
				t.Errorf("%s, %s: analytic and central-difference Jacobians differ by %.3g (largest entry %.3g)", tc.scheme, mode, worst, scale)
			}
		}
	}
}

// The sensitivities are formed in two halves of the times at once; each
// time's values must be those of one evaluation over all the times in
// order (GOMAXPROCS 1), bit for bit, for the eigendecomposition and for the
// path sums (equal rates make K defective), with times before t0 among
// them. Against Bateman's solution for A -> B -> C the values are checked
// in TestSensitivitiesFirstOrderAnalytic; here they are checked against
// themselves on one processor.
func TestSensitivitiesSameInBlocks(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	times := linspace(-5, 3000, 3*sensBlock+17)
	s := mustParse(t, "A -> B -> C -> D -> E -> F")
	for _, k := range [][]float64{{4e-3, 2.2e-3, 1.3e-3, 8e-4, 4.5e-4}, {2e-3, 2e-3, 2e-3, 9e-4, 9e-4}} {
		job := sensitivityJob{s: s, k: k, c0: []float64{1, 0, 0, 0, 0, 0}, times: times, kFree: []int{0, 1, 2, 3, 4}, c0Free: []int{0}}
		runtime.GOMAXPROCS(1)
		c1, d1, ok := job.sensitivities()
		if !ok {
			t.Fatalf("k %v: no sensitivities", k)
		}
		for _, procs := range []int{2, 3} {
			runtime.GOMAXPROCS(procs)
			c2, d2, ok := job.sensitivities()
			if !ok {
				t.Fatalf("k %v, GOMAXPROCS %d: no sensitivities", k, procs)
			}
			same := vecmath.SameBitsMatrix(c1, c2)
			for a := range d1 {
				same = same && vecmath.SameBitsMatrix(d1[a], d2[a])
			}
			if !same {
				t.Errorf("k %v: sensitivities at GOMAXPROCS %d differ from GOMAXPROCS 1", k, procs)
			}
		}
	}
}

// The residuals and Jacobians of a fit write their n-row matrices into
// buffers kept between evaluations (fitScratch). An evaluation on buffers
// another θ left dirty, then filled with NaN, must give, bit for bit, what one on fresh buffers
// gives (the values the fresh, zeroed matrices of each evaluation gave
// before): data and weighted data (variable projection, Golub & Pereyra
// 1973) and profiles, a chain and a fitted initial concentration, with
// times before t0, whose sensitivity rows are written only in part. The
// derivatives themselves are held to central differences in
// TestJacobianAgainstCentralDifferences.
func TestFitScratchReusedAsFresh(t *testing.T) {
	times := linspace(-2, 60, 45)
	n := len(times)
	rng := rand.New(rand.NewPCG(8, 13))
	for _, tc := range []struct {
		scheme string
		k, c0  []float64
		fitC0  bool
	}{
		{"A -> B -> C -> D -> E -> F", []float64{0.4, 0.22, 0.13, 0.08, 0.045}, nil, false},
		{"A -> B -> C; D -> E", []float64{0.3, 0.08, 0.15}, []float64{1, 0, 0, 0.6, 0}, true},
	} {
		s := mustParse(t, tc.scheme)
		ns := len(s.Species)
		c0 := tc.c0
		if c0 == nil {
			c0 = make([]float64, ns)
			c0[0] = 1
		}
		const m = 9
		d := mat.NewDense(n, m, nil)
		for i := 0; i < n; i++ {
			for j := 0; j < m; j++ {
				d.Set(i, j, rng.NormFloat64())
			}
		}
		rowW := make([]float64, n)
		for i := range rowW {
			rowW[i] = 0.5 + rng.Float64()
		}
		sim, err := s.Simulate(tc.k, c0, times, 0)
		if err != nil {
			t.Fatal(err)
		}
		obs := noisy(t, sim.C, []int{1, ns - 1}, []float64{2, 0.5}, 0.01, 3)
		for _, mode := range []string{"data", "weighted data", "profiles"} {
			newProblem := func() *fitProblem {
				p, err := newFitProblem(s, times, FitOptions{InitialK: tc.k, C0: c0, FitC0: tc.fitC0}, n)
				if err != nil {
					t.Fatal(err)
				}
				switch mode {
				case "data", "weighted data":
					p.dred = d
					if mode == "weighted data" {
						p.opt.RowWeights = rowW
					}
				default:
					p.observed, p.columns, p.q = obs, []int{1, ns - 1}, 2
				}
				return p
			}
			rows := n * 2
			if mode != "profiles" {
				rows = n * m
			}
			theta := newProblem().pack(tc.k, c0)
			other := append([]float64(nil), theta...)
			for a := range other {
				other[a] += 0.7 * (rng.Float64() - 0.5)
			}
			eval := func(p *fitProblem, sc *fitScratch, th []float64) ([]float64, *mat.Dense) {
				r := make([]float64, rows)
				if err := p.residualWith(sc, th, r); err != nil {
					t.Fatal(err)
				}
				j := mat.NewDense(rows, len(th), nil)
				if err := p.jacobianWith(sc, th, j); err != nil {
					t.Fatal(err)
				}
				return r, j
			}
			p := newProblem()
			wantR, wantJ := eval(p, &fitScratch{}, theta)
			sc := &fitScratch{}
			eval(p, sc, other) // leaves the buffers dirty
			poison(sc)
			gotR, gotJ := eval(p, sc, theta)
			if !vecmath.SameBits(gotR, wantR) || !vecmath.SameBits(gotJ.RawMatrix().Data, wantJ.RawMatrix().Data) {
				t.Errorf("%s, %s: residual or Jacobian on reused buffers differs from fresh ones", tc.scheme, mode)
			}
		}
	}
}

// poison fills every buffer of sc with NaN, so that an entry an
// evaluation reads before writing shows.
func poison(sc *fitScratch) {
	all := append([]*mat.Dense{sc.proj, sc.res, sc.ds, sc.col, sc.wc, sc.c}, append(sc.wdc, sc.dc...)...)
	for _, m := range all {
		if m != nil {
			d := m.RawMatrix().Data
			for i := range d {
				d[i] = math.NaN()
			}
		}
	}
}

// A fault (a panic) in either half of the times reaches the caller of
// halves, whose own recovery (the one a batch puts around each run) then
// sees it, instead of ending the program from the second half's goroutine:
// a panic not recovered on the goroutine it happens on ends the program
// (The Go Programming Language Specification, Handling panics). Both
// halves are waited for first.
func TestHalvesFaultReachesTheCaller(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(2))
	n := 2 * sensBlock
	for _, bad := range []int{0, n / 2} {
		var ran [2]bool
		got := fanouttest.Recovered(t, func() {
			halves(n, sensBlock, func(r0, r1 int) {
				if r0 == bad {
					panic("a fault in the half from " + strconv.Itoa(bad))
				}
				time.Sleep(10 * time.Millisecond) // the other half ends after the fault
				ran[r0/(n/2)] = true
			})
		})
		if want := "a fault in the half from " + strconv.Itoa(bad); got != want {
			t.Errorf("the caller recovered %v, want %q", got, want)
		}
		if other := 1 - bad/(n/2); !ran[other] {
			t.Errorf("halves returned before the half without the fault (from %d) ended", other*n/2)
		}
	}
}
