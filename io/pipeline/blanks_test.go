package pipeline

import (
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
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

// A blank exported in µm for single beams in cm⁻¹, or in cm⁻¹ for single
// beams in µm, is the same background: its axis is put on the data's by
// the definition of the wavenumber, ν̃/cm⁻¹ = 10⁴/(λ/µm) (IUPAC Green
// Book, 3rd ed., §2.7), point by point onto the same channels, so every
// absorbance −log10(I/I_blank) is the one the blank in the data's unit
// gives, bit for bit, and a note says how the blank's axis was read. The
// beams carry noise constant in detector counts (absorbance noise ∝ 1/I).
func TestBlankInOtherAxisUnit(t *testing.T) {
	syn := makeBateman(t, 3e-3, 1e-3, 0, 31, 2)
	rng := rand.New(rand.NewPCG(31, 7))
	n, m := syn.beams.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			syn.beams.Set(i, j, syn.beams.At(i, j)+3*rng.NormFloat64()) // 3 counts of 2e4
		}
	}
	series, blank := syn.write(t)
	dir := filepath.Dir(series)
	// The same files with the axis written in µm, 10 significant digits.
	inMicrometres := func(src, dst string) string {
		b, err := os.ReadFile(src)
		if err != nil {
			t.Fatal(err)
		}
		lines := strings.Split(strings.TrimSpace(string(b)), "\n")
		lines[0] = "wavelength (um)" + lines[0][strings.IndexByte(lines[0], ','):]
		for i, l := range lines[1:] {
			x, rest, _ := strings.Cut(l, ",")
			v, err := strconv.ParseFloat(x, 64)
			if err != nil {
				t.Fatal(err)
			}
			lines[i+1] = output.Float(1e4/v) + "," + rest
		}
		p := filepath.Join(dir, dst)
		if err := os.WriteFile(p, []byte(strings.Join(lines, "\n")+"\n"), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	seriesUM, blankUM := inMicrometres(series, "series_um.csv"), inMicrometres(blank, "blank_um.csv")
	run := func(data, bl string) *Result {
		s := NewSettings()
		s.Data, s.Blanks, s.Kind, s.Pre = []string{data}, []string{bl}, "single-beam", 3
		s.Components, s.Bands, s.Checks, s.Report = "2", "off", "off", "off"
		r, err := Run(s, nil)
		if err != nil {
			t.Fatalf("--data %s --blank %s: %v", filepath.Base(data), filepath.Base(bl), err)
		}
		return r
	}
	want := run(series, blank)
	for _, c := range []struct{ data, blank, note string }{
		{series, blankUM, `blank "` + blankUM + `": the axis "wavelength (um)" is a wavelength in µm: read as nm (×1000), then put on the data's wavenumber axis (cm⁻¹) point by point`},
		{seriesUM, blank, `blank "` + blank + `": its wavenumber axis (cm⁻¹) is put on the data's wavelength axis (nm) point by point`},
	} {
		r := run(c.data, c.blank)
		if !mat.Equal(r.D, want.D) {
			t.Errorf("--data %s --blank %s: absorbance differs from the blank's in the data's unit", filepath.Base(c.data), filepath.Base(c.blank))
		}
		if !slices.ContainsFunc(r.Notes, func(s string) bool { return strings.HasPrefix(s, c.note) }) {
			t.Errorf("--data %s --blank %s: notes %q, want one starting %q", filepath.Base(c.data), filepath.Base(c.blank), r.Notes, c.note)
		}
	}
}
