package pipeline

import (
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
)

// firstOrder is an invented A → B run (a = a0·e^{−kt}, b = a0 + b0 − a;
// first-order kinetics, analytic) written as an absorbance matrix CSV.
type firstOrder struct {
	axis, times []float64
	spectra     *mat.Dense // m × 2
	profiles    *mat.Dense // n × 2
}

func abSpectra(axis []float64) *mat.Dense {
	s := mat.NewDense(len(axis), 2, nil)
	for i, x := range axis {
		// Each species has one band of its own (A near 1720, B near 1460)
		// and one band in the shared middle: the spectra have selective
		// channels, so only the time side can leave an ambiguity.
		s.Set(i, 0, gaussian([]float64{x}, 1720, 20, 0.6)[0]+gaussian([]float64{x}, 1610, 35, 0.3)[0])
		s.Set(i, 1, gaussian([]float64{x}, 1460, 20, 0.5)[0]+gaussian([]float64{x}, 1580, 35, 0.3)[0])
	}
	return s
}

func makeFirstOrder(a0, b0, k, dilute float64) *firstOrder {
	f := &firstOrder{}
	for x := 1800.0; x >= 1400; x -= 4 {
		f.axis = append(f.axis, x)
	}
	for tm := 0.0; tm <= 900; tm += 20 {
		f.times = append(f.times, tm)
	}
	f.spectra = abSpectra(f.axis)
	f.profiles = mat.NewDense(len(f.times), 2, nil)
	for i, tm := range f.times {
		a := a0 * math.Exp(-k*tm)
		d := 1 - dilute*tm/900
		f.profiles.SetRow(i, []float64{d * a, d * (a0 + b0 - a)})
	}
	return f
}

func (f *firstOrder) write(t *testing.T, dir, name string, sigma float64, seed uint64) string {
	t.Helper()
	var d mat.Dense
	d.Mul(f.profiles, f.spectra.T())
	rng := rand.New(rand.NewPCG(seed, 17))
	head := []string{"wavenumber"}
	for _, tm := range f.times {
		head = append(head, output.Float(tm))
	}
	tab := output.Table{Header: head}
	for j, x := range f.axis {
		row := []string{output.Float(x)}
		for i := range f.times {
			row = append(row, output.Float(d.At(i, j)+sigma*rng.NormFloat64()))
		}
		tab.Rows = append(tab.Rows, row)
	}
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, tab.CSV(), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// trueContribution is f_k = ‖c_k‖‖s_k‖/‖C Sᵀ‖_F of the truth (Tauler 2001
// definition).
func trueContribution(c, s *mat.Dense, j int) float64 {
	var d mat.Dense
	d.Mul(c, s.T())
	return mat.Norm(c.ColView(j), 2) * mat.Norm(s.ColView(j), 2) / mat.Norm(&d, 2)
}

func bandOf(t *testing.T, r *Result, truthS *mat.Dense, species int) (lo, hi float64) {
	t.Helper()
	if r.Constraints == nil || r.Constraints.Bands == nil {
		t.Fatalf("no feasible bands (%v)", r.Constraints)
	}
	best, bc := -1, -2.0
	for j := 0; j < r.Components; j++ {
		if c := Cosine(mat.Col(nil, species, truthS), mat.Col(nil, j, r.ALS.S)); c > bc {
			best, bc = j, c
		}
	}
	b := r.Constraints.Bands.Bands[best]
	return b.Min, b.Max
}

// Column-wise augmentation: one run of A → B started from pure A never shows
// B alone, and B's spectrum can borrow from A's (rotational ambiguity,
// Lawton & Sylvestre 1971). A second run started from a different mixture
// (its own closure total) changes the ratio of the profiles independently
// of the spectra, which are shared; the feasible bands of the augmented
// resolution must be markedly narrower and still contain the truth
// (Tauler 2001: augmentation reduces rotational ambiguity).
func TestAugmentationRemovesAmbiguity(t *testing.T) {
	dir := t.TempDir()
	run1 := makeFirstOrder(1, 0, 2.5e-3, 0)
	run2 := makeFirstOrder(0.05, 1.15, 2.5e-3, 0)
	p1 := run1.write(t, dir, "run1.csv", 1e-4, 1)
	p2 := run2.write(t, dir, "run2.csv", 1e-4, 2)

	single := NewSettings()
	single.Data, single.Kind, single.Components, single.Checks = []string{p1}, "absorbance", "2", "off"
	r1, err := Run(single, nil)
	if err != nil {
		t.Fatal(err)
	}
	both := NewSettings()
	both.Data, both.Kind, both.Components, both.Closure, both.Checks = []string{p1, p2}, "absorbance", "2", "1,1.2", "off"
	r2, err := Run(both, nil)
	if err != nil {
		t.Fatal(err)
	}
	// Per-experiment closure: rows of run 2 sum to 1.2.
	n1 := len(run1.times)
	if sum := floatsSum(r2.ALS.C.RawRowView(n1 + 3)); math.Abs(sum-1.2) > 1e-9 {
		t.Errorf("run 2 row sums to %v, its closure total is 1.2", sum)
	}
	stacked := mat.NewDense(2*n1, 2, nil)
	stacked.Stack(run1.profiles, run2.profiles)
	for sp := 0; sp < 2; sp++ {
		lo1, hi1 := bandOf(t, r1, run1.spectra, sp)
		lo2, hi2 := bandOf(t, r2, run1.spectra, sp)
		truth := trueContribution(stacked, run1.spectra, sp)
		t.Logf("species %d: one run [%.4f, %.4f], two runs [%.4f, %.4f], truth (two runs) %.4f", sp+1, lo1, hi1, lo2, hi2, truth)
		if hi2-lo2 > 0.5*(hi1-lo1) {
			t.Errorf("species %d: augmentation did not narrow the band: %.4f vs %.4f", sp+1, hi2-lo2, hi1-lo1)
		}
		if truth < lo2-5e-3 || truth > hi2+5e-3 {
			t.Errorf("species %d: augmented band [%.4f, %.4f] misses the truth %.4f", sp+1, lo2, hi2, truth)
		}
	}
	if hi, lo := bandOf(t, r1, run1.spectra, 1); lo-hi < 0.02 {
		t.Errorf("a single run should be ambiguous: band of B only %.4f wide", lo-hi)
	}
}

// A closure the data break (the sample is diluted by 25 % during the run)
// must be reported; the same data with closure off must not warn
// (Beer–Lambert: absorbance follows the diluted concentrations).
func TestDilutionBreaksClosureWarning(t *testing.T) {
	dir := t.TempDir()
	p := makeFirstOrder(1, 0, 2.5e-3, 0.25).write(t, dir, "diluted.csv", 1e-4, 3)
	s := NewSettings()
	s.Data, s.Kind, s.Components, s.Bands = []string{p}, "absorbance", "2", "off"
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !hasWarning(r, "closure raises the lack of fit") {
		t.Errorf("no closure warning for diluted data; warnings %q", r.Warnings)
	}
	if len(r.Constraints.Checks) == 0 || r.Constraints.Checks[0].Name != "closure" {
		t.Fatalf("checks %+v", r.Constraints.Checks)
	}
	s.Closure = "off"
	r, err = Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if hasWarning(r, "raises the lack of fit") {
		t.Errorf("warning without closure: %q", r.Warnings)
	}
	// Undiluted data keep closure: no warning (it holds, so it costs only noise).
	p = makeFirstOrder(1, 0, 2.5e-3, 0).write(t, dir, "kept.csv", 1e-4, 4)
	s = NewSettings()
	s.Data, s.Kind, s.Components, s.Bands = []string{p}, "absorbance", "2", "off"
	if r, err = Run(s, nil); err != nil {
		t.Fatal(err)
	}
	if hasWarning(r, "raises the lack of fit") {
		t.Errorf("closure holds but was reported: %q", r.Warnings)
	}
}

func hasWarning(r *Result, part string) bool { return anyContains(r.Warnings, part) }

// A reference spectrum on a finer axis is resampled (linear interpolation)
// onto the data axis and held exactly; unimodality and the per-component
// non-negativity are applied as asked.
func TestKnownSpectrumUnimodalAndSettings(t *testing.T) {
	dir := t.TempDir()
	f := makeFirstOrder(1, 0, 2.5e-3, 0)
	p := f.write(t, dir, "run.csv", 1e-4, 5)
	ref := output.Table{Header: []string{"wavenumber", "absorbance"}}
	var fine []float64
	for x := 1810.0; x >= 1390; x -= 1 {
		fine = append(fine, x)
	}
	fs := abSpectra(fine)
	for i, x := range fine {
		ref.Rows = append(ref.Rows, []string{output.Float(x), output.Float(fs.At(i, 0))})
	}
	rp := filepath.Join(dir, "a.csv")
	if err := os.WriteFile(rp, ref.CSV(), 0o644); err != nil {
		t.Fatal(err)
	}
	s := NewSettings()
	s.Data, s.Kind, s.Components, s.Bands, s.Checks = []string{p}, "absorbance", "2", "off", "on"
	for name, v := range map[string]string{"known-spectrum": "1=" + rp, "unimodal": "all", "nonneg": "2=both", "unimodal-tolerance": "0.01"} {
		if err := s.Set(name, v); err != nil {
			t.Fatal(err)
		}
	}
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	for i := range f.axis {
		// The data axis points lie on the reference's grid, so the
		// interpolated value is the reference value itself.
		if got, want := r.ALS.S.At(i, 0), f.spectra.At(i, 0); math.Abs(got-want) > 1e-9 {
			t.Fatalf("known spectrum at %g: %g, reference %g", f.axis[i], got, want)
		}
	}
	// B's spectrum may still hold a little of A's (one run never shows B
	// alone: the Lawton–Sylvestre interval of that rotation stays open on
	// the time side), so the check is looser than a unique case's 0.999.
	if c := Cosine(mat.Col(nil, 1, f.spectra), mat.Col(nil, 1, r.ALS.S)); c < 0.99 {
		t.Errorf("spectrum of B: cosine %.5f with the truth", c)
	}
	names := map[string]bool{}
	for _, c := range r.Constraints.Checks {
		names[c.Name] = true
	}
	for _, want := range []string{"closure", "known spectra", "unimodal profiles"} {
		if !names[want] {
			t.Errorf("no check of %q in %v", want, names)
		}
	}
	// Bad settings are usage errors with the setting's name.
	for name, v := range map[string]string{"nonneg": "1=sideways", "unimodal": "0", "zero-window": "1=5", "closure": "1,-2", "closure-weights": "0,0", "known-spectrum": "x"} {
		if err := NewSettings().Set(name, v); err == nil {
			t.Errorf("--%s %s accepted", name, v)
		}
	}
	bad := NewSettings()
	bad.Data, bad.Kind, bad.Components, bad.Closure = []string{p}, "absorbance", "2", "1,2"
	var ue *UsageError
	if _, err := Run(bad, nil); !errors.As(err, &ue) {
		t.Errorf("two closure totals for one experiment: %v, want a usage error", err)
	}
}

// Execute writes uniqueness.csv (and the same bytes as bands.csv, its old
// name, until 1.0: CONTRACT.md) and intervals.csv; the bootstrap is the same
// for the same seed (determinism rule), and summary.json carries the ranges
// under uniqueness_ranges and the old key feasible_bands alike.
func TestBandsAndIntervalsFiles(t *testing.T) {
	dir := t.TempDir()
	p := makeFirstOrder(1, 0, 2.5e-3, 0).write(t, dir, "run.csv", 1e-3, 6)
	run := func(out string) (map[string][]byte, *Summary) {
		s := NewSettings()
		s.Data, s.Kind, s.Components, s.Replicates, s.Seed, s.Quiet, s.Report = []string{p}, "absorbance", "2", 8, 11, true, "off"
		s.Out = filepath.Join(dir, out)
		if _, err := Execute(s, Streams{Out: new(strings.Builder), Err: new(strings.Builder)}); err != nil {
			t.Fatal(err)
		}
		files := map[string][]byte{}
		for _, name := range []string{"uniqueness.csv", "bands.csv", "intervals.csv", "summary.json"} {
			b, err := os.ReadFile(filepath.Join(s.Out, name))
			if err != nil {
				t.Fatal(err)
			}
			files[name] = b
		}
		var sum Summary
		if err := json.Unmarshal(files["summary.json"], &sum); err != nil {
			t.Fatal(err)
		}
		return files, &sum
	}
	a, sa := run("a")
	b, _ := run("b")
	if string(a["intervals.csv"]) != string(b["intervals.csv"]) || string(a["uniqueness.csv"]) != string(b["uniqueness.csv"]) {
		t.Error("same seed, different uniqueness.csv or intervals.csv")
	}
	if string(a["bands.csv"]) != string(a["uniqueness.csv"]) {
		t.Error("bands.csv (old name, CONTRACT.md) differs from uniqueness.csv")
	}
	if !reflect.DeepEqual(sa.UniquenessRanges, sa.FeasibleBands) {
		t.Errorf("uniqueness_ranges %+v, feasible_bands (old key, CONTRACT.md) %+v", sa.UniquenessRanges, sa.FeasibleBands)
	}
	if len(sa.FeasibleBands) != 2 || sa.Bootstrap == nil || sa.Bootstrap.Resolved != 8 {
		t.Fatalf("summary bands %+v bootstrap %+v", sa.FeasibleBands, sa.Bootstrap)
	}
	for _, fb := range sa.FeasibleBands {
		if !(fb.Min <= fb.Max) || fb.Min <= 0 || fb.Max > 1+1e-9 {
			t.Errorf("band %+v: want 0 < min ≤ max ≤ 1 (species mode: contributions of non-negative parts)", fb)
		}
	}
	// uniqueness.csv: the columns of docs/constraints.md in their order
	// (CONTRACT.md: scripts read them by name and place), the convergence
	// of each end last, the same on every row as in summary.json.
	rows := strings.Split(strings.TrimSpace(string(a["uniqueness.csv"])), "\n")
	if rows[0] != "component,side,experiment,position,solution,at_min,at_max,min_converged,max_converged" {
		t.Errorf("uniqueness.csv header %q", rows[0])
	}
	for _, row := range rows[1:] {
		cells := strings.Split(row, ",")
		for _, u := range sa.UniquenessRanges {
			if cells[0] == u.Component && (u.MinConverged == nil || u.MaxConverged == nil ||
				cells[7] != strconv.FormatBool(*u.MinConverged) || cells[8] != strconv.FormatBool(*u.MaxConverged)) {
				t.Fatalf("uniqueness.csv row %q, summary %+v", row, u)
			}
		}
	}
	lines := strings.Split(strings.TrimSpace(string(a["intervals.csv"])), "\n")
	if lines[0] != "component,side,experiment,position,estimate,low,high,sd" {
		t.Errorf("intervals.csv header %q", lines[0])
	}
	f := makeFirstOrder(1, 0, 2.5e-3, 0)
	if want := 1 + 2*(len(f.axis)+len(f.times)); len(lines) != want {
		t.Errorf("intervals.csv has %d lines, want %d", len(lines), want)
	}
}

// The constraint checks run beside the uniqueness ranges (checkResolution);
// their warnings must still come before the ranges', as when the two ran
// one after the other, whatever GOMAXPROCS. The data make both warn: a
// first-order A → B diluted by 25 % during the run breaks closure, and
// spectra free in sign (--nonneg all=profile) leave the rotation unbounded
// (Lawton & Sylvestre 1971: a bounded region needs both sides
// non-negative). A run with both on must give the checks-only run's
// warnings with the ranges-only run's own ones inserted after the checks'.
func TestChecksWarnBeforeRanges(t *testing.T) {
	p := makeFirstOrder(1, 0, 2.5e-3, 0.25).write(t, t.TempDir(), "diluted.csv", 1e-4, 3)
	run := func(checks, bands string) []string {
		s := NewSettings()
		s.Data, s.Kind, s.Components, s.NonNeg = []string{p}, "absorbance", "2", []string{"all=profile"}
		s.Checks, s.Bands = checks, bands
		r, err := Run(s, nil)
		if err != nil {
			t.Fatal(err)
		}
		return r.Warnings
	}
	checks, bands := run("on", "off"), run("off", "on")
	pre, post := 0, 0
	for pre < min(len(checks), len(bands)) && checks[pre] == bands[pre] {
		pre++
	}
	for post < min(len(checks), len(bands))-pre && checks[len(checks)-1-post] == bands[len(bands)-1-post] {
		post++
	}
	own := bands[pre : len(bands)-post]
	if len(checks)-pre-post == 0 || len(own) == 0 || !anyContains(checks, "closure raises") || !anyContains(own, "is unbounded") {
		t.Fatalf("the data should make both warn: checks only %q, ranges only %q", checks, bands)
	}
	want := append(append(append([]string(nil), checks[:len(checks)-post]...), own...), checks[len(checks)-post:]...)
	prev := runtime.GOMAXPROCS(0)
	defer runtime.GOMAXPROCS(prev)
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		if got := run("on", "on"); !slices.Equal(got, want) {
			t.Errorf("GOMAXPROCS %d: warnings\n%q\nwant\n%q", procs, got, want)
		}
	}
}

// A range whose search stopped on its budget says so, in the warnings and
// on the terminal, and only then (the project's rule: a warning fires only
// when checked); a range not determined or unbounded keeps its own
// warning alone. The bands are made up: what is checked is the wording's
// condition, the search's own flag is tested in mcr
// (TestRangeEndsSayWhenNotConverged).
func TestRangeWarnsOnlyWhenNotConverged(t *testing.T) {
	names := []string{"species_1", "species_2", "species_3", "species_4"}
	b := &mcr.BandsResult{Bands: []mcr.Band{
		{Min: 0.2, Max: 0.4, Value: 0.3, Feasible: true, MinConverged: true, MaxConverged: true},
		{Min: 0.5, Max: 0.7, Value: 0.6, Feasible: true, MinConverged: true, MaxConverged: false},
		{Min: 0.1, Max: 0.3, Value: 0.2, Feasible: false, Reason: mcr.SearchLeftConstraints},
		{Min: 0.1, Max: 500, Value: 0.2, Feasible: true, MinConverged: true},
	}}
	warn := rangeWarnings(names, b)
	joined := strings.Join(warn, "\n")
	if len(warn) != 3 || !strings.Contains(warn[0], "species_2: the search for its largest share stopped on its budget") ||
		strings.Contains(joined, "species_1") || strings.Count(joined, "before converging") != 1 {
		t.Errorf("warnings:\n%s", joined)
	}
	r := &Result{Names: names, Constraints: &ConstraintReport{Bands: b}}
	var out strings.Builder
	printConstraints(r, &out)
	lines := strings.Split(out.String(), "\n")
	if strings.Contains(lines[0], "not converged") || !strings.Contains(lines[1], "search for the largest share not converged") ||
		strings.Count(out.String(), "not converged") != 1 {
		t.Errorf("terminal lines:\n%s", out.String())
	}
}
