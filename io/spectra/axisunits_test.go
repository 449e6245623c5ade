package spectra

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// A matrix CSV's header cell names its axis and unit as a per-file column
// title does: "wavenumber (cm-1)" is the wavenumber in cm⁻¹ (the unit of
// JCAMP-DX 4.24 ##XUNITS=1/CM), as "Wavenumber (cm-1),Absorbance" is for
// one spectrum. A wavelength in µm (JCAMP-DX 4.24 ##XUNITS=MICROMETERS) is
// 1000 nm per µm (SI prefixes): it is read as nm, the unit "wavelength"
// has in every output, and a note says so. A header naming neither
// (chemical shift in ppm) stays as written.
func TestMatrixHeaderUnits(t *testing.T) {
	dir := t.TempDir()
	cases := []struct {
		header, want string
		scale        float64
		note         bool
	}{
		{"wavenumber (cm-1)", "wavenumber", 1, false},
		{"Wavenumber / cm^-1", "wavenumber", 1, false},
		{"wavelength (nm)", "wavelength", 1, false},
		{"wavelength (um)", "wavelength", 1000, true},
		{"Wavelength [µm]", "wavelength", 1000, true},
		{"chemical shift (ppm)", "chemical shift (ppm)", 1, false},
	}
	for i, c := range cases {
		p := filepath.Join(dir, "m"+string(rune('a'+i))+".csv")
		body := c.header + ",0,60\n2.5,0.1,0.2\n2.6,0.3,0.4\n2.7,0.2,0.1\n"
		if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
		s, err := ReadMatrixCSV(p)
		if err != nil {
			t.Fatalf("%s: %v", c.header, err)
		}
		if s.AxisName != c.want {
			t.Errorf("%q: axis name %q, want %q", c.header, s.AxisName, c.want)
		}
		if math.Abs(s.Axis[0]-2.5*c.scale) > 1e-9*c.scale {
			t.Errorf("%q: first axis value %g, want %g", c.header, s.Axis[0], 2.5*c.scale)
		}
		noted := strings.Contains(strings.Join(s.Notes, "\n"), "µm")
		if noted != c.note {
			t.Errorf("%q: note on µm %v, want %v (%q)", c.header, noted, c.note, s.Notes)
		}
	}
}

// The same holds outside matrix files: a one-spectrum file's column title
// "Wavelength (um)" and a JCAMP-DX file's ##XUNITS=MICROMETERS (JCAMP-DX
// 4.24, McDonald & Wilks 1988: the x units 1/CM, MICROMETERS, NANOMETERS)
// give a wavelength in µm, read as nm, 1 µm = 1000 nm (SI prefixes), with
// the note a matrix header gives; a folder of such files says it once.
func TestFileAndJCAMPMicrometres(t *testing.T) {
	const note = "is a wavelength in µm: read as nm (×1000)"
	for _, c := range []struct {
		name, text, written string
	}{
		{"a.csv", "Wavelength (um),Absorbance\n2.5,0.1\n2.6,0.3\n2.7,0.2\n", "wavelength (um)"},
		{"b.txt", "\"λ [µm]\";\"A\"\n2,5;0,1\n2,6;0,3\n2,7;0,2\n", "λ [µm]"},
		{"c.jdx", "##TITLE=c\n##JCAMP-DX=4.24\n##XUNITS=MICROMETERS\n##YUNITS=ABSORBANCE\n##XFACTOR=0.1\n##YFACTOR=0.1\n##FIRSTX=2.5\n##LASTX=2.7\n##NPOINTS=3\n##XYDATA=(X++(Y..Y))\n25 1 3 2\n##END=\n", "##XUNITS=MICROMETERS"},
	} {
		sp, err := ReadSpectrum(fuzzFile(t, c.name, []byte(c.text)))
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		want := []float64{2500, 2600, 2700}
		for i, w := range want {
			if math.Abs(sp.Axis[i]-w) > 1e-9*w {
				t.Errorf("%s: axis %v, want %v nm", c.name, sp.Axis, want)
				break
			}
		}
		if sp.AxisName != "wavelength" || !strings.Contains(sp.Note, note) || !strings.Contains(sp.Note, "\""+c.written+"\"") {
			t.Errorf("%s: axis %q, note %q; want wavelength, noted as from %q", c.name, sp.AxisName, sp.Note, c.written)
		}
	}
	// A folder of one-spectrum files titled in µm: one note for the series.
	dir := t.TempDir()
	for i, n := range []string{"s_0.csv", "s_60.csv", "s_120.csv"} {
		body := fmt.Sprintf("Wavelength (µm),Absorbance\n2.5,0.%d\n2.6,0.3\n2.7,0.2\n", i+1)
		if err := os.WriteFile(filepath.Join(dir, n), []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	s, err := ReadFolder(dir, FolderOptions{TimesFromName: true})
	if err != nil {
		t.Fatal(err)
	}
	if s.AxisName != "wavelength" || s.Axis[0] != 2500 || len(s.Notes) != 1 || !strings.Contains(s.Notes[0], note) {
		t.Errorf("folder: axis %q from %g, notes %q; want wavelength from 2500 nm and one note", s.AxisName, s.Axis[0], s.Notes)
	}
	// Titles in nm or cm⁻¹ are read as written, without a note.
	for _, text := range []string{"Wavelength (nm),A\n2500,0.1\n2600,0.3\n", "Wavenumber (cm-1),A\n2500,0.1\n2600,0.3\n"} {
		sp, err := ReadSpectrum(fuzzFile(t, "n.csv", []byte(text)))
		if err != nil || sp.Axis[0] != 2500 || sp.Note != "" {
			t.Errorf("%q: %v %v", text, sp, err)
		}
	}
}

// A single spectrum read for a series (a blank, a reference) is put in the
// unit of the series' axis: a wavelength against wavenumbers, or the
// reverse, point by point by the definition of the wavenumber, ν̃ = 1/λ, so
// ν̃/cm⁻¹ = 10⁴/(λ/µm) = 10⁷/(λ/nm) (IUPAC Green Book, 3rd ed., §2.7; SI
// prefixes), with its µm note and one that says so. Only units a title or
// ##XUNITS stated are converted, and only axes that do not match already:
// a name guessed from the values converts nothing.
func TestSpectrumInSeriesUnit(t *testing.T) {
	read := func(text string) *Spectrum {
		sp, err := ReadSpectrum(fuzzFile(t, "b.csv", []byte(text)))
		if err != nil {
			t.Fatal(err)
		}
		return sp
	}
	um := "Wavelength (um),I\n5,100\n6.25,200\n8,300\n"
	cm := "Wavenumber (cm-1),I\n2000,100\n1600,200\n1250,300\n"
	untitled := "2000,100\n1600,200\n1250,300\n"
	wn := &Series{AxisName: "wavenumber", Axis: []float64{2000, 1600, 1250}}
	nm := &Series{AxisName: "wavelength", Axis: []float64{5000, 6250, 8000}}
	guessedNM := &Series{AxisName: "wavelength", AxisGuessed: true, Axis: []float64{5000, 6250, 8000}}
	for _, c := range []struct {
		name, text string
		ser        *Series
		axis       []float64
		notes      []string
	}{
		{"µm on cm⁻¹", um, wn, []float64{2000, 1600, 1250},
			[]string{`blank "b.csv": the axis "wavelength (um)" is a wavelength in µm: read as nm (×1000), then put on the data's wavenumber axis (cm⁻¹) point by point, ν̃/cm⁻¹ = 10⁷/(λ/nm)`}},
		{"cm⁻¹ on µm read as nm", cm, nm, []float64{5000, 6250, 8000},
			[]string{`blank "b.csv": its wavenumber axis (cm⁻¹) is put on the data's wavelength axis (nm) point by point, λ/nm = 10⁷/(ν̃/cm⁻¹)`}},
		{"µm on nm: the series' note", um, nm, []float64{5000, 6250, 8000},
			[]string{`blank "b.csv": the axis "wavelength (um)" is a wavelength in µm: read as nm (×1000), the unit of every output and of --exclude and other ranges`}},
		{"same unit", cm, wn, []float64{2000, 1600, 1250}, nil},
		{"unit of the spectrum guessed", untitled, nm, []float64{2000, 1600, 1250}, nil},
		{"unit of the series guessed", cm, guessedNM, []float64{2000, 1600, 1250}, nil},
	} {
		sp := read(c.text)
		got, notes := InUnitOf(sp, c.ser, `blank "b.csv"`)
		ok := len(got.Axis) == len(c.axis) && slices.Equal(notes, c.notes)
		for i := range c.axis {
			ok = ok && math.Abs(got.Axis[i]-c.axis[i]) <= 1e-12*c.axis[i]
		}
		if !ok {
			t.Errorf("%s: axis %v, notes %q; want %v, %q", c.name, got.Axis, notes, c.axis, c.notes)
		}
	}
	// The same numbers under other names are taken as they are: the
	// series' own axis in cm⁻¹, the spectrum's title saying nm.
	sp := read("Wavelength (nm),I\n2000,100\n1600,200\n1250,300\n")
	if got, notes := InUnitOf(sp, wn, "blank"); got != sp || notes != nil {
		t.Errorf("matching axes converted: %v %q", got.Axis, notes)
	}
}
