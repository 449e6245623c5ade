package spectra

import (
	"os"
	"path/filepath"
	"slices"
	"strings"
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

// A comma-separated row holds as many fields as its header (RFC 4180, §2
// rule 4: each line the same number of fields), so a times row with one
// more is refused, never read from its first cells: a decimal comma
// written bare, b.csv,12,5, is the common case (a European spreadsheet's
// "12,5", common practice) and the message says how to write it; quoted,
// "12,5" is read by the file's rule for quoted decimal commas (fileMarks).
func TestTimesRowNotTruncated(t *testing.T) {
	for _, c := range []struct{ text, want string }{
		{"file,time_s\na.csv,0\nb.csv,12,5\n",
			`times.csv:3: row "b.csv,12,5" has 3 cells, the header has 2; 12,5 has a decimal comma, which a comma-separated file reads as a separator: quote it ("12,5"), write a decimal point (12.5), or separate the columns with ';'`},
		{"time_s,file\n0,a.csv\n12,5,b.csv\n", `row "12,5,b.csv" has 3 cells, the header has 2; 12,5 has a decimal comma`},
		{"file,time_s\na.csv,0\nb.csv,12.5,late\n", `row "b.csv,12.5,late" has 3 cells, the header has 2; give each row the header's cells`},
	} {
		tab, err := ReadTimes(fuzzFile(t, "times.csv", []byte(c.text)))
		if err == nil || !strings.Contains(err.Error(), c.want) || strings.Contains(err.Error(), "\n") {
			t.Errorf("%q: read %v, error %v; want one line with %q", c.text, tab, err, c.want)
		}
	}
	tab, err := ReadTimes(fuzzFile(t, "times.csv", []byte("file,time_s\na.csv,0\nb.csv,\"12,5\"\n")))
	if err != nil || tab["b.csv"] != 12.5 {
		t.Errorf("quoted \"12,5\": %v %v, want 12.5 s", tab, err)
	}
}

// A comma-separated file may quote a cell to hold the separator (RFC 4180,
// §2 rules 5 and 6): "1234,5","0,0123" is two numbers with decimal commas,
// the same as the ';'-separated 1234,5;0,0123 (a European spreadsheet's two
// CSV exports, common practice). Spectrum files, matrix files and times
// tables read the same numbers from both.
func TestQuotedDecimalCommas(t *testing.T) {
	pairs := []struct {
		name, quoted, semi string
		read               func(p string) ([]float64, error)
	}{
		{"spectrum",
			"\"Wellenzahl (cm-1)\",\"Extinktion\"\n\"1800,5\",\"0,125\"\n\"1799,0\",\"-1,5e-3\"\n\"1797,5\",\"2\"\n\"1796,0\",\"6,5e+002\"\n",
			"Wellenzahl (cm-1);Extinktion\n1800,5;0,125\n1799,0;-1,5e-3\n1797,5;2\n1796,0;6,5e+002\n",
			func(p string) ([]float64, error) {
				s, err := ReadSpectrumFile(p)
				if err != nil {
					return nil, err
				}
				return append(s.Axis, s.Values...), nil
			}},
		{"matrix",
			"\"wavenumber\",\"0\",\"60,5\"\n\"1800,5\",\"0,1\",\"0,25\"\n\"1799,0\",\"1,234\",\"0,5\"\n",
			"wavenumber;0;60,5\n1800,5;0,1;0,25\n1799,0;1,234;0,5\n",
			func(p string) ([]float64, error) {
				s, err := ReadMatrixCSV(p)
				if err != nil {
					return nil, err
				}
				return append(append(s.Axis, s.Times...), s.Values.RawMatrix().Data...), nil
			}},
		{"times",
			"file,time_s\n\"a.csv\",\"0\"\n\"b.csv\",\"12,5\"\n\"c.csv\",\"1,25e2\"\n",
			"file;time_s\na.csv;0\nb.csv;12,5\nc.csv;1,25e2\n",
			func(p string) ([]float64, error) {
				tab, err := ReadTimes(p)
				return []float64{tab["a.csv"], tab["b.csv"], tab["c.csv"]}, err
			}},
	}
	for _, c := range pairs {
		q, err := c.read(fuzzFile(t, "q.csv", []byte(c.quoted)))
		if err != nil {
			t.Errorf("%s, quoted decimal commas: %v", c.name, err)
			continue
		}
		s, err := c.read(fuzzFile(t, "s.csv", []byte(c.semi)))
		if err != nil {
			t.Fatalf("%s, ';' separators: %v", c.name, err)
		}
		if !slices.Equal(q, s) {
			t.Errorf("%s: quoted %v, ';'-separated %v", c.name, q, s)
		}
	}
}

// A quoted "1,234" is 1.234 with a decimal comma or 1234 with digit
// grouping, groups of three digits (SI Brochure, 9th ed., on writing
// numbers; from memory): a file whose numbers could all be either is
// refused, and so is one mixing decimal points and commas, each with one
// line naming the place; no reading is guessed.
func TestQuotedCommasRefused(t *testing.T) {
	for _, c := range []struct{ text, want string }{
		// Every quoted number reads both ways.
		{"\"1,500\",\"1,234\"\n\"1,750\",\"1,250\"\n\"2,000\",\"1,125\"\n", ":1: the quoted number \"1,500\" is a decimal comma or digit grouping"},
		// Decimal commas first, then a decimal point.
		{"\"1234,5\",\"0,5\"\n1233.5,0.25\n1232.5,0.125\n", ":2: axis cell: \"1233.5\" has a decimal point among numbers with decimal commas"},
		// Decimal points first, then a quoted comma: digit grouping, not read.
		{"1800.5,0.1\n\"1,799\",0.2\n1798,0.3\n", "the file writes decimal points (line 1 has \"1800.5\")"},
		// A quoted number with grouping and a point is not read.
		{"\"1,800.5\",0.1\n\"1,799.5\",0.2\n", ":1: axis cell: \"1,800.5\" is not a number; write the numbers without digit grouping"},
	} {
		_, err := ReadSpectrumFile(fuzzFile(t, "x.csv", []byte(c.text)))
		if err == nil || !strings.Contains(err.Error(), c.want) || strings.Contains(err.Error(), "\n") {
			t.Errorf("%q: error %v, want one line with %q", c.text, err, c.want)
		}
	}
	// A matrix file whose quoted numbers all read both ways, likewise.
	_, err := ReadMatrixCSV(fuzzFile(t, "m.csv", []byte("wavenumber,0,60\n\"1,500\",\"1,234\",\"2,345\"\n\"1,750\",\"1,250\",\"2,500\"\n")))
	if err == nil || !strings.Contains(err.Error(), "m.csv:2: the quoted number \"1,500\"") {
		t.Errorf("ambiguous matrix: %v", err)
	}
}

// commaMark tells digit grouping (groups of three digits after a first of
// one to three, no leading zero: SI Brochure, 9th ed.; from memory) from a
// decimal comma; a cell that is neither is no number.
func TestCommaMark(t *testing.T) {
	for _, c := range []struct {
		cell string
		want markKind
	}{
		{"1,234", markEither}, {"-12,345", markEither}, {"999,000", markEither},
		{"0,123", markComma}, {"1234,5", markComma}, {"1,23", markComma}, {"1,2345", markComma},
		{"6,498933e+002", markComma}, {"1,234e3", markComma}, {"-0,5", markComma},
		{"1,234,567", markGrouped}, {"1,234.5", markGrouped}, {"-12,345.25e3", markGrouped},
		{"01,234.5", markNone}, {"1,23.5", markNone}, {",5", markNone}, {"1,", markNone},
		{"run 7, cell B", markNone}, {"1,5e", markNone},
	} {
		if got := commaMark([]byte(c.cell)); got != c.want {
			t.Errorf("commaMark(%q) = %d, want %d", c.cell, got, c.want)
		}
	}
}

// An initial-profiles file (--init FILE) reads its numbers as the spectrum,
// matrix and times readers do: decimal commas with ';' or tab separators
// (common practice: European locale spreadsheet exports), and quoted in a
// comma-separated file (RFC 4180, §2 rules 5 and 6); each export gives the
// numbers of the one written with decimal points.
func TestProfilesDecimalCommas(t *testing.T) {
	read := func(text string) ([]float64, error) {
		p, err := ReadProfiles(fuzzFile(t, "p.csv", []byte(text)))
		if err != nil {
			return nil, err
		}
		return append(slices.Clone(p.Times), p.Values.RawMatrix().Data...), nil
	}
	want, err := read("time,A,B\n0,1,0\n12.5,0.875,0.125\n60,0.5,5e-1\n")
	if err != nil {
		t.Fatal(err)
	}
	for _, text := range []string{
		"time;A;B\n0;1;0\n12,5;0,875;0,125\n60;0,5;5e-1\n",
		"time\tA\tB\n0\t1\t0\n12,5\t0,875\t0,125\n60\t0,5\t5e-1\n",
		"\"time\",\"A\",\"B\"\n\"0\",\"1\",\"0\"\n\"12,5\",\"0,875\",\"0,125\"\n\"60\",\"0,5\",\"5e-1\"\n",
	} {
		got, err := read(text)
		if err != nil || !slices.Equal(got, want) {
			t.Errorf("%q: %v %v, want %v", text, got, err, want)
		}
	}
	// A bare decimal comma in a comma-separated file stays refused.
	if _, err := read("time,A,B\n0,1,0\n12,5,0.875,0.125\n"); err == nil || !strings.Contains(err.Error(), "p.csv:3: row has 4 cells") {
		t.Errorf("bare decimal comma: %v", err)
	}
}

// A file separated by ';', tabs or blanks writes one decimal mark, its
// locale's (common practice of spreadsheet and instrument exports): among
// decimal commas a cell "50.901" is most likely digit grouping (50 901;
// groups of three digits, SI Brochure, 9th ed., from memory), and read as
// 50.901 it became a value a thousand times too small and a blind point
// without a word. Such a cell is refused with its line and the cell that
// decided the file's mark, in matrix, spectrum and times files alike, and
// so is a decimal comma among decimal points.
func TestMixedDecimalMarksRefused(t *testing.T) {
	for _, c := range []struct {
		name, text, want string
		read             func(p string) error
	}{
		{"matrix", "wavenumber;0;60\n1900;50901,519;50871,188\n1898;50.901;50880,491\n",
			`m.csv:3: column 2 (time 0 s): "50.901" has a decimal point among numbers with decimal commas; the file writes decimal commas (line 2 has "50901,519"), so the point may be digit grouping ("50.901" for 50901)`,
			func(p string) error { _, err := ReadMatrixCSV(p); return err }},
		{"matrix, tabs", "wavenumber\t0\t60\n1900\t0,5\t0.25\n1899\t0,5\t0,5\n",
			`m.csv:2: column 3 (time 60 s): "0.25" has a decimal point among numbers with decimal commas; the file writes decimal commas (line 2 has "0,5"): write every number`,
			func(p string) error { _, err := ReadMatrixCSV(p); return err }},
		{"matrix, comma among points", "wavenumber;0;60\n1900.5;0.5;0.25\n1899;0,125;0.5\n",
			`m.csv:3: column 2 (time 0 s): "0,125" has a decimal comma among numbers with decimal points; the file writes decimal points (line 2 has "1900.5")`,
			func(p string) error { _, err := ReadMatrixCSV(p); return err }},
		{"spectrum", "wavenumber;intensity\n1900;50901,51901\n1898;50845,11289\n1896;50.901\n",
			`m.csv:4: value cell: "50.901" has a decimal point among numbers with decimal commas`,
			func(p string) error { _, err := ReadSpectrumFile(p); return err }},
		{"times", "file;time_s\na.csv;0,5\nb.csv;1.5\n",
			`m.csv:3: time of "b.csv": "1.5" has a decimal point among numbers with decimal commas`,
			func(p string) error { _, err := ReadTimes(p); return err }},
	} {
		err := c.read(fuzzFile(t, "m.csv", []byte(c.text)))
		if err == nil || !strings.Contains(err.Error(), c.want) || strings.Contains(err.Error(), "\n") {
			t.Errorf("%s: error %v, want one line with %q", c.name, err, c.want)
		}
	}
	// Integers beside either mark decide nothing.
	for _, text := range []string{"wavenumber;0;60\n1900;1;0,25\n1899;2;0,5\n", "wavenumber;0;60\n1900;1;0.25\n1899;2;0.5\n"} {
		if s, err := ReadMatrixCSV(fuzzFile(t, "m.csv", []byte(text))); err != nil || s.Values.At(1, 0) != 0.25 {
			t.Errorf("%q: %v", text, err)
		}
	}
}

// A data cell is a plain decimal number (ISO 6093's NR1–NR3 forms, from
// memory: sign, digits, one decimal mark, exponent). strconv.ParseFloat
// also reads Go's literals, hexadecimal and '_' between digits (The Go
// Programming Language Specification, "Floating-point literals"), which
// no instrument writes: the header time 1_20 was read as 120 s and a cell
// 0x1.8dp+15 as 50816. Every reader refuses them naming the cell.
func TestGoLiteralsRefused(t *testing.T) {
	matrix := func(p string) error { _, err := ReadMatrixCSV(p); return err }
	for _, c := range []struct {
		name, text, want string
		read             func(p string) error
	}{
		{"hexadecimal cell", "wavenumber,0,60\n1900,0.5,0.25\n1898,0x1.8dp+15,0.5\n", `x.csv:3: column 2 (time 0 s): "0x1.8dp+15" is not a number; write it as a plain decimal number`, matrix},
		{"digit separator", "wavenumber,0,60\n1900,0.5,50_901.5\n", `x.csv:2: column 3 (time 60 s): "50_901.5" is not a number`, matrix},
		{"header time", "wavenumber,0,1_20,120\n1900,0.5,0.25,0.1\n", `x.csv:1: column 3: "1_20" is not a number`, matrix},
		{"spectrum", "wavenumber,absorbance\n1900,0.5\n0x1.dap+10,0.25\n", `x.csv:3: axis cell: "0x1.dap+10" is not a number`,
			func(p string) error { _, err := ReadSpectrumFile(p); return err }},
		{"times", "file,time_s\na.csv,0\nb.csv,1_20\n", `x.csv:3: time of "b.csv": "1_20" is not a number`,
			func(p string) error { _, err := ReadTimes(p); return err }},
		{"profiles", "time_s,a\n0,0.5\n0x3cp0,1\n", `x.csv:3: time cell: "0x3cp0" is not a number`,
			func(p string) error { _, err := ReadProfiles(p); return err }},
		{"not finite, as before", "wavenumber,0,60\n1900,0.5,-Inf\n", `"-Inf" is not a finite number`, matrix},
	} {
		err := c.read(fuzzFile(t, "x.csv", []byte(c.text)))
		if err == nil || !strings.Contains(err.Error(), c.want) || strings.Contains(err.Error(), "\n") {
			t.Errorf("%s: error %v, want one line with %q", c.name, err, c.want)
		}
	}
}

// A matrix header's times out of ascending order are put in time order
// (every result is in time order) and a note says so, naming the first
// pair out of order or that they run downwards; a header whose axis name
// is none the readers know (neither wavenumber nor wavelength, common
// practice of IR exports) is kept as written, with a note that the
// water-vapour check reads it as cm⁻¹. Both had been done without a word.
func TestMatrixHeaderNotes(t *testing.T) {
	for _, c := range []struct{ text, want string }{
		{"wavenumber,0,60,30,90\n1900,1,2,3,4\n1898,1,2,3,4\n", "the header's times are not in ascending order (column 3 is 60 s, column 4 30 s)"},
		{"wavenumber,90,60,30,0\n1900,1,2,3,4\n1898,1,2,3,4\n", "the header's times run downwards, from 90 s to 0 s"},
		{"wavenumber,0,30,-30\n1900,1,2,3\n1898,1,2,3\n", "(column 3 is 30 s, column 4 -30 s)"},
		{"foo,0,30\n1900,1,2\n1898,1,2\n", `the axis header "foo" names no known axis`},
		{"wavenumber,0,30,60\n1900,1,2,3\n1898,1,2,3\n", ""},
	} {
		s, err := ReadMatrixCSV(fuzzFile(t, "m.csv", []byte(c.text)))
		if err != nil {
			t.Fatalf("%q: %v", c.text, err)
		}
		notes := strings.Join(s.Notes, " | ")
		if c.want == "" && notes != "" || !strings.Contains(notes, c.want) {
			t.Errorf("%q: notes %q, want %q", c.text, notes, c.want)
		}
		if !slices.IsSorted(s.Times) {
			t.Errorf("%q: times %v not put in order", c.text, s.Times)
		}
	}
}
