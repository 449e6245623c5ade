package spectra

import (
	"math"
	"os"
	"path/filepath"
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
