package spectra

import (
	"os"
	"path/filepath"
	"testing"
)

// Decimal commas with a ';' or tab separator are unambiguous and read as
// points (common practice: European locale exports); with ',' separators
// they stay an error, since the comma is then also the field separator.
func TestDecimalCommaWithSemicolons(t *testing.T) {
	dir := t.TempDir()
	semi := filepath.Join(dir, "s_60.txt")
	dot := filepath.Join(dir, "d_60.txt")
	os.WriteFile(semi, []byte("\"Wellenzahl (cm-1)\";\"Extinktion\"\n1800,5;0,125\n1799,0;-1,5e-3\n1797,5;2\n"), 0o644)
	os.WriteFile(dot, []byte("wavenumber,absorbance\n1800.5,0.125\n1799.0,-1.5e-3\n1797.5,2\n"), 0o644)
	a, err := ReadSpectrumFile(semi)
	if err != nil {
		t.Fatal(err)
	}
	b, err := ReadSpectrumFile(dot)
	if err != nil {
		t.Fatal(err)
	}
	if a.AxisName != "wavenumber" {
		t.Errorf("axis name %q, want wavenumber", a.AxisName)
	}
	for i := range b.Values {
		if a.Axis[i] != b.Axis[i] || a.Values[i] != b.Values[i] {
			t.Errorf("row %d: %v %v vs %v %v", i, a.Axis[i], a.Values[i], b.Axis[i], b.Values[i])
		}
	}
	// Tab-separated too.
	tab := filepath.Join(dir, "t_60.txt")
	os.WriteFile(tab, []byte("1800,5\t0,125\n1799,0\t-1,5e-3\n1797,5\t2\n"), 0o644)
	if c, err := ReadSpectrumFile(tab); err != nil || c.Values[0] != 0.125 {
		t.Errorf("tab-separated decimal commas: %v %v", c, err)
	}
	// A cell with two commas is still not a number.
	bad := filepath.Join(dir, "b_60.txt")
	os.WriteFile(bad, []byte("1800;0,1,2\n1799;0,1\n"), 0o644)
	if _, err := ReadSpectrumFile(bad); err == nil {
		t.Error("a cell with two commas was accepted")
	}
}

// A times table with ';' or tab separators takes decimal commas as spectrum
// files do (common practice: European locale spreadsheet exports write
// "12,5" for twelve and a half).
func TestReadTimesDecimalComma(t *testing.T) {
	for _, text := range []string{
		"file;time_s\r\na.csv;0\r\nb.csv;12,5\r\nc.csv;1,25e2\r\n",
		"file\ttime_s\na.csv\t0\nb.csv\t12,5\nc.csv\t125,0\n",
	} {
		tab, err := ReadTimes(fuzzFile(t, "times.csv", []byte(text)))
		if err != nil || tab["a.csv"] != 0 || tab["b.csv"] != 12.5 || tab["c.csv"] != 125 {
			t.Errorf("%q: %v %v, want a 0, b 12.5, c 125", text, tab, err)
		}
	}
}
