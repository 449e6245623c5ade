package spectra

import (
	"errors"
	"math"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Line numbers in messages are the editor's: blank and '#' lines count.
func TestReadTimesLineNumbers(t *testing.T) {
	for _, c := range []struct {
		text string
		want string
	}{
		{"file,time_s\n\n# note\na.csv,0\nb.csv,x\n", ":5: time of \"b.csv\": \"x\" is not a number"},
		{"\xef\xbb\xbffile;time_s\r\na.csv;0\r\nb.csv;0\r\n", `:3: "b.csv" has the same time 0 s as "a.csv"`},
		{"file,time_s\na.csv,0\na.csv,1\n", `:3: file "a.csv" is listed twice`},
		{"time_s,name\n0,a.csv\n", `:1: header has no column "file"`},
		{"file,time_s\n", ":1: times table has no rows"},
		{"file,time_s\na.csv\n", ":2: row has 1 cell(s), the header has 2"},
		{"file,time_s\na.csv,1,5\n", `:2: row "a.csv,1,5" has 3 cells`},         // never read as 1 s (TestTimesRowNotTruncated)
		{"file;time_s\na.csv;1,5\n", ""},                                        // ';' separators: decimal comma read (TestReadTimesDecimalComma)
		{"file,time_s\n\"a.csv\",\"1,5\"\n", ""},                                // a quoted decimal comma (TestQuotedDecimalCommas)
		{"file,time_s\n\"a.csv\",\"1,500\"\n", "separate the columns with ';'"}, // 1.5 or 1500: ambiguous
	} {
		_, err := ReadTimes(fuzzFile(t, "times.csv", []byte(c.text)))
		switch {
		case c.want == "" && err != nil:
			t.Errorf("%q: %v", c.text, err)
		case c.want != "" && (err == nil || !strings.Contains(err.Error(), c.want)):
			t.Errorf("%q: error %v, want %q", c.text, err, c.want)
		}
	}
	tab, err := ReadTimes(fuzzFile(t, "t.csv", []byte("time_s,file\n60,\"b, second.csv\"\n0,a.csv\n")))
	if err != nil || tab["b, second.csv"] != 60 || tab["a.csv"] != 0 {
		t.Errorf("columns in either order, quoted names: %v %v", tab, err)
	}
}

func TestFieldsQuotes(t *testing.T) {
	for _, c := range []struct {
		line string
		sep  byte
		want []string
	}{
		{`"run 7, cell B",2`, ',', []string{"run 7, cell B", "2"}},
		{`1, 2 ,3,`, ',', []string{"1", "2", "3"}},
		{"\"a\"\t\"b\"", '\t', []string{"a", "b"}},
		{"\t1\t2", '\t', []string{"", "1", "2"}},
		{`"unclosed,1`, ',', []string{"unclosed", "1"}},
		{`  1   2  `, ' ', []string{"1", "2"}},
	} {
		got := fields([]byte(c.line), c.sep, nil)
		var s []string
		for _, f := range got {
			s = append(s, string(f))
		}
		if strings.Join(s, "|") != strings.Join(c.want, "|") {
			t.Errorf("fields(%q) = %q, want %q", c.line, s, c.want)
		}
	}
}

func TestParseNumberBounds(t *testing.T) {
	for _, c := range []struct {
		cell string
		ok   bool
	}{
		{"1e100", true}, {"-1e100", true}, {"1.0000001e100", false}, {"1e400", false},
		{"NaN", false}, {"inf", false}, {"-Infinity", false}, {"1,5", false}, {"", false},
	} {
		_, err := parseNumber([]byte(c.cell))
		if (err == nil) != c.ok {
			t.Errorf("parseNumber(%q): %v, want ok=%v", c.cell, err, c.ok)
		}
	}
}

// Saturation: by A = −log10(I/I₀), a beam at 1 % of I₀ has A = 2; below
// that fraction of the median the channel is flagged, above it is not.
func TestSaturationWarnings(t *testing.T) {
	s := series(
		[]float64{1000, 1000, 9, 8, 1000, 11, 1000},
		[]float64{1000, 1000, 9.5, 8, 1000, 11, 1000},
	)
	ref := append([]float64(nil), s.Values.RawRowView(0)...)
	w := saturationWarnings(s, ref, nil)
	if len(w) != 1 {
		t.Fatalf("warnings %q; want one region", w)
	}
	// series() puts the axis at 2000, 1999, …: channels 2–3 are 1998–1997.
	if !strings.Contains(w[0], "wavenumber 1998–1997 (2 point(s))") || !strings.Contains(w[0], "--exclude 1998:1997") {
		t.Errorf("warning %q", w[0])
	}
	// A weak blank flags its channels too.
	blank := []float64{1000, 1000, 1000, 1000, 1000, 1000, 5}
	w = saturationWarnings(series([]float64{1000, 1000, 1000, 1000, 1000, 1000, 1000}), []float64{1000, 1000, 1000, 1000, 1000, 1000, 1000}, blank)
	if len(w) != 1 || !strings.Contains(w[0], "1994–1994") {
		t.Errorf("blank: %q", w)
	}
	if m := median([]float64{3, 1, 2, 10}); m != 2.5 {
		t.Errorf("median %g, want 2.5", m)
	}
}

func TestReadProfiles(t *testing.T) {
	p, err := ReadProfiles(fuzzFile(t, "p.csv", []byte("time,A,B\n0,1,0\n10,0.5,0.5\n")))
	if err != nil {
		t.Fatal(err)
	}
	if strings.Join(p.Names, ",") != "A,B" || p.Times[1] != 10 || p.Values.At(1, 1) != 0.5 {
		t.Errorf("read %+v", p)
	}
	for text, want := range map[string]string{
		"time,A\n0,1\n0,2\n": ":3: time 0 s repeats line 2",
		"time,A\n0,x\n":      `:2: column 2 ("A"): "x" is not a number`,
		"time,A,B\n0,1\n":    ":2: row has 2 cells, header has 3",
		"0,1\n":              ":1: first row is numbers",
		"time,A\n0,1e999\n":  "too large",
		"\n\n":               "is empty",
	} {
		_, err := ReadProfiles(fuzzFile(t, "p.csv", []byte(text)))
		var ie *InputError
		if err == nil || !strings.Contains(err.Error(), want) || !errors.As(err, &ie) {
			t.Errorf("%q: %v, want %q", text, err, want)
		}
	}
}

// A title with digits that names no axis is not taken for the axis name;
// "Wavenumber (cm-1)" is.
func TestSpectrumTitles(t *testing.T) {
	for text, want := range map[string]string{
		"Run 7\nWavenumber (cm-1),Intensity\n1000,1\n1002,2\n": "wavenumber",
		"Run 7\n1000,1\n1002,2\n":                              "wavelength", // 1000–1002 guessed as nm
		"\"Sample 3, 25 C\"\n4000;1\n3998;2\n":                 "wavenumber",
	} {
		sp, err := ReadSpectrumFile(fuzzFile(t, "s.csv", []byte(text)))
		if err != nil || sp.AxisName != want {
			t.Errorf("%q: axis %q (%v), want %q", text, sp.AxisName, err, want)
		}
		if err == nil && math.IsNaN(sp.Values[0]) {
			t.Errorf("%q: NaN value", text)
		}
	}
}

// Title lines before a matrix header are skipped whatever blanks they hold
// (docs/errors.md: single-cell title lines before a matrix header are
// accepted; exports put a run's name first, common practice): a title is
// split at the separator the header and rows use, at which it has one cell.
// "Urethane run catalyst 1.00" was split at its blanks and read as the
// header (":2: column 2: "run" is not a number"). A comment line and a
// quoted title before it go as well; the header and rows are read as
// without them.
func TestMatrixTitleWithBlanks(t *testing.T) {
	body := "wavenumber,0,21\n4000,0.1,0.2\n3998,0.3,0.4\n"
	want, err := ReadMatrixCSV(fuzzFile(t, "plain.csv", []byte(body)))
	if err != nil {
		t.Fatal(err)
	}
	for _, head := range []string{
		"Urethane run catalyst 1.00\n",
		"# exported by lab PC\nUrethane run catalyst 1.00\n",
		"\"Run 7; 25 C\"\nUrethane run\n",
	} {
		s, err := ReadMatrixCSV(fuzzFile(t, "m.csv", []byte(head+body)))
		if err != nil {
			t.Errorf("%q: %v", head, err)
			continue
		}
		if !slices.Equal(s.Times, want.Times) || !slices.Equal(s.Axis, want.Axis) || !mat.Equal(s.Values, want.Values) || s.AxisName != want.AxisName {
			t.Errorf("%q: axis %q %v, times %v; want %q %v, %v", head, s.AxisName, s.Axis, s.Times, want.AxisName, want.Axis, want.Times)
		}
	}
}
