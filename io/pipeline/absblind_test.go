package pipeline

import (
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
)

// cappedAbsorbance writes s's single beams as an instrument's absorbance
// export, A = −log10(I/I_bg) against its blank I_bg (the definition of
// absorbance, IUPAC Gold Book), with every value the logarithm cannot take
// (a beam or blank ≤ 0) or above capAt written as capAt (common practice).
func cappedAbsorbance(t *testing.T, s *synth, capAt float64) (path string, caps int) {
	t.Helper()
	head := []string{"wavenumber"}
	for _, tm := range s.times {
		head = append(head, output.Float(tm))
	}
	tab := output.Table{Header: head}
	for j, x := range s.axis {
		row := []string{output.Float(x)}
		for i := range s.times {
			b, bg := s.beams.At(i, j), s.blank[j]
			a := -math.Log10(b / bg)
			if b <= 0 || bg <= 0 || a > capAt {
				a = capAt
				caps++
			}
			row = append(row, output.Float(a))
		}
		tab.Rows = append(tab.Rows, row)
	}
	path = filepath.Join(t.TempDir(), "absorbance.csv")
	if err := os.WriteFile(path, tab.CSV(), 0o644); err != nil {
		t.Fatal(err)
	}
	return path, caps
}

// A → B → C (Bateman 1910) as single beams with noise constant in counts
// (σ_I = 4) under a solvent band of absorbance 4.5 at 1560–1500 cm⁻¹ in
// sample and blank alike (countsSeries's solventBeams), so that 10^−4.5 of
// the light, about a count, is left there: exported as absorbance against
// the blank and capped at 6. The capped values and the dark channels must
// be blind and named, and the run must count 3 species, resolve them at a
// cosine ≥ 0.99 where light gets through, and fit both rate constants
// within 4 standard errors of the truth. Before, the rank came out 1 and
// the rate constants wrong (the same with --pre 3 or without: the capped
// or noise-only channels weighted as measured absorbance).
func TestCappedAbsorbanceExport(t *testing.T) {
	const k1, k2 = 3e-3, 1e-3
	s := makeBateman(t, k1, k2, 0, 21, 3)
	solventBeams(s, 4, 4.5, 21)
	path, caps := cappedAbsorbance(t, s, 6)
	if caps == 0 {
		t.Fatal("no value at the cap: the case tests nothing")
	}
	st := NewSettings()
	st.Data, st.Kind = []string{path}, "absorbance"
	st.Pre, st.Model, st.T0 = 3, "A -> B -> C", "60"
	r, err := Run(st, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.Blind == nil || r.Blind.Count < caps {
		t.Fatalf("blind points %v, want at least the %d values at the cap", r.Blind, caps)
	}
	if !anyContains(r.Notes, "at the export's cap") || !anyContains(r.Notes, "wavenumber 15") {
		t.Errorf("the notes do not name the blind band at 1560–1500: %q", r.Notes)
	}
	if r.Rank.Estimate != 3 || r.Components != 3 {
		t.Fatalf("rank %d, components %d; want 3 (%s)", r.Rank.Estimate, r.Components, r.Rank.Reason)
	}
	checkLitCosines(t, s, r, func(x float64) bool { return x > 1562 || x < 1498 })
	if r.Kinetics == nil || r.Kinetics.Reported() == nil {
		t.Fatal("no kinetic fit")
	}
	fit := r.Kinetics.Reported().Fit
	for j, k := range []float64{k1, k2} {
		within(t, r.Kinetics.Scheme.Steps[j].Text, fit.K[j], fit.KStdErr[j], k, 4)
	}
}
