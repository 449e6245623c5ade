package kinetics

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// Simulation holds concentrations and reaction extents at the requested times.
type Simulation struct {
	// C is n × len(Species): c(t_i); c = c0 for t_i ≤ t0.
	C *mat.Dense
	// Extents is n × len(Steps): ξ_j(t) = ∫_{t0}^{t} r_j dt, zero for t ≤ t0, so that
	// c(t) = c0 + N ξ(t) with N the stoichiometric matrix.
	Extents *mat.Dense
	// Stiff reports stiffness: for integrated networks the explicit integrator's stiffness test
	// fired (Hairer & Wanner's estimate h|λ| > 3.25 on 15 accepted steps) or its step size
	// collapsed, and the rest of the span was done by the Rosenbrock method; for first-order
	// networks solved exactly, StiffnessRatio ≥ 1e3 and the fastest mode decays ≥ 1e3 times
	// within the span (an explicit method would be held back by stability, not accuracy).
	Stiff bool
	// Method names the solver: "expm" (exact, first order), "dopri5", "rosenbrock23" or
	// "dopri5+rosenbrock23" when stiffness made the integrator switch.
	Method string
	// StiffnessRatio is the largest, over c0 and the computed states, of max|Re λ| / min|Re λ|
	// over the non-zero eigenvalues of the species Jacobian ∂(N r)/∂c (Lambert 1973); 1 when
	// fewer than two are non-zero.
	StiffnessRatio float64
	// Steps and Rejected count integrator steps (zero for "expm").
	Steps, Rejected int
}

// SimSettings tunes Simulate; the zero value gives the defaults.
type SimSettings struct {
	// RelTol and AbsTol control the local error of the integrators (defaults 1e-9 and
	// 1e-12 × max(c0)); the matrix exponential ignores them.
	RelTol, AbsTol float64
	// Method forces a solver: "" (automatic), "expm", "dopri5", "rosenbrock23".
	Method string
	// MaxSteps bounds the number of integrator steps (default 500000).
	MaxSteps int
	// concentrationsOnly: the caller uses Simulation.C alone (a fit of
	// concentrations), so the exact first-order solutions skip the extents,
	// which cost as much again as the concentrations; Extents is left zero.
	// The concentrations are the same numbers either way.
	concentrationsOnly bool
}

// Simulate computes concentrations at the given times for rate constants k (one per step, ≥ 0)
// and initial concentrations c0 (one per species, ≥ 0). The reaction starts at t0; times need
// not be sorted. First-order networks use the matrix exponential, others the Dormand–Prince
// 5(4) pair with a switch to a Rosenbrock method when stiffness is detected.
func (s *Scheme) Simulate(k, c0, times []float64, t0 float64) (*Simulation, error) {
	return s.SimulateWith(k, c0, times, t0, SimSettings{})
}

// SimulateWith is Simulate with explicit solver settings.
func (s *Scheme) SimulateWith(k, c0, times []float64, t0 float64, set SimSettings) (*Simulation, error) {
	scale, err := s.checkSimulation(k, c0, times, t0)
	if err != nil {
		return nil, err
	}
	set = set.withDefaults(scale)
	method, err := s.solverFor(set.Method)
	if err != nil {
		return nil, err
	}
	ns, nr, n := len(s.Species), len(s.Steps), len(times)
	run := &simRun{s: s, sys: newNetwork(s, k), times: times, t0: t0, set: set,
		sim: &Simulation{C: mat.NewDense(n, ns, nil), Extents: mat.NewDense(n, nr, nil), Method: method}}
	run.y0 = make([]float64, ns+nr)
	copy(run.y0, c0)
	run.orderOutputs(c0)
	sim := run.sim
	var lmax float64
	sim.StiffnessRatio, lmax = run.sys.stiffnessRatio(c0)
	if method == "expm" {
		run.solveExact()
		sim.Stiff = sim.StiffnessRatio >= 1e3 && lmax*run.span >= 1e3
	} else if err := run.solveIntegrated(method == "rosenbrock23"); err != nil {
		return nil, err
	}
	if !finiteDense(sim.C) || !finiteDense(sim.Extents) {
		return nil, fmt.Errorf("kinetics: simulate %q: solution is not finite (rate constants too large for the time span?)", s.Text)
	}
	if !s.FirstOrder() {
		run.pathStiffness()
	}
	return sim, nil
}

// checkSimulation checks the rate constants, the initial concentrations and
// the times, and returns the largest initial concentration (1 when all are
// zero), the scale of the absolute tolerance.
func (s *Scheme) checkSimulation(k, c0, times []float64, t0 float64) (scale float64, err error) {
	if s == nil || len(s.Steps) == 0 {
		return 0, errors.New("kinetics: simulate: empty scheme")
	}
	ns, nr := len(s.Species), len(s.Steps)
	if len(k) != nr {
		return 0, fmt.Errorf("kinetics: simulate: %d rate constants for %d steps", len(k), nr)
	}
	if len(c0) != ns {
		return 0, fmt.Errorf("kinetics: simulate: %d initial concentrations for %d species", len(c0), ns)
	}
	for j, v := range k {
		if !(v >= 0) || math.IsInf(v, 0) {
			return 0, fmt.Errorf("kinetics: simulate: rate constant of step %q is %v, want finite and ≥ 0", s.Steps[j].Text, v)
		}
	}
	for i, v := range c0 {
		if !(v >= 0) || math.IsInf(v, 0) {
			return 0, fmt.Errorf("kinetics: simulate: initial concentration of %s is %v, want finite and ≥ 0", s.Species[i], v)
		}
		scale = math.Max(scale, v)
	}
	if math.IsNaN(t0) || math.IsInf(t0, 0) {
		return 0, fmt.Errorf("kinetics: simulate: t0 is %v", t0)
	}
	for i, t := range times {
		if math.IsNaN(t) || math.IsInf(t, 0) {
			return 0, fmt.Errorf("kinetics: simulate: time %d is %v", i, t)
		}
	}
	if len(times) == 0 {
		return 0, errors.New("kinetics: simulate: no times")
	}
	if scale == 0 {
		scale = 1
	}
	return scale, nil
}

// withDefaults fills the zero tolerances and step bound; the absolute
// tolerance is relative to scale, the largest initial concentration.
func (set SimSettings) withDefaults(scale float64) SimSettings {
	if set.RelTol <= 0 {
		set.RelTol = 1e-9
	}
	if set.AbsTol <= 0 {
		set.AbsTol = 1e-12 * scale
	}
	if set.MaxSteps <= 0 {
		set.MaxSteps = 500000
	}
	return set
}

// solverFor names the solver: the one asked for, or by default the exact
// matrix exponential for a first-order scheme and Dormand–Prince otherwise.
func (s *Scheme) solverFor(method string) (string, error) {
	switch method {
	case "":
		if s.FirstOrder() {
			return "expm", nil
		}
		return "dopri5", nil
	case "expm":
		if !s.FirstOrder() {
			return "", errors.New("kinetics: simulate: the matrix exponential needs a first-order scheme")
		}
	case "dopri5", "rosenbrock23":
	default:
		return "", fmt.Errorf("kinetics: simulate: unknown method %q", method)
	}
	return method, nil
}

// simRun is one simulation under way: the network, its start, the output
// times and the result being filled.
type simRun struct {
	s     *Scheme
	sys   *network
	sim   *Simulation
	times []float64
	t0    float64
	y0    []float64 // [c0; 0]: the concentrations and the extents at t0
	set   SimSettings
	order []int   // the output times after t0, by index, in increasing time
	span  float64 // from t0 to the last output time
}

// orderOutputs sets c = c0 at the output times up to t0 and orders the
// others. Ties keep index order so the result does not depend on how
// sort.SliceStable orders equal keys (it is stable).
func (run *simRun) orderOutputs(c0 []float64) {
	run.order = make([]int, 0, len(run.times))
	for i, t := range run.times {
		if t <= run.t0 {
			run.sim.C.SetRow(i, c0)
			continue
		}
		run.order = append(run.order, i)
		run.span = math.Max(run.span, t-run.t0)
	}
	times, order := run.times, run.order
	sort.SliceStable(order, func(a, b int) bool { return times[order[a]] < times[order[b]] })
}

// store puts the state y at output i: its concentrations, and its extents
// when y holds them.
func (run *simRun) store(i int, y []float64) {
	ns := len(run.s.Species)
	run.sim.C.SetRow(i, y[:ns])
	if len(y) > ns {
		run.sim.Extents.SetRow(i, y[ns:])
	}
}

// exactSolution is the exact solution of a first-order network at time t
// after the start, written into y.
type exactSolution interface {
	at(t float64, y []float64)
}

// solveExact solves a first-order network exactly: by the eigendecomposition
// when its vectors are well conditioned (cheapest per time), else by the
// path sums for acyclic networks, else by the matrix exponential at each
// time. The first two solve the species block on its own, so without the
// extents' rows the concentrations come out bit for bit the same.
func (run *simRun) solveExact() {
	ns, nr := len(run.s.Species), len(run.s.Steps)
	m := run.sys.linearMatrix()
	exact, nx := m, ns+nr
	if run.set.concentrationsOnly {
		exact, nx = mat.DenseCopyOf(m.Slice(0, ns, 0, ns)), ns
	}
	var sol exactSolution
	if ex := newEigenExp(exact, ns, run.y0); ex != nil {
		sol = ex
	} else if pe := newPathExp(exact, ns, run.y0); pe != nil {
		sol = pe
	}
	if sol != nil {
		buf := make([]float64, nx)
		for _, i := range run.order {
			sol.at(run.times[i]-run.t0, buf)
			run.store(i, buf)
		}
		return
	}
	var e, scaled mat.Dense
	yv := mat.NewVecDense(ns+nr, run.y0)
	out := mat.NewVecDense(ns+nr, nil)
	for _, i := range run.order {
		scaled.Scale(run.times[i]-run.t0, m)
		e.Exp(&scaled)
		out.MulVec(&e, yv)
		run.store(i, out.RawVector().Data)
	}
}

// solveIntegrated integrates the network through the output times after t0,
// from the Rosenbrock method on when asked, else from Dormand–Prince.
func (run *simRun) solveIntegrated(rosenbrock bool) error {
	tout := make([]float64, len(run.order))
	for a, i := range run.order {
		tout[a] = run.times[i]
	}
	st, err := integrate(run.sys, run.y0, run.t0, tout, run.set, rosenbrock, func(a int, y []float64) { run.store(run.order[a], y) })
	if err != nil {
		return fmt.Errorf("kinetics: simulate %q: %w", run.s.Text, err)
	}
	run.sim.Steps, run.sim.Rejected, run.sim.Stiff = st.steps, st.rejected, st.stiff
	if st.switched {
		run.sim.Method = "dopri5+rosenbrock23"
	}
	return nil
}

// pathStiffness raises the stiffness ratio to its largest over the output
// states: the Jacobian of a mass-action network changes along the path
// (Robertson's problem is not stiff at c0 at all).
func (run *simRun) pathStiffness() {
	sim := run.sim
	for _, i := range run.order {
		if r, _ := run.sys.stiffnessRatio(sim.C.RawRowView(i)); r > sim.StiffnessRatio {
			sim.StiffnessRatio = r
		}
	}
}

func finiteDense(m *mat.Dense) bool {
	r, c := m.Dims()
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			v := m.At(i, j)
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return false
			}
		}
	}
	return true
}

// network is the augmented mass-action system y = [c; ξ], dc/dt = N r(c), dξ/dt = r(c),
// r_j = k_j Π_i c_i^ν_ij. Integrating the extents alongside the concentrations gives them at the
// same accuracy instead of recovering them from c = c0 + Nξ, which is singular when N is.
type network struct {
	s      *Scheme
	k      []float64
	ns, nr int
	stoich [][]float64
	r      []float64 // scratch
}

func newNetwork(s *Scheme, k []float64) *network {
	return &network{s: s, k: k, ns: len(s.Species), nr: len(s.Steps), stoich: s.Stoichiometry(), r: make([]float64, len(s.Steps))}
}

// ipow raises c to a stoichiometric power; integer powers by multiplication keep the rate law
// defined (and smooth) for the slightly negative concentrations an integrator may step through.
func ipow(c, nu float64) float64 {
	if nu == 1 {
		return c
	}
	if nu == math.Trunc(nu) && nu > 0 && nu <= 16 {
		v := 1.0
		for i := 0; i < int(nu); i++ {
			v *= c
		}
		return v
	}
	if nu == 0 {
		return 1
	}
	return math.Pow(math.Max(c, 0), nu)
}

func (nw *network) rates(c, r []float64) {
	for j, st := range nw.s.Steps {
		v := nw.k[j]
		for _, t := range st.Reactants {
			v *= ipow(c[t.Species], t.Coef)
		}
		r[j] = v
	}
}

func (nw *network) deriv(y, dy []float64) {
	nw.rates(y[:nw.ns], nw.r)
	for i := 0; i < nw.ns; i++ {
		var v float64
		for j := 0; j < nw.nr; j++ {
			v += nw.stoich[i][j] * nw.r[j]
		}
		dy[i] = v
	}
	copy(dy[nw.ns:], nw.r)
}

// rateJac fills dr (nr × ns) with ∂r_j/∂c_i.
func (nw *network) rateJac(c []float64, dr *mat.Dense) {
	dr.Zero()
	for j, st := range nw.s.Steps {
		for a, ta := range st.Reactants {
			v := nw.k[j] * ta.Coef * ipow(c[ta.Species], ta.Coef-1)
			for b, tb := range st.Reactants {
				if b != a {
					v *= ipow(c[tb.Species], tb.Coef)
				}
			}
			if math.IsNaN(v) || math.IsInf(v, 0) {
				v = 0 // c^(ν−1) at c = 0 with ν < 1: leave it to the error control
			}
			dr.Set(j, ta.Species, v)
		}
	}
}

// jac fills j ((ns+nr)²) with ∂f/∂y of the augmented system; the extent columns are zero.
func (nw *network) jac(y []float64, j *mat.Dense) {
	dr := mat.NewDense(nw.nr, nw.ns, nil)
	nw.rateJac(y[:nw.ns], dr)
	j.Zero()
	for i := 0; i < nw.ns; i++ {
		for l := 0; l < nw.ns; l++ {
			var v float64
			for q := 0; q < nw.nr; q++ {
				v += nw.stoich[i][q] * dr.At(q, l)
			}
			j.Set(i, l, v)
		}
	}
	for q := 0; q < nw.nr; q++ {
		for l := 0; l < nw.ns; l++ {
			j.Set(nw.ns+q, l, dr.At(q, l))
		}
	}
}

// linearMatrix is the constant Jacobian of a first-order network: y(t) = exp(M (t−t0)) y0.
func (nw *network) linearMatrix() *mat.Dense {
	d := nw.ns + nw.nr
	m := mat.NewDense(d, d, nil)
	y := make([]float64, d)
	for i := range y[:nw.ns] {
		y[i] = 1 // any point: the Jacobian of a linear network is constant
	}
	nw.jac(y, m)
	return m
}

// stiffnessRatio returns max|Re λ|/min|Re λ| over the non-zero eigenvalues of ∂(N r)/∂c at c,
// and max|Re λ|.
func (nw *network) stiffnessRatio(c []float64) (ratio, lmax float64) {
	d := nw.ns + nw.nr
	full := mat.NewDense(d, d, nil)
	y := make([]float64, d)
	copy(y, c)
	nw.jac(y, full)
	sp := mat.DenseCopyOf(full.Slice(0, nw.ns, 0, nw.ns))
	var eig mat.Eigen
	if !eig.Factorize(sp, mat.EigenNone) {
		return 1, 0
	}
	vals := eig.Values(nil)
	lmin := math.Inf(1)
	for _, v := range vals {
		lmax = math.Max(lmax, math.Abs(real(v)))
	}
	if lmax == 0 {
		return 1, 0
	}
	nz := 0
	for _, v := range vals {
		if a := math.Abs(real(v)); a > 1e-12*lmax {
			lmin = math.Min(lmin, a)
			nz++
		}
	}
	if nz < 2 {
		return 1, lmax
	}
	return lmax / lmin, lmax
}

// Dormand & Prince (1980) RK5(4)7M coefficients; the 5th-order weights equal the last row of A
// (first same as last), e = b5 − b4 is the embedded error estimator.
var (
	dpC = [7]float64{0, 1.0 / 5, 3.0 / 10, 4.0 / 5, 8.0 / 9, 1, 1}
	dpA = [7][6]float64{
		{},
		{1.0 / 5},
		{3.0 / 40, 9.0 / 40},
		{44.0 / 45, -56.0 / 15, 32.0 / 9},
		{19372.0 / 6561, -25360.0 / 2187, 64448.0 / 6561, -212.0 / 729},
		{9017.0 / 3168, -355.0 / 33, 46732.0 / 5247, 49.0 / 176, -5103.0 / 18656},
		{35.0 / 384, 0, 500.0 / 1113, 125.0 / 192, -2187.0 / 6784, 11.0 / 84},
	}
	dpB5 = [7]float64{35.0 / 384, 0, 500.0 / 1113, 125.0 / 192, -2187.0 / 6784, 11.0 / 84, 0}
	dpB4 = [7]float64{5179.0 / 57600, 0, 7571.0 / 16695, 393.0 / 640, -92097.0 / 339200, 187.0 / 2100, 1.0 / 40}
)

type odeStats struct {
	steps, rejected int
	stiff, switched bool
	stiffDetections int
	nonStiffInARow  int
}

type odeSys interface {
	deriv(y, dy []float64)
	jac(y []float64, j *mat.Dense)
}

// errNorm is the RMS of the local error scaled by atol + rtol·max(|y|, |ynew|) (Hairer,
// Nørsett & Wanner, Solving ODEs I, §II.4).
func errNorm(e, y, ynew []float64, rtol, atol float64) float64 {
	var s float64
	for i := range e {
		sc := atol + rtol*math.Max(math.Abs(y[i]), math.Abs(ynew[i]))
		v := e[i] / sc
		s += v * v
	}
	return math.Sqrt(s / float64(len(e)))
}

// integrate advances y from t0 through the increasing output times tout, calling out(a, y) at
// each. Steps are shortened to land on output times exactly (no interpolation error).
func integrate(sys odeSys, y0 []float64, t0 float64, tout []float64, set SimSettings, rosenbrock bool, out func(int, []float64)) (odeStats, error) {
	if len(tout) == 0 {
		return odeStats{}, nil
	}
	in := newIntegration(sys, y0, t0, tout[len(tout)-1]-t0, set, rosenbrock)
	for a, target := range tout {
		for in.t < target {
			if err := in.advance(target); err != nil {
				return in.st, err
			}
		}
		out(a, in.y)
	}
	return in.st, nil
}

// integration is the state of one integration: the time, the state and its
// derivative, the step size, which method steps, and the counts.
type integration struct {
	sys        odeSys
	set        SimSettings
	span       float64 // from t0 to the last output time
	t, h       float64
	y, f0      []float64 // the state at t and f(y)
	rosenbrock bool
	dp         *dopri
	ros        *rosen
	st         odeStats
}

// newIntegration starts at y0 with the starting step size of Hairer, Nørsett & Wanner.
func newIntegration(sys odeSys, y0 []float64, t0, span float64, set SimSettings, rosenbrock bool) *integration {
	d := len(y0)
	in := &integration{sys: sys, set: set, span: span, t: t0, y: append([]float64(nil), y0...),
		f0: make([]float64, d), rosenbrock: rosenbrock, dp: newDopri(d), ros: newRosen(d)}
	sys.deriv(in.y, in.f0)
	in.h = initialStep(sys, in.y, in.f0, set.RelTol, set.AbsTol, span)
	return in
}

// advance tries one step towards target, shortened to land on it when it
// would pass it or stop just short. Past MaxSteps the explicit method hands
// over to the Rosenbrock method (so many steps are a sign of stiffness);
// the Rosenbrock method past MaxSteps gives up.
func (in *integration) advance(target float64) error {
	if in.st.steps+in.st.rejected >= in.set.MaxSteps {
		if in.rosenbrock {
			return fmt.Errorf("more than %d integrator steps before t = %g", in.set.MaxSteps, target)
		}
		in.switchToRosenbrock()
	}
	hh := in.h
	clipped := false
	if in.t+hh >= target || target-(in.t+hh) < 1e-12*math.Abs(target) {
		hh = target - in.t
		clipped = true
	}
	rtol, atol := in.set.RelTol, in.set.AbsTol
	var errv float64
	var ok bool
	if in.rosenbrock {
		errv, ok = in.ros.step(in.sys, in.y, in.f0, hh, rtol, atol)
	} else {
		errv, ok = in.dp.step(in.sys, in.y, in.f0, hh, rtol, atol)
	}
	if ok && errv <= 1 {
		in.accept(target, hh, errv, clipped)
		return nil
	}
	return in.reject(hh, errv, ok)
}

// switchToRosenbrock hands the rest of the span to the Rosenbrock method,
// and marks the problem stiff.
func (in *integration) switchToRosenbrock() {
	in.rosenbrock, in.st.switched, in.st.stiff = true, true, true
}

// accept takes the step of size hh and sets the next step size from its
// error. A step shortened to land on an output time does not shrink the
// next one.
func (in *integration) accept(target, hh, errv float64, clipped bool) {
	in.st.steps++
	if clipped {
		in.t = target
	} else {
		in.t += hh
	}
	var hnew float64
	if in.rosenbrock {
		copy(in.y, in.ros.ynew)
		copy(in.f0, in.ros.fnew)
		hnew = hh * math.Min(5, 0.8*math.Pow(math.Max(errv, 1e-10), -1.0/3))
	} else {
		copy(in.y, in.dp.ynew)
		copy(in.f0, in.dp.k[6])
		hnew = hh * math.Min(10, math.Max(0.2, 0.9*math.Pow(math.Max(errv, 1e-10), -0.2)))
		in.watchStiffness(hh)
	}
	if clipped {
		in.h = math.Max(in.h, hnew)
	} else {
		in.h = hnew
	}
}

// watchStiffness applies Hairer & Wanner's test after an accepted explicit
// step: 15 stiff estimates (h|λ| > 3.25) switch to the Rosenbrock method,
// and 6 non-stiff ones in a row clear the count.
func (in *integration) watchStiffness(hh float64) {
	st := &in.st
	if in.dp.stiffEstimate(hh) > 3.25 {
		st.nonStiffInARow = 0
		st.stiffDetections++
		if st.stiffDetections >= 15 {
			in.switchToRosenbrock()
		}
		return
	}
	st.nonStiffInARow++
	if st.nonStiffInARow >= 6 {
		st.stiffDetections = 0
	}
}

// reject shrinks the step after a failed one (by a tenth when the step
// could not be taken at all). A step size collapsing is the other symptom
// of stiffness: the explicit method then hands over, and the Rosenbrock
// method gives up.
func (in *integration) reject(hh, errv float64, ok bool) error {
	in.st.rejected++
	switch {
	case !ok || math.IsNaN(errv):
		in.h = hh * 0.1
	case in.rosenbrock:
		in.h = hh * math.Max(0.1, 0.8*math.Pow(errv, -1.0/3))
	default:
		in.h = hh * math.Max(0.1, 0.9*math.Pow(errv, -0.2))
	}
	if in.h < 1e-13*math.Max(math.Abs(in.t), in.span) {
		if in.rosenbrock {
			return fmt.Errorf("step size underflow at t = %g", in.t)
		}
		in.switchToRosenbrock()
		in.h = math.Max(in.h, 1e-10*in.span)
	}
	return nil
}

// initialStep follows Hairer, Nørsett & Wanner (Solving ODEs I, §II.4, "starting step size").
func initialStep(sys odeSys, y, f0 []float64, rtol, atol, span float64) float64 {
	d := len(y)
	var d0, d1 float64
	for i := range y {
		sc := atol + rtol*math.Abs(y[i])
		d0 += (y[i] / sc) * (y[i] / sc)
		d1 += (f0[i] / sc) * (f0[i] / sc)
	}
	d0, d1 = math.Sqrt(d0/float64(d)), math.Sqrt(d1/float64(d))
	h0 := 1e-6
	if d0 >= 1e-5 && d1 >= 1e-5 {
		h0 = 0.01 * d0 / d1
	}
	h0 = math.Min(h0, span)
	y1 := make([]float64, d)
	f1 := make([]float64, d)
	for i := range y {
		y1[i] = y[i] + h0*f0[i]
	}
	sys.deriv(y1, f1)
	var d2 float64
	for i := range y {
		sc := atol + rtol*math.Abs(y[i])
		v := (f1[i] - f0[i]) / sc
		d2 += v * v
	}
	d2 = math.Sqrt(d2/float64(d)) / h0
	var h1 float64
	if m := math.Max(d1, d2); m <= 1e-15 {
		h1 = math.Max(1e-6, h0*1e-3)
	} else {
		h1 = math.Pow(0.01/m, 0.2)
	}
	h := math.Min(100*h0, h1)
	if h > span {
		h = span
	}
	if !(h > 0) {
		h = span * 1e-6
	}
	return h
}

type dopri struct {
	k       [7][]float64
	ytmp    []float64
	ystage6 []float64
	ynew    []float64
	errv    []float64
}

func newDopri(d int) *dopri {
	dp := &dopri{ytmp: make([]float64, d), ystage6: make([]float64, d), ynew: make([]float64, d), errv: make([]float64, d)}
	for i := range dp.k {
		dp.k[i] = make([]float64, d)
	}
	return dp
}

// step takes one Dormand–Prince step from y (with f0 = f(y)) and returns the scaled error.
func (dp *dopri) step(sys odeSys, y, f0 []float64, h, rtol, atol float64) (float64, bool) {
	copy(dp.k[0], f0)
	for s := 1; s < 7; s++ {
		for i := range y {
			v := y[i]
			for j := 0; j < s; j++ {
				v += h * dpA[s][j] * dp.k[j][i]
			}
			dp.ytmp[i] = v
		}
		if s == 5 {
			copy(dp.ystage6, dp.ytmp)
		}
		if s == 6 {
			copy(dp.ynew, dp.ytmp) // row 7 of A is b5: the 5th-order solution (FSAL)
		}
		sys.deriv(dp.ytmp, dp.k[s])
	}
	for i := range y {
		var e float64
		for j := 0; j < 7; j++ {
			e += (dpB5[j] - dpB4[j]) * dp.k[j][i]
		}
		dp.errv[i] = h * e
		if math.IsNaN(dp.ynew[i]) || math.IsInf(dp.ynew[i], 0) {
			return math.Inf(1), false
		}
	}
	return errNorm(dp.errv, y, dp.ynew, rtol, atol), true
}

// stiffEstimate is h·‖f(y7) − f(y6)‖/‖y7 − y6‖ ≈ h|λ_max| from the last two stages, which are
// both at t + h (Hairer & Wanner's stiffness detection for DOPRI5).
func (dp *dopri) stiffEstimate(h float64) float64 {
	var num, den float64
	for i := range dp.ynew {
		a := dp.k[6][i] - dp.k[5][i]
		b := dp.ynew[i] - dp.ystage6[i]
		num += a * a
		den += b * b
	}
	if den <= 0 {
		return 0
	}
	return h * math.Sqrt(num/den)
}

// rosen is the L-stable Rosenbrock (W) pair of order 2(3) of Shampine & Reichelt (1997),
// with d = 1/(2+√2) and the Jacobian re-evaluated every step.
type rosen struct {
	d                      int
	jm, w                  *mat.Dense
	k1, k2, k3, f1, tmp    []float64
	ynew, fnew, errv, rhsb []float64
}

func newRosen(d int) *rosen {
	return &rosen{d: d, jm: mat.NewDense(d, d, nil), w: mat.NewDense(d, d, nil),
		k1: make([]float64, d), k2: make([]float64, d), k3: make([]float64, d), f1: make([]float64, d),
		tmp: make([]float64, d), ynew: make([]float64, d), fnew: make([]float64, d), errv: make([]float64, d), rhsb: make([]float64, d)}
}

func (r *rosen) step(sys odeSys, y, f0 []float64, h, rtol, atol float64) (float64, bool) {
	const dd = 1 / (2 + math.Sqrt2)
	const e32 = 6 + math.Sqrt2
	sys.jac(y, r.jm)
	for i := 0; i < r.d; i++ {
		for j := 0; j < r.d; j++ {
			v := -h * dd * r.jm.At(i, j)
			if i == j {
				v++
			}
			r.w.Set(i, j, v)
		}
	}
	var lu mat.LU
	lu.Factorize(r.w)
	if lu.Det() == 0 || lu.Cond() > 1e15 {
		return 0, false
	}
	solve := func(rhs, dst []float64) bool {
		copy(r.rhsb, rhs)
		b := mat.NewVecDense(r.d, r.rhsb)
		x := mat.NewVecDense(r.d, dst)
		return lu.SolveVecTo(x, false, b) == nil
	}
	if !solve(f0, r.k1) {
		return 0, false
	}
	for i := range y {
		r.tmp[i] = y[i] + 0.5*h*r.k1[i]
	}
	sys.deriv(r.tmp, r.f1)
	for i := range y {
		r.tmp[i] = r.f1[i] - r.k1[i]
	}
	if !solve(r.tmp, r.k2) {
		return 0, false
	}
	for i := range y {
		r.k2[i] += r.k1[i]
		r.ynew[i] = y[i] + h*r.k2[i]
	}
	sys.deriv(r.ynew, r.fnew)
	for i := range y {
		r.tmp[i] = r.fnew[i] - e32*(r.k2[i]-r.f1[i]) - 2*(r.k1[i]-f0[i])
	}
	if !solve(r.tmp, r.k3) {
		return 0, false
	}
	for i := range y {
		r.errv[i] = h / 6 * (r.k1[i] - 2*r.k2[i] + r.k3[i])
		if math.IsNaN(r.ynew[i]) || math.IsInf(r.ynew[i], 0) {
			return math.Inf(1), false
		}
	}
	return errNorm(r.errv, y, r.ynew, rtol, atol), true
}

// eigenExp is the exact solution of a first-order network through the
// eigendecomposition of its species block K = V Λ V⁻¹ (a compartmental
// matrix: real eigenvalues ≤ 0 for networks without oscillating cycles):
//
//	c(t) = V e^{Λt} w,  ξ(t) = R V φ(Λ, t) w,  w = V⁻¹ c0,  φ(λ, t) = (e^{λt} − 1)/λ,
//
// with R the rates' matrix (dξ/dt = R c) and φ(0, t) = t. Each time costs
// k exponentials and the error is that of w, about cond(V)·ε, at any k·t,
// whereas scaling and squaring the whole exponential (gonum's Padé) loses
// accuracy as the squarings grow with ‖K‖·t (2.4·10⁻⁷ relative at
// k = 3·10⁵ s⁻¹, t = 10⁴ s). It is used whenever V is well conditioned
// (cond < 10³). Nearly equal rates make V ill-conditioned (the defective
// limit, b = k t e^{−kt}): newEigenExp then returns nil and the path sums
// of pathExp are used, or for networks with cycles the Padé exponential.
type eigenExp struct {
	ns, nr  int
	lambda  []float64
	v, rv   *mat.Dense // V (ns × ns) and R V (nr × ns)
	w       []float64
	scratch *mat.VecDense
}

func newEigenExp(m *mat.Dense, ns int, y0 []float64) *eigenExp {
	d, _ := m.Dims()
	nr := d - ns
	var eig mat.Eigen
	if !eig.Factorize(mat.DenseCopyOf(m.Slice(0, ns, 0, ns)), mat.EigenRight) {
		return nil
	}
	vals := eig.Values(nil)
	scale := 0.0
	for _, l := range vals {
		scale = math.Max(scale, math.Abs(real(l)))
	}
	lambda := make([]float64, ns)
	for i, l := range vals {
		if math.Abs(imag(l)) > 1e-12*math.Max(scale, 1e-300) {
			return nil // oscillating modes
		}
		lambda[i] = real(l)
		if math.Abs(lambda[i]) <= 1e-12*float64(ns)*scale {
			lambda[i] = 0 // a conserved total: exactly zero, not rounding
		}
	}
	var vc mat.CDense
	eig.VectorsTo(&vc)
	v := mat.NewDense(ns, ns, nil)
	for i := 0; i < ns; i++ {
		for j := 0; j < ns; j++ {
			v.Set(i, j, real(vc.At(i, j)))
		}
	}
	var lu mat.LU
	lu.Factorize(v)
	// cond(V)·ε bounds the error of w: under 1e-13 relative here; nearer
	// to defective, pathExp (acyclic) or Padé (cycles) takes over.
	if c := lu.Cond(); !(c < 1e3) {
		return nil
	}
	var wv mat.VecDense
	if err := lu.SolveVecTo(&wv, false, mat.NewVecDense(ns, append([]float64(nil), y0[:ns]...))); err != nil {
		return nil
	}
	ex := &eigenExp{ns: ns, nr: nr, lambda: lambda, v: v, w: wv.RawVector().Data, scratch: mat.NewVecDense(ns, nil)}
	if nr > 0 {
		ex.rv = mat.NewDense(nr, ns, nil)
		ex.rv.Mul(m.Slice(ns, d, 0, ns), v)
	}
	return ex
}

// at writes [c(t); ξ(t)] into y, on raw slices: it runs once per time
// in every residual of a fit.
func (ex *eigenExp) at(t float64, y []float64) {
	g := ex.scratch.RawVector().Data
	for i, l := range ex.lambda {
		g[i] = math.Exp(l*t) * ex.w[i]
	}
	mulRaw(ex.v, g, y[:ex.ns])
	if ex.nr == 0 {
		return
	}
	for i, l := range ex.lambda {
		phi := t
		if l != 0 {
			phi = math.Expm1(l*t) / l
		}
		g[i] = phi * ex.w[i]
	}
	mulRaw(ex.rv, g, y[ex.ns:ex.ns+ex.nr])
}

// mulRaw writes a·x into dst, summing each row in column order.
func mulRaw(a *mat.Dense, x, dst []float64) {
	for i := range dst {
		row := a.RawRowView(i)
		var v float64
		for j, aij := range row[:len(x)] {
			v += aij * x[j]
		}
		dst[i] = v
	}
}
