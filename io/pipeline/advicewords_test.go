package pipeline

import (
	"fmt"
	"math"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/svd"
)

// runTrimmedUrethane resolves the vendored trim of the real catalyst-1.00 series
// (source as urethaneDir) as a user would: absorbance, times from the file names.
func runTrimmedUrethane(t *testing.T) *Result {
	t.Helper()
	s := NewSettings()
	s.Data, s.Kind, s.TimesFromName = []string{filepath.Join(urethaneDir, "catalyst-1.00")}, "absorbance", true
	s.Bands, s.Checks = "off", "off" // not what is tested here; they only add time
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// residualWords finds "the N factors before it, C counted as components and X not,
// leave an SVD residual of R × the noise" (or "the N counted component(s) before it
// leave …") in a minor factor's description.
var residualWords = regexp.MustCompile(`the (\d+) (?:factors before it, (\d+) counted as components and (\d+) not,|counted component\(s\) before it) leave an SVD residual of ([0-9.e+-]+) × the noise`)

// A minor factor's description names what its residual figure is the residual of: every
// factor before it, counted or not. On the trimmed urethane series factor 5 comes after
// the 2 components (one reaction, two species in absorbance: the data set's README) and
// two factors set aside; its figure once read "the 2 component(s) before it (without it
// their SVD residual … is 1.23 × the noise)", while those two components leave 1.57 ×.
// The figure must be the residual after N factors by its definition, √(Σ_{j>N} s_j² /
// ((n−N)(m−N) σ²)), here recovered from Malinowski's real error of rank.csv, RE(N) =
// √(Σ_{j>N} s_j² / (r (c−N))) with r, c the larger and smaller dimension (Malinowski,
// Anal. Chem. 1977).
func TestMinorResidualNamesItsFactors(t *testing.T) {
	r := runTrimmedUrethane(t)
	n, m := r.D.Dims()
	rr, c := float64(max(n, m)), float64(min(n, m))
	sigma := r.Chemical.Sigma
	checked := 0
	for _, nf := range r.Chemical.Nuisance {
		if nf.Kind != svd.NuisanceMinor {
			continue
		}
		w := residualWords.FindStringSubmatch(nf.Looks)
		if w == nil {
			t.Errorf("factor %d: no residual named by its factors in %q", nf.Factor, nf.Looks)
			continue
		}
		before, _ := strconv.Atoi(w[1])
		// Definition: the factors before factor f are f − 1.
		if before != nf.Factor-1 {
			t.Errorf("factor %d: the residual is said to be of %d factors, want %d", nf.Factor, before, nf.Factor-1)
		}
		// Counted: the run's count of components (README: 2).
		if w[2] != "" {
			chem, _ := strconv.Atoi(w[2])
			other, _ := strconv.Atoi(w[3])
			if chem != r.Rank.Estimate || chem+other != before {
				t.Errorf("factor %d: %d counted and %d not, want %d counted of %d", nf.Factor, chem, other, r.Rank.Estimate, before)
			}
		}
		got, _ := strconv.ParseFloat(w[4], 64)
		re := r.Rank.Table[before-1].RE
		k := float64(before)
		want := re * math.Sqrt(rr*(c-k)/((float64(n)-k)*(float64(m)-k))) / sigma
		if math.Abs(got-want) > 0.005*want { // %.3g keeps three digits
			t.Errorf("factor %d: residual %g × the noise, want %.4g (from RE(%d) = %g)", nf.Factor, got, want, before, re)
		}
		checked++
	}
	if checked < 2 {
		t.Fatalf("%d minor factors checked, want the 2 the series shows (factors 3 and 5)", checked)
	}
}

// The trimmed urethane series is in wavenumbers, cm⁻¹ (its README), and the axis is
// named so: a minor factor's position says cm⁻¹, not "on the axis". Its time vector is
// not called a transient or a drift: orthogonal to the larger factors' (definition of
// the SVD), it need not run like a component (the refit's profile says how it runs).
func TestMinorWordsOnTheTrimmedSeries(t *testing.T) {
	r := runTrimmedUrethane(t)
	near := regexp.MustCompile(`largest near [0-9.]+ cm⁻¹`)
	checked := 0
	for _, nf := range r.Chemical.Nuisance {
		if nf.Kind != svd.NuisanceMinor {
			continue
		}
		checked++
		if !near.MatchString(nf.Looks) || strings.Contains(nf.Looks, "on the axis") {
			t.Errorf("factor %d: %q, want its position in cm⁻¹", nf.Factor, nf.Looks)
		}
		if strings.Contains(nf.Looks, "transient") || strings.Contains(nf.Looks, "drifting") {
			t.Errorf("factor %d: %q, a time vector read as a course in time", nf.Factor, nf.Looks)
		}
	}
	if checked == 0 {
		t.Fatal("no minor factor on the trimmed series (factors 3 and 5 expected)")
	}
}

// stackOfUrethane is a Result laid out as the two urethane series stacked (50 and 58
// spectra, README of testdata/urethane-atr), each with its own times from 0.
func stackOfUrethane() *Result {
	r := &Result{Experiments: []*Experiment{{FirstRow: 0, Rows: 50}, {FirstRow: 50, Rows: 58}}}
	for e, ex := range r.Experiments {
		for i := 0; i < ex.Rows; i++ {
			r.Times = append(r.Times, 20*float64(i))
			r.ExpOfRow = append(r.ExpOfRow, e)
		}
	}
	return r
}

// In a stack each experiment's times start again at 0, so the spectra an outlier factor
// lives in are named with their experiment; a single experiment's are named as before.
func TestSpectraTimesNameTheExperiment(t *testing.T) {
	r := stackOfUrethane()
	if got, want := spectraTimes(r, []int{0, 1, 2, 50, 51}), " (at t = 0, 20, 40 s in experiment 1; 0, 20 s in experiment 2)"; got != want {
		t.Errorf("stack: %q, want %q", got, want)
	}
	if got, want := spectraTimes(r, []int{55}), " (at t = 100 s in experiment 2)"; got != want {
		t.Errorf("stack, one spectrum: %q, want %q", got, want)
	}
	one := &Result{Experiments: []*Experiment{{Rows: 3}}, Times: []float64{0, 92, 131}, ExpOfRow: []int{0, 0, 0}}
	if got, want := spectraTimes(one, []int{1, 2}), " (at t = 92, 131 s)"; got != want {
		t.Errorf("one experiment: %q, want %q", got, want)
	}
}

// The refit's profile of the stacked urethane series' factor 4 rises through the first
// experiment to its 47th spectrum of 50 and stays near zero in the second (seen on the
// two series stacked): it grows to the end of experiment 1, and is no transient of the
// stack, whose 47th row is not near its end (108 rows).
func TestMinorShapeWithinItsExperiment(t *testing.T) {
	r := stackOfUrethane()
	got := minorShape(r, &mcr.MinorTest{PeakRow: 46, EarlyShare: 0.01})
	if !strings.Contains(got, "growing to the end of experiment 1") || strings.Contains(got, "transient") {
		t.Errorf("peak at row 47 of experiment 1's 50: %q, want growing to the end of experiment 1", got)
	}
	got = minorShape(r, &mcr.MinorTest{PeakRow: 60, EarlyShare: 0.01})
	if !strings.Contains(got, "largest at t = 200 s in experiment 2") {
		t.Errorf("peak at row 11 of experiment 2: %q, want it placed at t = 200 s in experiment 2", got)
	}
}

// On the trimmed urethane series more factors stand above the noise threshold than the
// criteria count (12: docs/rank.md §5), so the noise floor's 12 is a lower bound and the
// terminal says so; the factors beyond the 14 the classification examined are counted
// and noted, and no line calls another number "examined" (a user read "noise-floor ≥ 12
// (12 examined)" beside a reason saying "the first 14 are examined": the table's rows
// above the threshold, rank.csv, are what is examined). Their number must agree with singular_values.csv's by Cauchy's interlacing
// theorem: projecting out the baseline's p = order + 1 directions moves the k-th singular
// value between the (k+p)-th and the k-th of the matrix before (Horn & Johnson, Matrix
// Analysis, 1985, §7.3; from memory), so the count above one threshold drops by at most p.
// The σ of the noise-weighted matrix is named as such, not "given".
func TestRankCapIsSaid(t *testing.T) {
	r := runTrimmedUrethane(t)
	var out strings.Builder
	PrintTable(r, &out)
	if !strings.Contains(out.String(), "noise-floor ≥ 12 (at most 12 counted)") {
		t.Errorf("rank line without the cap:\n%s", out.String())
	}
	examined := 0
	for _, row := range r.Rank.Table {
		if row.AboveNoiseEdge {
			examined++
		}
	}
	for _, text := range append([]string{out.String(), r.Rank.Reason}, r.Notes...) {
		for _, m := range regexp.MustCompile(`(\d+) (?:are )?examined`).FindAllStringSubmatch(text, -1) {
			if m[1] != strconv.Itoa(examined) {
				t.Errorf("%q says %s examined; the table examines %d", m[0], m[1], examined)
			}
		}
	}
	if c := MakeSummary(r).RankCriteria[0]; c.Name != "noise-floor" || !c.AtLeast {
		t.Errorf("summary.json noise floor %+v, want at_least", c)
	}
	before := 0
	for _, s := range r.Factors.S {
		if s > r.Rank.Threshold {
			before++
		}
	}
	p := r.BaselineOrder + 1
	if a := r.Rank.AboveThreshold; a > before || a < before-p || a < len(r.Rank.Table) {
		t.Errorf("%d above the threshold after the baseline, %d before (singular_values.csv), baseline of %d directions, table of %d", a, before, p, len(r.Rank.Table))
	}
	// With each spectrum weighted by its own noise (the first spectra are
	// 3× as noisy as the last) the series has as many factors above the
	// threshold as the table examines (it had more with one weight for all
	// spectra); a note on more beyond them is then owed only when there are.
	note := fmt.Sprintf("%d more factor(s) lie above the noise threshold beyond the %d examined (%d in all)", r.Rank.AboveThreshold-r.Chemical.Examined, r.Chemical.Examined, r.Rank.AboveThreshold)
	more := slices.ContainsFunc(r.Notes, func(n string) bool { return strings.Contains(n, "more factor(s) lie above the noise threshold") })
	if want := r.Rank.AboveThreshold > r.Chemical.Examined; more != want || want && !slices.ContainsFunc(r.Notes, func(n string) bool { return strings.HasPrefix(n, note) }) {
		t.Errorf("note on factors beyond the %d examined (%d above the threshold): %v, want %v %q, in %q", r.Chemical.Examined, r.Rank.AboveThreshold, more, want, note, r.Notes)
	}
	if strings.Contains(r.Rank.Reason, "given") || !strings.Contains(r.Rank.Reason, "noise-weighted") {
		t.Errorf("reason %q: want σ named as the noise-weighted unit", r.Rank.Reason)
	}
}

// A transient is a change that comes back (common practice: a mixing or settling
// transient dies away). A refit profile concentrated early that stays near its largest
// value to the end is a lasting change, an addition or a step, and is not called a
// transient; one that falls back to 5 % of it is.
func TestTransientComesBack(t *testing.T) {
	r := &Result{Experiments: []*Experiment{{Rows: 80}}, ExpOfRow: make([]int, 80)}
	for i := 0; i < 80; i++ {
		r.Times = append(r.Times, 30*float64(i))
	}
	got := minorShape(r, &mcr.MinorTest{PeakRow: 10, EarlyShare: 0.51, EndLevel: 0.9})
	if !strings.Contains(got, "does not come back") || !strings.Contains(got, "not a transient") {
		t.Errorf("early, still at 90 %% at the end: %q, want a lasting change, not a transient", got)
	}
	got = minorShape(r, &mcr.MinorTest{PeakRow: 10, EarlyShare: 0.51, EndLevel: 0.05})
	if !strings.Contains(got, "settling transient") {
		t.Errorf("early, back to 5 %% at the end: %q, want a transient", got)
	}
	got = minorShape(r, &mcr.MinorTest{PeakRow: 30, EarlyShare: 0.1, EndLevel: 0.8})
	if strings.Contains(got, "(a transient)") || !strings.Contains(got, "not a transient") || !strings.Contains(got, "t = 900 s") {
		t.Errorf("largest at row 31, 80 %% at the end: %q, want no transient, largest at t = 900 s", got)
	}
}
