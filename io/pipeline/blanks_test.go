package pipeline

import (
	"errors"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Two experiments recorded against blanks of their own: the second's
// source and cell pass a different share of the light at every channel, so
// its beams and its blank are both scaled by f(x). Each experiment's
// absorbance must be its own −log10(I/I_blank) (the definition of
// absorbance against a background, common practice), which the scale
// cancels from; against the first experiment's blank it would carry
// −log10 f(x), 0.1 to 0.3 here.
func TestEachExperimentAgainstItsOwnBlank(t *testing.T) {
	const rel = 2e-4
	a := makeBateman(t, 3e-3, 1e-3, rel, 21, 3)
	b := makeBateman(t, 3e-3, 1e-3, rel, 22, 3)
	scale := func(x float64) float64 { return 0.5 + 0.3*(x-1200)/600 }
	n, m := b.beams.Dims()
	for j, x := range b.axis {
		b.blank[j] *= scale(x)
		for i := 0; i < n; i++ {
			b.beams.Set(i, j, b.beams.At(i, j)*scale(x))
		}
	}
	sa, blankA := a.write(t)
	sb, blankB := b.write(t)
	s := NewSettings()
	s.Data, s.Blanks, s.Kind, s.Pre = []string{sa, sb}, []string{blankA, blankB}, "single-beam", 3
	s.Components, s.Bands, s.Checks, s.Report = "3", "off", "off", "off"
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	// The true absorbance C Sᵀ of either experiment (the same kinetics and
	// spectra); the assembled rows may differ from it by the noise only:
	// σ_A = rel/ln 10 = 8.7e-5 (propagation of error through −log10 I), so
	// 7σ bounds the largest of 2 × 121 × 301 Gaussian deviations.
	var truth mat.Dense
	truth.Mul(a.profiles, a.spectra.T())
	tol := 7 * rel / math.Ln10
	for e, ex := range r.Experiments {
		worst := 0.0
		for i := 0; i < ex.Rows; i++ {
			for j := 0; j < m; j++ {
				worst = math.Max(worst, math.Abs(r.D.At(ex.FirstRow+i, j)-truth.At(i, j)))
			}
		}
		if worst > tol {
			t.Errorf("experiment %d: absorbance departs from −log10(I/I_blank) by up to %.3g, want ≤ %.3g", e+1, worst, tol)
		}
	}
	rec, err := Record(r, "")
	if err != nil {
		t.Fatal(err)
	}
	var lines []string
	for _, l := range strings.Split(string(rec), "\n") {
		if strings.HasPrefix(l, "blank ") {
			lines = append(lines, strings.TrimSpace(strings.TrimPrefix(l, "blank")))
		}
	}
	if len(lines) != 2 || !strings.Contains(lines[0], blankA) || !strings.Contains(lines[1], blankB) {
		t.Errorf("as-run record's blanks %q, want %s then %s", lines, blankA, blankB)
	}
}

// A count of blanks that pairs with no experiment is refused before
// anything is read, as a command file refuses a keyword given twice.
func TestBlanksMustPairWithTheExperiments(t *testing.T) {
	s := NewSettings()
	s.Data, s.Blanks, s.Kind = []string{"a.csv", "b.csv"}, []string{"b1.csv", "b2.csv", "b3.csv"}, "single-beam"
	_, err := Run(s, nil)
	var ue *UsageError
	if !errors.As(err, &ue) || !strings.Contains(err.Error(), "one per experiment in the order of the --data flags") {
		t.Errorf("3 blanks for 2 experiments: %v, want a usage error saying what to give", err)
	}
}
