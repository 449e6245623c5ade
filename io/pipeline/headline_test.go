package pipeline

import (
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
)

// The terminal headline leads with the residual relative to the noise,
// recomputed here directly from its definition: √(Σ w_ij e_ij² / ν) with the
// noise weights w_ij = a_i b_j = 1/σ²_ij (docs/measurement.md; w = 1/σ² for
// every point without weights) and
// ν = nm − k(n + m − k) degrees of freedom (common practice: a rank-k n × m
// matrix has k(n + m − k) free parameters). The demo's noise is constant in detector counts and its
// model is exact, so the ratio is near 1; explained variance stays off the
// terminal (it reads near 100 % for any fit).
func TestHeadlineResidualToNoise(t *testing.T) {
	_, r := demoSpecies(t)
	n, m := r.D.Dims()
	k := r.Components
	ss := 0.0
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			fit := 0.0
			for c := 0; c < k; c++ {
				fit += r.ALS.C.At(i, c) * r.ALS.S.At(j, c)
			}
			w := 1 / (r.Rank.Sigma * r.Rank.Sigma)
			if weighted(r) {
				w = r.Weights.Row[i] * r.Weights.Col[j]
			}
			ss += w * (r.D.At(i, j) - fit) * (r.D.At(i, j) - fit)
		}
	}
	nu := float64(n*m - k*(n+m-k))
	want := math.Sqrt(ss / nu)
	if want < 0.8 || want > 1.25 {
		t.Errorf("demo residual / noise = %.3f, want about 1 (exact model, known noise)", want)
	}
	var b strings.Builder
	PrintTable(r, &b)
	out := b.String()
	head := fmt.Sprintf("residual %.3g × the noise", want)
	fitAt, lofAt := strings.Index(out, head), strings.Index(out, "lack of fit ")
	if fitAt < 0 || lofAt < 0 || fitAt > lofAt {
		t.Errorf("headline should show %q before the lack of fit:\n%s", head, out)
	}
	if strings.Contains(out, "explained") {
		t.Errorf("explained variance on the terminal:\n%s", out)
	}
	// summary.json carries the same figure, weighted or not (a 0 would
	// read as a perfect fit).
	if got := MakeSummary(r).ResidualToNoise; math.Abs(got-want) > 1e-3*want {
		t.Errorf("summary.json residual_to_noise %.6g, recomputed %.6g", got, want)
	}
}

// iterations.csv lists each accepted ALS iteration under its own number, so
// its last row is the iteration count of summary.json and of the terminal
// (the figure plots that column). Definition: an iteration is one profiles
// step plus one spectra step; an extrapolated step that did not lower the
// residual is undone, and its number is skipped rather than renumbered.
func TestIterationsFileAgreesWithSummary(t *testing.T) {
	_, r := demoSpecies(t)
	out := filepath.Join(t.TempDir(), "out")
	st, err := output.NewStage(out, false)
	if err != nil {
		t.Fatal(err)
	}
	defer st.Abort()
	if err := WriteResults(r, st); err != nil {
		t.Fatal(err)
	}
	if err := st.Commit(); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(filepath.Join(out, "iterations.csv"))
	if err != nil {
		t.Fatal(err)
	}
	rows := strings.Split(strings.TrimSpace(string(b)), "\n")[1:]
	if len(rows) != len(r.ALS.History) {
		t.Fatalf("%d rows, %d accepted iterations", len(rows), len(r.ALS.History))
	}
	last, prev := 0, 0
	for _, row := range rows {
		it, err := strconv.Atoi(strings.Split(row, ",")[0])
		if err != nil || it <= prev {
			t.Fatalf("row %q: iteration numbers must rise", row)
		}
		prev, last = it, it
	}
	if s := MakeSummary(r); last != s.Iterations || s.Iterations != r.ALS.Iterations {
		t.Errorf("iterations.csv ends at %d, summary says %d", last, s.Iterations)
	}
	var tb strings.Builder
	PrintTable(r, &tb)
	if !strings.Contains(tb.String(), fmt.Sprintf("iterations     %d,", last)) {
		t.Errorf("terminal does not say %d iterations:\n%s", last, tb.String())
	}
}

// A --pre that counts a spectrum of the reaction: the demo has 3 spectra
// before the reagent (demo.Truth.Pre) and its noise is constant in detector
// counts; with --pre 4 the fourth, already changing, spectrum differs from
// the third by about 79 times the noise the noise model gives, where repeats
// of one state differ by about 1 (Σ z² over m points is χ²_m, whose mean
// over m is 1: definition), so --pre 4 must be warned about and --pre 3 not.
func TestWrongPreIsWarned(t *testing.T) {
	truth, dir := writeDemo(t)
	for _, pre := range []int{truth.Pre, truth.Pre + 1} {
		s := demoSettings(dir, true)
		s.Pre, s.Model, s.T0, s.Bands, s.Checks = pre, "", "", "off", "off"
		r, err := Run(s, io.Discard)
		if err != nil {
			t.Fatal(err)
		}
		warned := hasWarning(r, "--pre")
		if q, _ := residualToNoise(r); warned != (pre > truth.Pre) {
			t.Errorf("--pre %d (truth %d): residual/noise %.3g, warned %v", pre, truth.Pre, q, warned)
		}
	}
}
