package pipeline

import (
	"bytes"
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"sync"
	"testing"

	"github.com/bandsolve/bandsolve/internal/vecmath"
	"github.com/bandsolve/bandsolve/io/demo"
	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/mcr/kinetics"
	"gonum.org/v1/gonum/mat"
)

// writeDemo writes the built-in invented data set (A -> B -> C, first order,
// built from the Bateman 1910 solution with k1 = 4e-3 /s, k2 = 1.5e-3 /s,
// t0 = 60 s) into a temporary folder.
func writeDemo(t *testing.T) (*demo.Truth, string) {
	t.Helper()
	truth := demo.Make(1)
	dir := t.TempDir()
	for name, b := range truth.Files() {
		if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return truth, dir
}

var demoRun struct {
	once  sync.Once
	truth *demo.Truth
	r     *Result
	err   error
}

// demoSpecies runs the demo in species mode once for every test that only
// reads the result.
func demoSpecies(t *testing.T) (*demo.Truth, *Result) {
	t.Helper()
	demoRun.once.Do(func() {
		truth := demo.Make(1)
		dir, err := os.MkdirTemp("", "bandsolve-kinetics-")
		if err != nil {
			demoRun.err = err
			return
		}
		defer os.RemoveAll(dir)
		for name, b := range truth.Files() {
			if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
				demoRun.err = err
				return
			}
		}
		demoRun.truth = truth
		demoRun.r, demoRun.err = Run(demoSettings(dir, true), nil)
	})
	if demoRun.err != nil {
		t.Fatal(demoRun.err)
	}
	return demoRun.truth, demoRun.r
}

func demoSettings(dir string, blank bool) *Settings {
	s := NewSettings()
	s.Data = []string{filepath.Join(dir, "series.csv")}
	s.Kind = "single-beam"
	if blank {
		s.Blanks = []string{filepath.Join(dir, "blank.csv")}
	}
	s.Pre = 3
	s.Model = "A -> B -> C"
	s.T0 = "60"
	return s
}

// within checks |k − truth| ≤ n·se, with se > 0 (a zero standard error
// would make any check pass or fail for no reason).
func within(t *testing.T, what string, k, se, truth, n float64) {
	t.Helper()
	if !(se > 0) {
		t.Errorf("%s: standard error %v, want > 0", what, se)
		return
	}
	if d := math.Abs(k-truth) / se; d > n {
		t.Errorf("%s: k = %.6g ± %.2g, truth %g: %.1f standard errors off (allowed %g)", what, k, se, truth, d, n)
	}
}

// The demo data in species mode (blank single beam): the rate constants of
// the reported fit (the data matrix, variable projection) lie within 3
// standard errors of the values the data were made from (demo.Make, from
// the Bateman solution), half-lives are ln 2 / k (first-order definition),
// and summary.json carries the contract's keys with steps in written order.
func TestKineticsDemoSpeciesMode(t *testing.T) {
	truth, r := demoSpecies(t)
	kn := r.Kinetics
	if kn == nil || kn.Reported() == nil {
		t.Fatal("no kinetic fit")
	}
	if kn.Extents || kn.Amplitudes {
		t.Fatalf("species mode with closure: want concentrations and no amplitudes, got extents=%v amplitudes=%v", kn.Extents, kn.Amplitudes)
	}
	// Demo truth: component j is species j (orderComponents sorts by time of
	// the maximum, which for A -> B -> C is A, B, C).
	for j, col := range kn.Columns {
		if col != j {
			t.Errorf("auto map: component %d -> species %d, want %d", j+1, col, j)
		}
	}
	rep := kn.Reported()
	if rep.Method != "data" {
		t.Fatalf("reported fit %q, want data (the default of --kinetic-fit)", rep.Method)
	}
	want := []float64{truth.K1, truth.K2}
	for j := range want {
		within(t, "data fit "+kn.Scheme.Steps[j].Text, rep.Fit.K[j], rep.Fit.KStdErr[j], want[j], 3)
		if hl := rep.Fit.HalfLife[j]; math.Abs(hl-math.Ln2/rep.Fit.K[j]) > 1e-9*hl {
			t.Errorf("half-life %v, want ln 2 / k = %v", hl, math.Ln2/rep.Fit.K[j])
		}
	}
	// The profile fit is biased by the rotational ambiguity left in the
	// soft profiles; its residuals say so (lag-1 autocorrelation warning).
	prof := kn.Find("profiles")
	if prof == nil {
		t.Fatal("no profile fit")
	}
	warned := false
	for _, w := range prof.Fit.Warnings {
		warned = warned || strings.Contains(w, "correlated in time")
	}
	if !warned {
		t.Errorf("the profile fit's residuals are systematic (its k2 is %.4g vs truth %g) but no warning says so", prof.Fit.K[1], truth.K2)
	}

	// Slow–fast ambiguity: in the Bateman solution b and c = 1 − a − b are
	// combinations of 1, e^{−k1 t} and e^{−k2 t}, so with free spectra the
	// swapped constants fit the data matrix exactly as well; the exchange
	// check must compare them and say what decides: non-negative spectra
	// (a note with the residual of each, in noise variances) or nothing
	// (the ambiguity warning), never pretend the data chose.
	compared := ""
	for _, n := range r.Notes {
		if strings.Contains(n, "fit the data as well as the reported k = (A -> B") && strings.Contains(n, "worse with non-negative spectra") && strings.Contains(n, "noise variances") {
			compared = n
		}
	}
	for _, w := range rep.Fit.Warnings {
		if strings.Contains(w, "cannot tell the order of the rate constants") {
			compared = w
		}
	}
	if compared == "" {
		t.Errorf("the data fit does not report how the exchanged rate constants compare; notes %q, warnings %q", r.Notes, rep.Fit.Warnings)
	}
	t.Logf("exchange check: %s", compared)

	b, err := output.JSON(MakeSummary(r))
	if err != nil {
		t.Fatal(err)
	}
	var sum struct {
		Kinetics struct {
			Model         string `json:"model"`
			RateConstants []struct {
				Step   string   `json:"step"`
				K      *float64 `json:"k_per_s"`
				StdErr *float64 `json:"stderr_per_s"`
			} `json:"rate_constants"`
		} `json:"kinetics"`
	}
	if err := json.Unmarshal(b, &sum); err != nil {
		t.Fatal(err)
	}
	tab, err := kineticsTable(r)
	if err != nil {
		t.Fatal(err)
	}
	if h := strings.Join(tab.Header, ","); h != "time,A_observed,A_fitted,A_data_fit,B_observed,B_fitted,B_data_fit,C_observed,C_fitted,C_data_fit" {
		t.Errorf("kinetics.csv header %q: want time, then observed and fitted per species", h)
	}
	// Contract keys (CONTRACT.md): kinetics.model, rate_constants[].step,
	// k_per_s, stderr_per_s, in the order the steps are written.
	if sum.Kinetics.Model != "A -> B -> C" || len(sum.Kinetics.RateConstants) != 2 {
		t.Fatalf("summary kinetics %+v", sum.Kinetics)
	}
	for j, st := range []string{"A -> B", "B -> C"} {
		rc := sum.Kinetics.RateConstants[j]
		if rc.Step != st || rc.K == nil || rc.StdErr == nil {
			t.Errorf("rate_constants[%d] = %+v, want step %q with k_per_s and stderr_per_s", j, rc, st)
		}
	}
}

// makeSecondOrder builds single beams for 2 A -> P with the integrated
// second-order law under the IUPAC rate of reaction r = k[A]²
// (d[A]/dt = −2k[A]²): 1/[A] − 1/[A]0 = 2k(t − t0), [P] = ([A]0 − [A])/2.
func makeSecondOrder(t *testing.T, k float64) (dir string) {
	t.Helper()
	var axis, times []float64
	for x := 1800.0; x >= 1200; x -= 3 {
		axis = append(axis, x)
	}
	for tm := 0.0; tm <= 3000; tm += 30 {
		times = append(times, tm)
	}
	const t0, a0 = 60.0, 1.0
	band := func(centre, width, height float64) func(x float64) float64 {
		return func(x float64) float64 { d := (x - centre) / width; return height * math.Exp(-0.5*d*d) }
	}
	a1, a2, p1, p2 := band(1700, 14, 0.5), band(1450, 20, 0.25), band(1640, 16, 0.6), band(1350, 18, 0.3)
	sa, sp := make([]float64, len(axis)), make([]float64, len(axis))
	for j, x := range axis {
		sa[j], sp[j] = a1(x)+a2(x), p1(x)+p2(x)
	}
	rng := rand.New(rand.NewPCG(7, 11))
	head := []string{"wavenumber"}
	for _, tm := range times {
		head = append(head, output.Float(tm))
	}
	tab := output.Table{Header: head}
	beams := make([][]float64, len(times))
	for i, tm := range times {
		a := 1 / (1/a0 + 2*k*math.Max(0, tm-t0))
		p := (a0 - a) / 2
		beams[i] = make([]float64, len(axis))
		for j, x := range axis {
			u := (x - 1500) / 500
			env := 2e4 * math.Exp(-u*u)
			beams[i][j] = env * math.Pow(10, -(a*sa[j]+p*sp[j])) * (1 + 2e-4*rng.NormFloat64())
		}
	}
	for j, x := range axis {
		row := []string{output.Float(x)}
		for i := range times {
			row = append(row, output.Float(beams[i][j]))
		}
		tab.Rows = append(tab.Rows, row)
	}
	dir = t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "series.csv"), tab.CSV(), 0o644); err != nil {
		t.Fatal(err)
	}
	return dir
}

// Second order, 2 A -> P, from difference data (reactions mode, one
// extent): both fits recover k within 3 standard errors of the value the
// data were made from (integrated second-order law), the unit is stated
// per [A]0 and the half-life is 1/(2k[A]0) (same convention).
func TestKineticsSecondOrder(t *testing.T) {
	const k = 2e-3
	dir := makeSecondOrder(t, k)
	s := NewSettings()
	s.Data, s.Kind, s.Pre = []string{filepath.Join(dir, "series.csv")}, "single-beam", 3
	s.Model = "2 A -> P"
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	kn := r.Kinetics
	if r.Mode.String() != "reactions" || r.Components != 1 || kn == nil || !kn.Extents || !kn.Amplitudes {
		t.Fatalf("mode %s, %d components, kinetics %+v; want reactions, 1, extents with amplitudes", r.Mode, r.Components, kn)
	}
	if kn.T0 != 60 {
		t.Errorf("default t0 = %g, want 60 s, the time of the last pre-reaction spectrum (--pre 3)", kn.T0)
	}
	for _, f := range kn.Fits {
		t.Logf("%s fit: k = %.6g ± %.2g (truth %g)", f.Method, f.Fit.K[0], f.Fit.KStdErr[0], k)
		within(t, f.Method+" fit", f.Fit.K[0], f.Fit.KStdErr[0], k, 3)
		if hl := f.Fit.HalfLife[0]; math.Abs(hl-1/(2*f.Fit.K[0])) > 1e-9*hl {
			t.Errorf("%s: half-life %v, want 1/(2k[A]0) = %v", f.Method, hl, 1/(2*f.Fit.K[0]))
		}
	}
	if u := kn.rateUnit(2); u != "([A]0)^-1 s^-1" {
		t.Errorf("second-order unit %q, want ([A]0)^-1 s^-1", u)
	}
	sum := MakeSummary(r)
	if sum.Kinetics == nil || sum.Kinetics.RateConstants[0].Unit != "([A]0)^-1 s^-1" || !strings.Contains(sum.Kinetics.ConcentrationUnit, "[A]0") {
		t.Errorf("summary does not state the second-order unit: %+v", sum.Kinetics)
	}
}

// Reactions mode, A -> B -> C from difference spectra only: non-negative
// extents with free-signed reaction spectra are rotationally ambiguous, so
// the soft extents are mixtures and their kinetic fit is far off. Hard–soft
// ALS (de Juan et al. 2000) must recover the true extents ξ1 = 1 − [A],
// ξ2 = [C] (Bateman 1910, as the data were made), the true reaction spectra
// s_B − s_A and s_C − s_B, and rate constants within 3 standard errors.
func TestHardSoftResolvesAmbiguousExtents(t *testing.T) {
	truth, dir := writeDemo(t)
	s := demoSettings(dir, false)
	s.HardModel = true
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.Mode.String() != "reactions" || r.Components != 2 || r.SoftALS == nil || r.Kinetics == nil {
		t.Fatalf("mode %s, %d components, soft %v; want reactions, 2, a soft solution kept", r.Mode, r.Components, r.SoftALS != nil)
	}
	n, _ := truth.Profiles.Dims()
	m, _ := truth.Spectra.Dims()
	xi := mat.NewDense(n, 2, nil)
	for i := 0; i < n; i++ {
		xi.Set(i, 0, 1-truth.Profiles.At(i, 0))
		xi.Set(i, 1, truth.Profiles.At(i, 2))
	}
	rs := mat.NewDense(m, 2, nil)
	for i := 0; i < m; i++ {
		rs.Set(i, 0, truth.Spectra.At(i, 1)-truth.Spectra.At(i, 0))
		rs.Set(i, 1, truth.Spectra.At(i, 2)-truth.Spectra.At(i, 1))
	}
	kn := r.Kinetics
	for j, comp := range kn.Components {
		step := kn.Columns[j]
		soft := Cosine(mat.Col(nil, step, xi), mat.Col(nil, comp, r.SoftALS.C))
		hard := Cosine(mat.Col(nil, step, xi), mat.Col(nil, comp, r.ALS.C))
		spec := Cosine(mat.Col(nil, step, rs), mat.Col(nil, comp, r.ALS.S))
		t.Logf("step %d: extent cosine soft %.5f, hard-soft %.6f; reaction spectrum cosine %.6f", step+1, soft, hard, spec)
		if hard < 0.9999 {
			t.Errorf("hard–soft extent of step %d: cosine %.6f with the truth, want ≥ 0.9999", step+1, hard)
		}
		if spec < 0.999 {
			t.Errorf("hard–soft reaction spectrum of step %d: cosine %.6f with the truth, want ≥ 0.999", step+1, spec)
		}
	}
	want := []float64{truth.K1, truth.K2}
	softFit, hardFit, dataFit := kn.Find("soft-profiles"), kn.Find("hard-soft"), kn.Find("data")
	if softFit == nil || hardFit == nil || dataFit == nil {
		t.Fatal("want soft-profiles, hard-soft and data fits reported")
	}
	// The case is ambiguous: the soft fit lands far from the truth.
	off := 0.0
	for j := range want {
		off = math.Max(off, math.Abs(softFit.Fit.K[j]/want[j]-1))
	}
	if off < 0.1 {
		t.Errorf("soft extents fit within %.0f %% of the truth: the test case is not ambiguous enough to show anything", 100*off)
	}
	for j := range want {
		within(t, "data fit "+kn.Scheme.Steps[j].Text, dataFit.Fit.K[j], dataFit.Fit.KStdErr[j], want[j], 3)
		// The hard–soft constants agree with the data fit within twice its
		// standard error: both minimise a residual of D − C(k) Sᵀ, the
		// hard–soft one weighted by the noise (1/σ², Wentzell et al. 1997)
		// and the data fit's plain, so they are two estimates of k from the
		// same data, not one.
		if d := math.Abs(hardFit.Fit.K[j] - dataFit.Fit.K[j]); d > 2*dataFit.Fit.KStdErr[j] {
			t.Errorf("hard–soft k%d = %.7g differs from the data fit %.7g by more than twice its standard error %.2g", j+1, hardFit.Fit.K[j], dataFit.Fit.K[j], dataFit.Fit.KStdErr[j])
		}
	}
	// Advice names only what the run has not done (common practice for a
	// tool's messages): this run already has --hard-model.
	for _, w := range r.Warnings {
		if strings.Contains(w, "try --hard-model") {
			t.Errorf("a run with --hard-model is told to try it: %q", w)
		}
	}
}

// The same input gives byte-identical summary.json and kinetics.csv, also
// with one thread (determinism rule). The second-order case goes through
// the Runge–Kutta integrator and Levenberg–Marquardt.
func TestKineticsDeterministic(t *testing.T) {
	dir := makeSecondOrder(t, 2e-3)
	render := func() []byte {
		s := NewSettings()
		s.Data, s.Kind, s.Pre, s.Model = []string{filepath.Join(dir, "series.csv")}, "single-beam", 3, "2 A -> P"
		r, err := Run(s, nil)
		if err != nil {
			t.Fatal(err)
		}
		b, err := output.JSON(MakeSummary(r))
		if err != nil {
			t.Fatal(err)
		}
		tab, err := kineticsTable(r)
		if err != nil {
			t.Fatal(err)
		}
		return append(b, tab.CSV()...)
	}
	a := render()
	prev := runtime.GOMAXPROCS(1)
	b := render()
	runtime.GOMAXPROCS(prev)
	if !bytes.Equal(a, b) {
		t.Error("two runs on the same input give different kinetics output")
	}
	if !bytes.Contains(a, []byte("time,extent_1_observed,extent_1_fitted,extent_1_data_fit\n")) {
		t.Errorf("kinetics.csv header is not time, then observed and fitted per step")
	}
}

func oneLineUsage(t *testing.T, err error, want string) {
	t.Helper()
	var ue *UsageError
	if !errors.As(err, &ue) {
		t.Fatalf("error %v (%T), want a usage error", err, err)
	}
	if strings.Contains(err.Error(), "\n") || !strings.Contains(err.Error(), want) {
		t.Errorf("usage error %q: want one line containing %q", err.Error(), want)
	}
}

// Mistakes in the kinetic settings are one-line usage errors (exit code 2);
// those that need no data are found before any is read.
func TestKineticsUsageErrors(t *testing.T) {
	for _, c := range []struct {
		name  string
		set   func(s *Settings)
		wants string
	}{
		{"unknown species", func(s *Settings) { s.Map = "A=1,X=2" }, `"X" is not a species`},
		{"not a number", func(s *Settings) { s.Map = "A=first" }, "component number"},
		{"bad pair", func(s *Settings) { s.Map = "A" }, "NAME=VALUE"},
		{"map without model", func(s *Settings) { s.Model, s.Map = "", "A=1" }, "--map needs --model"},
		// The profile fit chosen, or a start time given, without a model
		// was ignored without a word (a trial run); every kinetic option
		// needs --model.
		{"kinetic-fit profiles without model", func(s *Settings) { s.Model, s.KineticFit = "", "profiles" }, "--kinetic-fit profiles needs --model"},
		{"t0 without model", func(s *Settings) { s.Model, s.T0 = "", "105" }, "--t0 needs --model"},
		{"fit-t0 without model", func(s *Settings) { s.Model, s.FitT0 = "", true }, "--fit-t0 needs --model"},
		{"bad scheme", func(s *Settings) { s.Model = "A -> -> B" }, "--model"},
		{"unknown step", func(s *Settings) { s.KFixed = "3=1e-3" }, "not a step"},
		{"bad c0", func(s *Settings) { s.C0 = "A=-1" }, "--c0"},
	} {
		t.Run(c.name, func(t *testing.T) {
			s := NewSettings()
			s.Data = []string{filepath.Join(t.TempDir(), "never-read.csv")}
			s.Model = "A -> B -> C"
			c.set(s)
			_, err := Run(s, nil)
			oneLineUsage(t, err, c.wants)
		})
	}
	// Errors that need the resolution: a component number beyond the
	// components resolved, a component given twice, species names in
	// reactions mode.
	_, shared := demoSpecies(t)
	r := *shared
	s := *shared.Settings
	r.Settings = &s
	for _, c := range []struct{ m, wants string }{
		{"A=1,B=4", "component 4 does not exist; the resolution has 3 component(s)"},
		// "species" is its own singular (any English dictionary; from
		// memory), never "specie".
		{"A=1,B=1", "component 1 is given to both A and B; each component is one species"},
		{"A=1,A=2", "A and A name the same species"},
	} {
		s.Map = c.m
		_, err := newKinetics(&r, r.ALS.C)
		oneLineUsage(t, err, c.wants)
	}
	// An explicit map equal to the automatic one gives the same fit.
	s.Map = "C=3,A=1,B=2"
	kn, err := newKinetics(&r, r.ALS.C)
	if err != nil {
		t.Fatal(err)
	}
	if len(kn.Columns) != 3 || kn.Components[0] != 2 || kn.Columns[0] != 2 || kn.Columns[1] != 0 {
		t.Errorf("--map C=3,A=1,B=2 gave components %v -> columns %v", kn.Components, kn.Columns)
	}
	r.Mode = mcr.Reactions // components are steps
	s.Map = "A=1"
	_, err = newKinetics(&r, r.ALS.C)
	oneLineUsage(t, err, "in reactions mode the components are reactions")
}

// --k-fixed holds a step's rate constant exactly and fits the others: with
// k₂ fixed at the value the demo was built from, the fitted k₁ must land
// within 3 standard errors of its own truth (Bateman data, demo.Make), the
// fixed constant must come back unchanged with no standard error, and
// --k-start must only move the start, not the answer.
func TestKineticsFixedAndStartingConstants(t *testing.T) {
	truth, dir := writeDemo(t)
	s := demoSettings(dir, true)
	s.KFixed = "2=" + strconv.FormatFloat(truth.K2, 'g', -1, 64)
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	rep := r.Kinetics.Reported()
	if rep.Fit.K[1] != truth.K2 || rep.Fit.KStdErr[1] != 0 {
		t.Errorf("fixed k2 came back as %v ± %v, want exactly %v ± 0", rep.Fit.K[1], rep.Fit.KStdErr[1], truth.K2)
	}
	within(t, "k1 with k2 fixed", rep.Fit.K[0], rep.Fit.KStdErr[0], truth.K1, 3)

	s2 := demoSettings(dir, true)
	s2.KStart = "1=1e-3,2=1e-2"
	r2, err := Run(s2, nil)
	if err != nil {
		t.Fatal(err)
	}
	_, ref := demoSpecies(t)
	for j := range truth.Species[:2] {
		a, b := r2.Kinetics.Reported().Fit.K[j], ref.Kinetics.Reported().Fit.K[j]
		if math.Abs(a-b) > 1e-3*b {
			t.Errorf("step %d: k = %v from --k-start, %v from the automatic start", j+1, a, b)
		}
	}
}

// Hard–soft ALS makes its first data fit beside the soft resolution
// (earlyDataFit) and the exchange check's refits and costs ahead of its
// loop on worker goroutines (checkAhead): the same input must still give
// byte-identical summary.json and kinetics.csv and the same resolved
// profiles and spectra bit for bit at GOMAXPROCS 1, 2 and 3 (determinism
// rule). The demo in species mode with --hard-model (A -> B -> C, whose
// two orders of k1 and k2 fit alike with free spectra: the slow–fast
// ambiguity, so the check compares non-negative costs).
func TestHardSoftSameAtAnyGOMAXPROCS(t *testing.T) {
	_, dir := writeDemo(t)
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	type run struct {
		text []byte
		c, s *mat.Dense
	}
	render := func(procs int) run {
		runtime.GOMAXPROCS(procs)
		s := demoSettings(dir, true)
		s.HardModel = true
		r, err := Run(s, nil)
		if err != nil {
			t.Fatal(err)
		}
		if r.SoftALS == nil || r.Kinetics == nil {
			t.Fatalf("GOMAXPROCS %d: no hard–soft resolution or kinetics", procs)
		}
		b, err := output.JSON(MakeSummary(r))
		if err != nil {
			t.Fatal(err)
		}
		tab, err := kineticsTable(r)
		if err != nil {
			t.Fatal(err)
		}
		return run{append(b, tab.CSV()...), r.ALS.C, r.ALS.S}
	}
	ref := render(1)
	for _, procs := range []int{2, 3} {
		got := render(procs)
		if !bytes.Equal(got.text, ref.text) {
			t.Errorf("GOMAXPROCS %d: summary.json or kinetics.csv differ from GOMAXPROCS 1", procs)
		}
		if !vecmath.SameBitsMatrix(got.c, ref.c) || !vecmath.SameBitsMatrix(got.s, ref.s) {
			t.Errorf("GOMAXPROCS %d: hard–soft profiles or spectra differ from GOMAXPROCS 1", procs)
		}
	}
}

// A model with more species than the resolution has components is fitted with the
// species left over as spectrally silent, and a note names them: the demo (three
// species, A -> B -> C, three components; its own scheme, io/demo) given a fourth
// species, D, which nothing in the data shows. The model's own species are all named
// by the scheme (definition of the map: one component a species).
func TestKineticsNamesSpeciesWithoutComponent(t *testing.T) {
	truth := demo.Make(1)
	dir := t.TempDir()
	for name, b := range truth.Files() {
		if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	s := demoSettings(dir, true)
	s.Model = "A -> B -> C -> D"
	s.Bands, s.Checks = "off", "off"
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.Components != 3 {
		t.Fatalf("%d components, want the demo's 3", r.Components)
	}
	kn := r.Kinetics
	if kn == nil {
		t.Fatal("no kinetic fit")
	}
	left := unmapped(kn.Scheme, kn.Extents, kn.Columns)
	if len(left) != 1 {
		t.Fatalf("species without a component %v, want one of four", left)
	}
	said := false
	for _, n := range r.Notes {
		said = said || strings.Contains(n, left[0]+" has no component")
	}
	if !said {
		t.Errorf("no note names %s as without a component; notes %q", left[0], r.Notes)
	}
	// The demo's own model maps every species: no such note.
	_, full := demoSpecies(t)
	for _, n := range full.Notes {
		if strings.Contains(n, "no component") {
			t.Errorf("A -> B -> C on three components: %q", n)
		}
	}
}

// TestFitsDisagree: the rule of fitsDisagree (its definition: more than 25 %
// and 3 combined standard errors apart, or a factor above 10), case by case;
// each constant with its unit, s^-1 for a first-order step (the SI unit of a
// first-order rate constant, IUPAC Gold Book "rate constant"), since the
// warning stays in seconds whatever --time-unit shows (README).
func TestFitsDisagree(t *testing.T) {
	sch, err := kinetics.ParseScheme("A -> B -> C")
	if err != nil {
		t.Fatal(err)
	}
	fit := func(k, se []float64) *kinetics.FitResult { return &kinetics.FitResult{K: k, KStdErr: se} }
	for _, tc := range []struct {
		name   string
		p, d   *kinetics.FitResult
		fixed  []bool
		says   string // "" for no warning
		absent string
	}{
		{"consistent", fit([]float64{1.02, 0.5}, []float64{0.01, 0.01}), fit([]float64{1, 0.5}, []float64{0.005, 0.005}), nil, "", ""},
		{"apart but within 25 %", fit([]float64{1.2, 0.5}, []float64{0.001, 0.01}), fit([]float64{1, 0.5}, []float64{0.001, 0.005}), nil, "", ""},
		{"beyond 3 errors", fit([]float64{1.4, 0.5}, []float64{0.1, 0.01}), fit([]float64{1, 0.5}, []float64{0.001, 0.005}), nil, "k1 (A -> B) 1.4 s^-1 against 1 s^-1, a factor 1.4 and 4 combined", "k2"},
		{"a factor above 10, errors huge", fit([]float64{1, 0.5}, []float64{5, 0.01}), fit([]float64{0.05, 0.5}, []float64{0.001, 0.005}), nil, "a factor 20", "k2"},
		{"held fixed", fit([]float64{1, 9}, []float64{0.01, 0}), fit([]float64{1, 0.5}, []float64{0.005, 0}), []bool{false, true}, "", ""},
		{"errors unknown, a factor above 10", fit([]float64{1, 0.5}, []float64{0, math.NaN()}), fit([]float64{0.05, 0.5}, []float64{0, math.NaN()}), nil, "a factor 20 and their standard errors unknown", "NaN"},
		{"errors unknown, close", fit([]float64{1.5, 0.5}, []float64{0, 0}), fit([]float64{1, 0.5}, []float64{0, 0}), nil, "", ""},
	} {
		kn := &Kinetics{Scheme: sch, KFixed: tc.fixed, UnitName: "closure total"}
		w := strings.Join(fitsDisagree(kn, tc.p, tc.d), "\n")
		if (tc.says == "") != (w == "") || !strings.Contains(w, tc.says) || (tc.absent != "" && strings.Contains(w, tc.absent)) {
			t.Errorf("%s: %q; want %q without %q", tc.name, w, tc.says, tc.absent)
		}
	}
	// A second-order step's constant is per concentration per second
	// (concentration^(1-n) time^-1 for order n, IUPAC Gold Book "order of
	// reaction"), the concentration here in closure totals.
	two, err := kinetics.ParseScheme("2 A -> B")
	if err != nil {
		t.Fatal(err)
	}
	kn := &Kinetics{Scheme: two, UnitName: "closure total"}
	w := strings.Join(fitsDisagree(kn, fit([]float64{1.4}, []float64{0.1}), fit([]float64{1}, []float64{0.001})), "\n")
	if want := "k1 (2 A -> B) 1.4 (closure total)^-1 s^-1 against 1 (closure total)^-1 s^-1, a factor 1.4"; !strings.Contains(w, want) {
		t.Errorf("2 A -> B: %q; want %q", w, want)
	}
}

// TestFitsDisagreeOnDeterminedSum: for A -> B, B -> A with free spectra the
// data fix k1 + k2 alone (reversible first-order solution, [A] − [A]∞ ∝
// e^{−(k1+k2)t}; common practice), so the comparison is of the sums: a
// profile fit whose terms split the same sum otherwise (2.2e-6 against
// 1e-3, a factor 450) agrees, and one whose sum is 40 % off does not. The
// old rule compared the undetermined terms and missed the sum.
func TestFitsDisagreeOnDeterminedSum(t *testing.T) {
	sch, err := kinetics.ParseScheme("A -> B; B -> A")
	if err != nil {
		t.Fatal(err)
	}
	data := &kinetics.FitResult{K: []float64{2e-3, 1e-3}, KStdErr: []float64{0, 0}, KNotDetermined: []bool{true, true},
		SumSteps: []int{0, 1}, SumK: 3e-3, SumKStdErr: 1e-6}
	prof := func(k1, k2 float64) *kinetics.FitResult {
		return &kinetics.FitResult{K: []float64{k1, k2}, KStdErr: []float64{1e-6, 2e-7}, Corr: mat.NewDense(2, 2, []float64{1, 0.5, 0.5, 1})}
	}
	kn := &Kinetics{Scheme: sch, UnitName: "closure total"}
	same := prof(2.9978e-3, 2.2e-6)
	kn.inheritNotDetermined(same, data)
	if w := fitsDisagree(kn, same, data); w != nil {
		t.Errorf("the same sum split otherwise: %q", w)
	}
	// The sum's error, √(se1² + se2² + 2 r se1 se2) (variance of a sum;
	// definition) = √(1e-12 + 4e-14 + 2e-13).
	if want := math.Sqrt(1e-12 + 4e-14 + 2*0.5*1e-6*2e-7); math.Abs(same.SumKStdErr-want) > 1e-12*want || same.KStdErr[0] != 0 || same.Corr.At(0, 1) != 0 {
		t.Errorf("inherited: sum ± %.6g (want %.6g), k1 ± %g, r12 %g", same.SumKStdErr, want, same.KStdErr[0], same.Corr.At(0, 1))
	}
	off := prof(4.2e-3, 2.2e-6)
	kn.inheritNotDetermined(off, data)
	if w := strings.Join(fitsDisagree(kn, off, data), "\n"); !strings.Contains(w, "k1 + k2 0.004202 s^-1 against 0.003 s^-1, a factor 1.4") || strings.Contains(w, "k2 (") {
		t.Errorf("a sum 40 %% off: %q", w)
	}
}
