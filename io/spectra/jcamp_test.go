package spectra

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

type expectedBlocks struct {
	Blocks []struct {
		Title  string    `json:"title"`
		YUnits string    `json:"yUnits"`
		X      []float64 `json:"x"`
		Y      []float64 `json:"y"`
	} `json:"blocks"`
}

func readExpected(t *testing.T, name string) expectedBlocks {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "jcamp", name+".expected.json"))
	if err != nil {
		t.Fatal(err)
	}
	var e expectedBlocks
	if err := json.Unmarshal(b, &e); err != nil {
		t.Fatal(err)
	}
	return e
}

// The stored fixtures, parsed once by jcampconverter 12.5.3 (npm; see
// testdata/jcamp/gen.sh), read through the spectra readers.
func TestReadSpectrumJCAMPAgainstJcampconverter(t *testing.T) {
	for _, name := range []string{"ir_affn", "ir_pac", "ir_sqz", "ir_dif", "ir_difdup", "ir_xypoints"} {
		t.Run(name, func(t *testing.T) {
			want := readExpected(t, name).Blocks[0]
			sp, err := ReadSpectrum(filepath.Join("..", "..", "testdata", "jcamp", name+".jdx"))
			if err != nil {
				t.Fatal(err)
			}
			if sp.AxisName != "wavenumber" {
				t.Errorf("axis %q, want wavenumber (##XUNITS=1/CM)", sp.AxisName)
			}
			wantKind := "single-beam"
			u := strings.ToUpper(want.YUnits)
			if strings.Contains(u, "ABSORBANCE") {
				wantKind = "absorbance"
			}
			if strings.Contains(u, "TRANSMITTANCE") {
				// Read as absorbance: A = −log10 T (IUPAC Gold Book, "absorbance").
				wantKind = "absorbance"
				for i, v := range want.Y {
					want.Y[i] = -math.Log10(v)
				}
			}
			if sp.Kind != wantKind {
				t.Errorf("kind %q, want %q (##YUNITS=%s)", sp.Kind, wantKind, want.YUnits)
			}
			if len(sp.Values) != len(want.Y) {
				t.Fatalf("%d points, jcampconverter reads %d", len(sp.Values), len(want.Y))
			}
			for i := range want.Y {
				if !nearly(sp.Axis[i], want.X[i]) || !nearly(sp.Values[i], want.Y[i]) {
					t.Fatalf("point %d: (%v, %v), jcampconverter (%v, %v)", i, sp.Axis[i], sp.Values[i], want.X[i], want.Y[i])
				}
			}
		})
	}
}

func nearly(a, b float64) bool { return math.Abs(a-b) <= 1e-9*math.Max(1, math.Abs(b)) }

func TestJCAMPSeriesErrors(t *testing.T) {
	link := filepath.Join("..", "..", "testdata", "jcamp", "ir_link.jdx")
	if _, err := Load(link, FolderOptions{}); err == nil || !strings.Contains(err.Error(), "needs their acquisition times") {
		t.Errorf("LINK file without times: %v", err)
	}
	dir := t.TempDir()
	times := filepath.Join(dir, "times.csv")
	os.WriteFile(times, []byte("file,time_s\nbackground single beam,0\nsample single beam,10\nsample absorbance,20\n"), 0o644)
	if _, err := Load(link, FolderOptions{TimesFile: times}); err == nil || !strings.Contains(err.Error(), "give blocks of one kind") {
		t.Errorf("LINK file of mixed kinds: %v", err)
	}
	bad := filepath.Join(dir, "t.jdx")
	os.WriteFile(bad, []byte("##TITLE=t\n##JCAMP-DX=4.24\n##XUNITS=1/CM\n##YUNITS=TRANSMITTANCE\n##XFACTOR=1\n##YFACTOR=1\n##FIRSTX=3\n##LASTX=1\n##NPOINTS=3\n##XYDATA=(X++(Y..Y))\n3 0.5 0 0.25\n##END=\n"), 0o644)
	if _, err := ReadSpectrum(bad); err == nil || !strings.Contains(err.Error(), "transmittance 0 at 2 is not positive") {
		t.Errorf("zero transmittance: %v", err)
	}
	pct := filepath.Join(dir, "p.jdx")
	os.WriteFile(pct, []byte("##TITLE=p\n##JCAMP-DX=4.24\n##XUNITS=1/CM\n##YUNITS=% TRANSMITTANCE\n##XFACTOR=1\n##YFACTOR=1\n##FIRSTX=2\n##LASTX=1\n##NPOINTS=2\n##XYDATA=(X++(Y..Y))\n2 10 100\n##END=\n"), 0o644)
	sp, err := ReadSpectrum(pct)
	if err != nil {
		t.Fatal(err)
	}
	// 10 % transmittance is absorbance 1, 100 % is 0 (definition of absorbance).
	if sp.Kind != "absorbance" || !nearly(sp.Values[0], 1) || sp.Values[1] != 0 {
		t.Errorf("percent transmittance read as %v (%s), want [1 0] absorbance", sp.Values, sp.Kind)
	}
}

// A transmittance is a fraction up to 1 or a percentage up to 100, a
// little above with noise (IUPAC Gold Book, "transmittance"): a block
// whose ##YUNITS say TRANSMITTANCE over raw counts of 5e4 is refused as
// --kind transmittance on the same values in a CSV is, naming the file,
// the ##YUNITS line and what to write instead, where the counts had gone
// on as absorbances near −4.7 and stopped deep in the factor analysis
// with no file named.
func TestJCAMPTransmittanceOfCounts(t *testing.T) {
	text := "##TITLE=scan1\n##JCAMP-DX=4.24\n##XUNITS=1/CM\n##YUNITS=TRANSMITTANCE\n##XFACTOR=1\n##YFACTOR=1\n" +
		"##FIRSTX=3\n##LASTX=1\n##NPOINTS=3\n##XYDATA=(X++(Y..Y))\n3 50902 50845 50792\n##END=\n"
	p := fuzzFile(t, "c.jdx", []byte(text))
	want := `c.jdx:4: block "scan1": ##YUNITS=TRANSMITTANCE, but the largest value, 50902, is not a transmittance (a fraction up to 1 or a percentage up to 100, a little above with noise); if these are single-beam intensities, write ##YUNITS=ARBITRARY UNITS`
	if _, err := ReadSpectrum(p); err == nil || !strings.Contains(err.Error(), want) || strings.Contains(err.Error(), "\n") {
		t.Errorf("transmittance of counts: %v, want one line with %q", err, want)
	}
	// The same values in a CSV with --kind transmittance, the rule the
	// JCAMP-DX path follows.
	csv := fuzzFile(t, "c.csv", []byte("wavenumber,0,60\n3,50902,50845\n2,50845,50792\n1,50792,50700\n"))
	s, err := ReadMatrixCSV(csv)
	if err != nil {
		t.Fatal(err)
	}
	if _, _, err := TransmittanceToAbsorbance(s); err == nil || !strings.Contains(err.Error(), "is not a transmittance") {
		t.Errorf("CSV with --kind transmittance: %v", err)
	}
}

// A fault of one point of a JCAMP-DX block names the line that holds it
// (docs/errors.md: file and line as an editor shows them): a repeated X in
// ##XYPOINTS on line 13, not the block's ##TITLE on line 1.
func TestJCAMPPointFaultLine(t *testing.T) {
	text := "##TITLE=t\n##JCAMP-DX=4.24\n##DATA TYPE=INFRARED SPECTRUM\n##XUNITS=1/CM\n##YUNITS=ABSORBANCE\n##XFACTOR=1\n##YFACTOR=1\n" +
		"##FIRSTX=1010\n##LASTX=1000\n##NPOINTS=6\n##XYPOINTS=(XY..XY)\n1010, 0.1\n1008, 0.2; 1006, 0.3\n1004, 0.2\n1000, 0.1\n1000, 0.1\n##END=\n"
	_, err := ReadSpectrum(fuzzFile(t, "l.jdx", []byte(text)))
	if err == nil || !strings.Contains(err.Error(), "l.jdx:16: axis value 1000 repeats the previous row") {
		t.Errorf("repeated X: %v, want it at line 16", err)
	}
}

// A header date that is no real date (30 February) is said as such, with
// its line, where a folder of JCAMP-DX files timed by their headers had
// said the file has no acquisition time at all (JCAMP-DX 5.01's
// ##LONGDATE=YYYY/MM/DD HH:MM:SS, from memory).
func TestJCAMPInvalidDateNamed(t *testing.T) {
	dir := t.TempDir()
	file := func(name, date string) {
		text := "##TITLE=" + name + "\n##JCAMP-DX=4.24\n##XUNITS=1/CM\n##YUNITS=ARBITRARY UNITS\n##LONGDATE=" + date + "\n" +
			"##XFACTOR=1\n##YFACTOR=1\n##FIRSTX=3\n##LASTX=1\n##NPOINTS=3\n##XYDATA=(X++(Y..Y))\n3 100 90 80\n##END=\n"
		if err := os.WriteFile(filepath.Join(dir, name+".jdx"), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	file("a", "2019/02/28 13:00:00")
	file("b", "2019/02/30 13:02:00")
	file("c", "2019/03/01 13:04:00")
	_, err := Load(dir, FolderOptions{})
	want := `b.jdx:5: its ##LONGDATE="2019/02/30 13:02:00" is not a real date and time, and a folder of spectra needs an acquisition time for every file; correct it, or give --times FILE`
	if err == nil || !strings.Contains(err.Error(), want) {
		t.Errorf("30 February: %v, want %q", err, want)
	}
}
