package pipeline

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/spectra"
)

// wavelengthCopy writes the real urethane series (realUrethane:
// jevandezande/spectra, MIT) as a matrix CSV whose axis is the wavelength
// in nm, λ/nm = 10⁷/(ν̃/cm⁻¹) (the definition of the wavenumber), as a
// field trial's export gave it.
func wavelengthCopy(t *testing.T, ser *spectra.Series) string {
	t.Helper()
	var b strings.Builder
	b.WriteString("wavelength")
	for _, tm := range ser.Times {
		fmt.Fprintf(&b, ",%g", tm)
	}
	b.WriteByte('\n')
	for j, x := range ser.Axis {
		fmt.Fprintf(&b, "%.10g", 1e7/x)
		for i := range ser.Times {
			fmt.Fprintf(&b, ",%.9g", ser.Values.At(i, j))
		}
		b.WriteByte('\n')
	}
	path := filepath.Join(t.TempDir(), "c001_nm.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// TestWavelengthAxisFindsTheVapour: catalyst 0.01 as measured changes its
// water-vapour lines (the check's warning on the wavenumber series). Given
// on a wavelength axis the same measurement must give the same finding,
// the check reading the axis converted to wavenumber: the same line count
// and the largest line's change within 3 % (the conversion is exact up to
// the CSV's ten digits; what differs between the runs is only the
// baseline, a polynomial of the axis as given). The trial's export was
// read in nm against the ranges in cm⁻¹ ("not evenly spaced within
// 3550–3950 … 591 point(s) at 3550–3949 cm⁻¹", those being nm).
func TestWavelengthAxisFindsTheVapour(t *testing.T) {
	dir, ser, _ := realUrethaneSeries(t, "catalyst-0.01")
	run := func(data string, fromName bool) *Result {
		st := NewSettings()
		st.Data, st.Kind, st.TimesFromName = []string{data}, "absorbance", fromName
		st.Report, st.Bands, st.Checks = "off", "off", "off"
		r, err := Run(st, nil)
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	wn, nm := run(dir, true), run(wavelengthCopy(t, ser), false)
	if nm.AxisName != "wavelength" {
		t.Fatalf("axis read as %q", nm.AxisName)
	}
	a, b := wn.Vapour, nm.Vapour
	if !a.Detected || !b.Detected {
		t.Fatalf("detected: wavenumber %v, wavelength %v (%s)", a.Detected, b.Detected, b.Why)
	}
	if a.Lines != b.Lines {
		t.Errorf("lines: wavenumber %d, wavelength %d", a.Lines, b.Lines)
	}
	if d := math.Abs(b.Change[0]/a.Change[0] - 1); d > 0.03 {
		t.Errorf("largest line's change: wavenumber %.4g, wavelength %.4g (%.1f %% apart)", a.Change[0], b.Change[0], 100*d)
	}
	// The same line, in cm⁻¹ (the series' spacing is 0.48 cm⁻¹).
	if math.Abs(a.LargestAt-b.LargestAt) > 0.5 {
		t.Errorf("largest line at %.5g cm⁻¹ on the wavenumber series, %.5g from the wavelength one", a.LargestAt, b.LargestAt)
	}
	t.Logf("wavenumber: %d lines, change %.4g at %.5g; wavelength: %d lines, change %.4g at %.5g", a.Lines, a.Change[0], a.LargestAt, b.Lines, b.Change[0], b.LargestAt)
	checkWavenumbersNamed(t, nm)
}

// checkWavenumbersNamed: every place the run's words give in cm⁻¹ (values
// of 600 or more; widths are smaller) lies on the series' wavenumber axis,
// 650–4000 cm⁻¹, and none is one of its wavelengths in nm read as cm⁻¹:
// of those, the values the words would give are 2500–15400, and a value
// on both is told by the vapour's ranges, which in nm lie at 2532–2817 and
// 5128–7407 (10⁷/3950 to 10⁷/3550 and 10⁷/1950 to 10⁷/1350).
func checkWavenumbersNamed(t *testing.T, r *Result) {
	t.Helper()
	texts := append(append(append([]string{}, r.Notes...), r.Warnings...), r.Advice...)
	place := regexp.MustCompile(`([0-9][0-9.e+]*)(?:–([0-9][0-9.e+]*))? cm⁻¹`)
	for _, s := range texts {
		if strings.Contains(s, "water vapour not checked") {
			t.Errorf("the check did not run: %q", s)
		}
		for _, m := range place.FindAllStringSubmatch(s, -1) {
			for _, g := range m[1:] {
				x, err := strconv.ParseFloat(g, 64)
				if err != nil || x < 600 {
					continue
				}
				if x > 4001 {
					t.Errorf("%g named in cm⁻¹, beyond the series' 650–4000: %q", x, s)
				}
			}
		}
	}
}

// TestWavelengthVapourNoteInWavenumbers: a wavelength axis cut so that it
// covers only part of the vapour's stretching range and none of its
// bending range (--region 2600:5000 nm, 2000–3846 cm⁻¹ by ν̃ = 10⁷/λ) is
// not checked, and the note names the
// points left there in cm⁻¹: 3550–3846, not the 3550–3949 nm the trial's
// note named as cm⁻¹. Made on the check itself, without the resolution.
func TestWavelengthVapourNoteInWavenumbers(t *testing.T) {
	_, ser, _ := realUrethaneSeries(t, "catalyst-0.01")
	var keep []int
	var axis []float64
	for j, x := range ser.Axis {
		if lam := 1e7 / x; lam >= 2600 && lam <= 5000 {
			keep, axis = append(keep, j), append(axis, lam)
		}
	}
	cut := ser.Keep(keep)
	r := &Result{Settings: NewSettings(), AxisName: "wavelength", Axis: axis, D: cut.Values}
	checkVapour(r)
	if r.Vapour.Checked || len(r.Notes) != 1 {
		t.Fatalf("checked %v, notes %q", r.Vapour.Checked, r.Notes)
	}
	note := r.Notes[0]
	m := regexp.MustCompile(`holds (\d+) point\(s\) at ([0-9.]+)–([0-9.]+) cm⁻¹`).FindStringSubmatch(note)
	if m == nil {
		t.Fatalf("note names no points: %q", note)
	}
	lo, _ := strconv.ParseFloat(m[2], 64)
	hi, _ := strconv.ParseFloat(m[3], 64)
	// 10⁷/2600 = 3846.2 cm⁻¹ (the definition).
	if lo < 3550 || hi > 3846.2 || hi < 3845 {
		t.Errorf("points named at %g–%g cm⁻¹; want 3550–3846: %q", lo, hi, note)
	}
	if !strings.Contains(note, "converted to wavenumber") || !strings.Contains(note, "covers only 3550–3846 of 3550–3950") {
		t.Errorf("note: %q", note)
	}
}
