package pipeline

import (
	"encoding/csv"
	"io"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"testing"

	"github.com/bandsolve/bandsolve/io/jcamp"
	"github.com/bandsolve/bandsolve/io/output"
)

// Where every spectrum is blind (an opaque band) no light reached the detector and
// nothing was measured (common practice: absorbance is −log10 of the light left, and
// there is none to take the logarithm of), so the data determine no value of a resolved
// spectrum there; the run's note says so and that such channels are written as 0. The
// A → B series capped at 4 under an opaque band at 1550 cm⁻¹ (opaqueBeams), with a
// baseline that tilts and rises in time, resolved with a fitted baseline: every channel of the range the note names must read 0 in
// spectra.csv, spectra.jdx and uniqueness.csv's spectrum rows, and the spectra must not
// be 0 everywhere else. Before, the baseline's lowering and the refill left a smooth
// value there (0.016 and 0.08 absorbance on the real urethane series with a saturated
// carbonyl band).
func TestUnmeasuredChannelsWrittenAsZero(t *testing.T) {
	s := makeBateman(t, 3e-3, 1e-3, 0, 31, 2)
	opaqueBeams(s, 3.5, 31)
	path := driftingCappedAbsorbance(t, s, 4)
	out := filepath.Join(t.TempDir(), "out")
	st := NewSettings()
	st.Data, st.Kind, st.Model, st.T0 = []string{path}, "absorbance", "A -> B", "60"
	st.Baseline, st.Checks, st.Report, st.Out, st.Quiet = "poly:2", "off", "off", out, true
	r, err := Execute(st, Streams{Out: io.Discard, Err: io.Discard})
	if err != nil {
		t.Fatal(err)
	}
	hi, lo := opaqueRange(t, r.Notes)
	in := func(x float64) bool { return x >= lo && x <= hi }
	rows := readCSVFile(t, filepath.Join(out, "spectra.csv"))
	blind, other := 0, 0
	for _, row := range rows[1:] {
		x := cellValue(t, row[0])
		for _, cell := range row[1:] {
			v := cellValue(t, cell)
			switch {
			case in(x) && v != 0:
				t.Fatalf("spectra.csv at %g, inside the opaque band %g–%g: %v, want 0", x, hi, lo, row)
			case in(x):
				blind++
			case v != 0:
				other++
			}
		}
	}
	if blind == 0 || other == 0 {
		t.Fatalf("spectra.csv: %d values in the band, %d non-zero outside it", blind, other)
	}
	blocks, err := jcamp.ReadFile(filepath.Join(out, SpectraJCAMP))
	if err != nil {
		t.Fatal(err)
	}
	for _, b := range blocks {
		for i, x := range b.X {
			if in(x) && b.Y[i] != 0 {
				t.Fatalf("spectra.jdx %s at %g: %g, want 0", b.Title, x, b.Y[i])
			}
		}
	}
	for _, row := range readCSVFile(t, filepath.Join(out, "uniqueness.csv"))[1:] {
		if row[1] != "spectrum" || !in(cellValue(t, row[3])) {
			continue
		}
		for _, cell := range row[4:7] {
			if cellValue(t, cell) != 0 {
				t.Fatalf("uniqueness.csv in the opaque band: %v, want 0 in solution, at_min and at_max", row)
			}
		}
	}
}

// driftingCappedAbsorbance is cappedAbsorbance with a baseline added before the cap: a
// straight line along the axis, 0.03 absorbance at 1500 cm⁻¹ and 0.06 at 1800 cm⁻¹ in
// the first spectrum, rising in time by two thirds of that by the last, which a fitted
// baseline of order 2 holds.
func driftingCappedAbsorbance(t *testing.T, s *synth, capAt float64) string {
	t.Helper()
	head := []string{"wavenumber"}
	for _, tm := range s.times {
		head = append(head, output.Float(tm))
	}
	last := s.times[len(s.times)-1]
	tab := output.Table{Header: head}
	for j, x := range s.axis {
		row := []string{output.Float(x)}
		for i, tm := range s.times {
			a := -math.Log10(s.beams.At(i, j)/s.blank[j]) + (0.03+0.02*tm/last)*(1+(x-1500)/300)
			if s.beams.At(i, j) <= 0 || !(a < capAt) {
				a = capAt
			}
			row = append(row, output.Float(a))
		}
		tab.Rows = append(tab.Rows, row)
	}
	path := filepath.Join(t.TempDir(), "absorbance.csv")
	if err := os.WriteFile(path, tab.CSV(), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// opaqueRange is the range the opaque-band note names (its first).
func opaqueRange(t *testing.T, notes []string) (a, b float64) {
	t.Helper()
	re := regexp.MustCompile(`wavenumber ([0-9.]+)–([0-9.]+) taken as nearly blind`)
	for _, n := range notes {
		if m := re.FindStringSubmatch(n); m != nil {
			return cellValue(t, m[1]), cellValue(t, m[2])
		}
	}
	t.Fatalf("no opaque-band note: %q", notes)
	return 0, 0
}

func readCSVFile(t *testing.T, path string) [][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return rows
}

func cellValue(t *testing.T, s string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatal(err)
	}
	return v
}
