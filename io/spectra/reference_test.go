package spectra

import (
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// A reference named by its rows is that state of the series: for absorbance input
// ΔA = A − A_ref (definition) with A_ref the second spectrum here, its own row exactly
// zero; for single beams ΔA = −log10(I/I_ref) (Beer–Lambert; IUPAC Gold Book,
// "absorbance"), so a beam at a tenth of the reference's gives 1. A row the series does
// not have is refused.
func TestReferenceRows(t *testing.T) {
	a := series([]float64{0.1, 0.5, 0.9}, []float64{0.3, 0.4, 0.2}, []float64{0.7, 0.1, 0.0})
	as, err := Assemble(a, AssembleOptions{Kind: Absorbance, Reference: Reference{Rows: []int{1}}})
	if err != nil {
		t.Fatal(err)
	}
	if len(as.ReferenceRows) != 1 || as.ReferenceRows[0] != 1 {
		t.Errorf("reference rows %v, want [1]", as.ReferenceRows)
	}
	want := [][]float64{{0.1 - 0.3, 0.5 - 0.4, 0.9 - 0.2}, {0, 0, 0}, {0.7 - 0.3, 0.1 - 0.4, 0.0 - 0.2}}
	for i, row := range want {
		for j, w := range row {
			if got := as.Difference.At(i, j); math.Abs(got-w) > 1e-15 || (i == 1 && got != 0) {
				t.Errorf("ΔA(%d, %d) = %v, want %v", i, j, got, w)
			}
		}
	}
	b := series([]float64{100, 200}, []float64{1000, 400}, []float64{10, 40})
	bs, err := Assemble(b, AssembleOptions{Kind: SingleBeam, Reference: Reference{Rows: []int{1}}})
	if err != nil {
		t.Fatal(err)
	}
	for j, w := range []float64{2, 1} {
		if got := bs.Difference.At(2, j); math.Abs(got-w) > 1e-15 {
			t.Errorf("single beams: ΔA(2, %d) = %v, want %v", j, got, w)
		}
		if got := bs.Difference.At(1, j); got != 0 {
			t.Errorf("single beams: the reference's own row %v, want exactly 0", got)
		}
	}
	if _, err := Assemble(series([]float64{1, 2}), AssembleOptions{Kind: Absorbance, Reference: Reference{Rows: []int{3}}}); err == nil || !strings.Contains(err.Error(), "has 1 spectra") {
		t.Errorf("row 4 of 1: %v, want refused", err)
	}
}

// OwnSpectrum tells a series' own spectrum from a file recorded apart, by the folder's own
// time rules (files named by their time, or a times table: docs/errors.md, "Folders and
// times"): scan_60.csv is one of the series, reference.csv (no number) and a numbered file
// in a folder of date-time stamps (the names could not be read together) are not; with a
// table, a row is what makes a file one of the series.
func TestOwnSpectrum(t *testing.T) {
	write := func(dir, name string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte("1000,0.1\n1001,0.2\n"), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	numbered := t.TempDir()
	write(numbered, "scan_0.csv")
	scan60 := write(numbered, "scan_60.csv")
	apart := write(numbered, "reference.csv")
	// The other fixed files of a run (a blank, a reference apart) are left out
	// of the folder as the run leaves them out.
	byName := FolderOptions{TimesFromName: true}
	if !OwnSpectrum(numbered, scan60, FolderOptions{TimesFromName: true, Exclude: []string{apart}}) {
		t.Error("scan_60.csv: not taken for one of the series")
	}
	if OwnSpectrum(numbered, apart, byName) {
		t.Error("reference.csv (no time in its name): taken for one of the series")
	}
	stamped := t.TempDir()
	write(stamped, "Thu Jul 25 14-53-51 2019 (GMT-04-00).CSV")
	own := write(stamped, "Thu Jul 25 14-54-12 2019 (GMT-04-00).CSV")
	odd := write(stamped, "ref_5.csv")
	if !OwnSpectrum(stamped, own, FolderOptions{TimesFromName: true, Exclude: []string{odd}}) || OwnSpectrum(stamped, odd, byName) {
		t.Error("stamped folder: a stamped file must be one of the series, ref_5.csv not")
	}
	table := filepath.Join(t.TempDir(), "times.csv")
	if err := os.WriteFile(table, []byte("file,time_s\nscan_0.csv,0\nscan_60.csv,60\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	byTable := FolderOptions{TimesFile: table}
	if !OwnSpectrum(numbered, scan60, byTable) || OwnSpectrum(numbered, apart, byTable) {
		t.Error("times table: a listed file must be one of the series, an unlisted one not")
	}
	if OwnSpectrum(stamped, scan60, byName) {
		t.Error("a file of another folder taken for one of the series")
	}
}
