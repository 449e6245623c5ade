package jcamp

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// spectrum wraps data lines in a minimal block with FIRSTX=0 and DELTAX=1,
// so that a line's abscissa is the index of its first ordinate. The
// ##XYDATA= line is line 8 plus the number of extra header lines.
func spectrum(extra, data string) string {
	return "##TITLE=t\n##JCAMP-DX=5.01\n##DATA TYPE=INFRARED SPECTRUM\n##XUNITS=1/CM\n##YUNITS=ABSORBANCE\n" +
		"##FIRSTX=0\n##DELTAX=1\n" + extra + "##XYDATA=(X++(Y..Y))\n" + data + "##END=\n"
}

// TestDecodeForms checks the ordinate forms against hand decoding with the
// pseudo-digit table of JCAMP-DX 4.24 (SQZ @A-I a-i, DIF %J-R j-r, DUP S-Z s;
// table from memory, matching jcampconverter 12.5.3 on the stored fixtures).
func TestDecodeForms(t *testing.T) {
	for _, c := range []struct {
		name, data string
		want       []float64
	}{
		{"AFFN", "0 1 2.5 -3\n3 4,5;6\n", []float64{1, 2.5, -3, 4, 5, 6}},
		{"AFFN exponent needs a sign", "0 1.5E-03 2e+00 3E+1\n", []float64{0.0015, 2, 30}},
		{"PAC", "0+12-3+4 5\n", []float64{12, -3, 4, 5}},
		{"SQZ", "0@A0B0C0\n", []float64{0, 10, 20, 30}},
		{"SQZ negative", "0a0b5i\n", []float64{-10, -25, -9}},
		{"SQZ after X without blank", "0E5\n", []float64{55}},
		{"SQZ decimal", "0A.5b.25\n", []float64{1.5, -2.25}},
		{"DIF", "0C0KL\n", []float64{30, 32, 35}},
		{"DIF negative and zero", "0C0j%r\n", []float64{30, 29, 29, 20}},
		{"DUP of a value", "0AV\n", []float64{1, 1, 1, 1}},
		{"DUP of a difference", "0A0JU\n", []float64{10, 11, 12, 13}},
		{"DUP two digits", "0@S0\n", make([]float64, 10)},
		{"DUP s is nine", "0Bs\n", []float64{2, 2, 2, 2, 2, 2, 2, 2, 2}},
		// In DIF form the next line repeats the last Y as a check, which
		// is dropped; the line abscissa is that of the repeated point.
		{"Y check", "0A0JJ\n2A2JJ\n", []float64{10, 11, 12, 13, 14}},
		{"Y check on a last line of its own", "0A0JJ\n2A2\n", []float64{10, 11, 12}},
		{"Y check after DUP of DIF", "0A0JU\n3A3K\n", []float64{10, 11, 12, 13, 15}},
		{"Y check then DUP of it", "0A0J\n1A1T\n", []float64{10, 11, 11}},
		{"no Y check after a SQZ ending", "0A0JB0\n3A2\n", []float64{10, 11, 20, 12}},
		{"DIF continues across lines without check", "0A0\n1J\n", []float64{10, 11}},
		{"comment inside data", "0A0J $$ rise\n2A1\n", []float64{10, 11}},
		{"X only line ignored", "0 1\n1\n1 2\n", []float64{1, 2}},
		{"delimiters only line ignored", "0 1\n, ;\n1 2\n", []float64{1, 2}},
	} {
		t.Run(c.name, func(t *testing.T) {
			blocks, err := Parse(strings.NewReader(spectrum("", c.data)), "t.jdx")
			if err != nil {
				t.Fatal(err)
			}
			got := blocks[0].Y
			if fmt.Sprint(got) != fmt.Sprint(c.want) {
				t.Errorf("got %v, want %v", got, c.want)
			}
			for i, x := range blocks[0].X {
				if x != float64(i) {
					t.Fatalf("X = %v, want 0, 1, 2, ...", blocks[0].X)
				}
			}
		})
	}
}

// TestErrors checks that damaged files are reported at the right line, with
// the "name:line: what is wrong; what to do" form.
func TestErrors(t *testing.T) {
	long := strings.Repeat("1 ", MaxLineLength)
	for _, c := range []struct {
		name, src string
		line      int
		want      string
	}{
		{"Y check disagrees", spectrum("", "0A0JJ\n2A3JJ\n"), 10, "Y check failed"},
		{"difference where the Y check belongs", spectrum("", "0A0J\n1J\n"), 10, "Y check value"},
		{"truncated", spectrum("##NPOINTS=10\n", "0 1 2 3 4 5\n"), 11, "NPOINTS=10 but 5 ordinates"},
		{"line missing", "##TITLE=t\n##FIRSTX=0\n##LASTX=11\n##NPOINTS=12\n##XYDATA=(X++(Y..Y))\n0 1 2 3 4\n8 9 10 11 12\n##END=\n", 7, "X check failed"},
		{"too many points", spectrum("##NPOINTS=2\n", "0 1 2 3\n"), 10, "more points than NPOINTS=2"},
		{"DELTAX disagrees", "##TITLE=t\n##FIRSTX=0\n##LASTX=3\n##NPOINTS=4\n##DELTAX=2\n##XYDATA=(X++(Y..Y))\n0 1 2 3 4\n##END=\n", 6, "DELTAX=2 disagrees"},
		{"FIRSTY disagrees", spectrum("##YFACTOR=1\n##FIRSTY=100\n", "0 1 2\n"), 10, "FIRSTY=100"},
		{"YFACTOR twice", spectrum("##YFACTOR=1\n##Y_FACTOR=2\n", "0 1 2\n"), 9, "given twice"},
		{"YFACTOR zero", spectrum("##YFACTOR=0\n", "0 1 2\n"), 9, "YFACTOR=0"},
		{"bad factor", spectrum("##YFACTOR=abc\n", "0 1 2\n"), 8, "not a number"},
		{"no FIRSTX", "##TITLE=t\n##LASTX=1\n##XYDATA=(X++(Y..Y))\n0 1 2\n##END=\n", 3, "without ##FIRSTX="},
		{"no LASTX nor DELTAX", "##TITLE=t\n##FIRSTX=1\n##XYDATA=(X++(Y..Y))\n0 1 2\n##END=\n", 3, "without ##LASTX="},
		{"no END", strings.TrimSuffix(spectrum("", "0 1 2\n"), "##END=\n"), 9, "has no ##END="},
		{"missing value", spectrum("", "0 1 ? 3\n"), 9, "missing value"},
		{"bad character", spectrum("", "0 1 ~ 3\n"), 9, "unexpected character"},
		{"DIF first", spectrum("", "0J1\n"), 9, "DIF"},
		{"DUP first", spectrum("", "0S\n"), 9, "DUP"},
		{"data line without X", spectrum("", "A0B0\n"), 9, "does not start with its X"},
		{"huge NPOINTS", spectrum("##NPOINTS=99999999999\n", "0 1\n"), 9, "exceeds the limit"},
		{"huge DUP", spectrum("", "0As99999999999999\n"), 9, "repeat count"},
		{"DUP beyond NPOINTS", spectrum("##NPOINTS=5\n", "0AZ\n"), 10, "more points than NPOINTS=5"},
		{"long line", spectrum("", "0 "+long+"\n"), 9, "longer than"},
		{"overflow", spectrum("##YFACTOR=1E+300\n", "0 1E+300\n"), 9, "overflows"},
		{"text before TITLE", "hello\n" + spectrum("", "0 1\n"), 1, "text outside a block"},
		{"label before TITLE", "##JCAMP-DX=5.01\n" + spectrum("", "0 1\n"), 1, "before any ##TITLE="},
		{"label without =", spectrum("##NPOINTS\n", "0 1\n"), 8, "has no '='"},
		{"variable list", "##TITLE=t\n##XYDATA=(X++(R..R))\n##END=\n", 2, "variable list not supported"},
		{"nested TITLE", "##TITLE=a\n##TITLE=b\n", 2, "not a LINK block"},
		{"LINK count", "##TITLE=l\n##DATA TYPE=LINK\n##BLOCKS=2\n" + spectrum("", "0 1\n") + "##END=\n", 14, "##BLOCKS=2 but holds 1"},
		{"XYPOINTS odd", "##TITLE=t\n##XYPOINTS=(XY..XY)\n1,2; 3\n##END=\n", 3, "not whole X,Y pairs"},
		{"XYPOINTS LASTX", "##TITLE=t\n##LASTX=9\n##XYPOINTS=(XY..XY)\n1,2; 3,4\n##END=\n", 3, "LASTX=9"},
		{"NTUPLES only", "##TITLE=t\n##NTUPLES=NMR SPECTRUM\n##VAR_NAME=A, B\n##PAGE=N=1\n##DATA TABLE=(X++(R..R)), XYDATA\n1 2 3\n##END NTUPLES=NMR SPECTRUM\n##END=\n", 2, "NTUPLES"},
		{"nothing", "##TITLE=t\n##END=\n", 0, "no ##XYDATA"},
		{"empty", "", 0, "empty input"},
		{"UTF-16", "\xff\xfe#\x00#\x00", 1, "UTF-16"},
	} {
		t.Run(c.name, func(t *testing.T) {
			_, err := Parse(strings.NewReader(c.src), "bad.jdx")
			if err == nil {
				t.Fatal("no error")
			}
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("%v is not a *ParseError", err)
			}
			prefix := fmt.Sprintf("bad.jdx:%d: ", c.line)
			if c.line == 0 {
				prefix = "bad.jdx: "
			}
			msg := err.Error()
			if !strings.HasPrefix(msg, prefix) || !strings.Contains(msg, c.want) || !strings.Contains(msg, "; ") {
				t.Errorf("got %q, want prefix %q containing %q and a '; what to do'", msg, prefix, c.want)
			}
		})
	}
}

func TestTokenResolution(t *testing.T) {
	// One unit in the last printed digit.
	for _, c := range []struct {
		s    string
		want float64
	}{{"4000", 1}, {"3992.3", 0.1}, {"1.25E-03", 1e-5}, {"A12", 1}, {"-7.725", 0.001}} {
		toks, err := tokenize(c.s, nil)
		if err != nil || len(toks) != 1 {
			t.Fatalf("%q: %v %v", c.s, toks, err)
		}
		if r := toks[0].resolution(); r < c.want*(1-1e-12) || r > c.want*(1+1e-12) {
			t.Errorf("%q: resolution %v, want %v", c.s, r, c.want)
		}
	}
}

// TestDamagedFixtures damages the cross-checked fixtures the way files get
// damaged (a lost line, a wrong factor, truncation) and expects each check
// to name the line.
func TestDamagedFixtures(t *testing.T) {
	read := func(name string) []string {
		data, err := os.ReadFile(filepath.Join(fixtures, name))
		if err != nil {
			t.Fatal(err)
		}
		return strings.Split(string(data), "\n")
	}
	find := func(lines []string, prefix string) int {
		for i, l := range lines {
			if strings.HasPrefix(l, prefix) {
				return i
			}
		}
		t.Fatalf("no line starting %q", prefix)
		return -1
	}
	dropLine := func(lines []string, i int) string {
		return strings.Join(append(append([]string{}, lines[:i]...), lines[i+1:]...), "\n")
	}
	dif := read("ir_dif.jdx")
	d0 := find(dif, "##XYDATA=")
	affn := read("ir_affn.jdx")
	a0 := find(affn, "##XYDATA=")
	yf := find(affn, "##YFACTOR=")
	wrongFactor := append([]string{}, affn...)
	wrongFactor[yf] = "##YFACTOR=0.0001"
	difdup := read("ir_difdup.jdx")
	for _, c := range []struct {
		name, src string
		line      int // 1-based
		want      string
	}{
		// The fourth data line is dropped; the line that takes its place
		// (1-based line d0+5) fails its check.
		{"DIF line lost", dropLine(dif, d0+4), d0 + 5, "Y check failed"},
		{"AFFN line lost", dropLine(affn, a0+5), a0 + 6, "X check failed"},
		{"wrong YFACTOR", strings.Join(wrongFactor, "\n"), a0 + 1, "FIRSTY="},
		{"truncated", strings.Join(difdup[:len(difdup)/2], "\n"), len(difdup) / 2, "has no ##END="},
	} {
		t.Run(c.name, func(t *testing.T) {
			_, err := Parse(strings.NewReader(c.src), "damaged.jdx")
			want := fmt.Sprintf("damaged.jdx:%d: ", c.line)
			if err == nil || !strings.HasPrefix(err.Error(), want) || !strings.Contains(err.Error(), c.want) {
				t.Errorf("got %v, want %q…%q", err, want, c.want)
			}
		})
	}
}

func TestLabelNumber(t *testing.T) {
	// Numeric label values are single decimal numbers; the resolution is one
	// unit in the last printed digit.
	for _, c := range []struct {
		s       string
		v, res  float64
		isValid bool
	}{
		{"1E1", 10, 10, true},
		{" -7.5 ", -7.5, 0.1, true},
		{"1.0E-03", 1e-3, 1e-4, true},
		{"+4000", 4000, 1, true},
		{".5", 0.5, 0.1, true},
		{"0x1p3", 0, 0, false},
		{"NaN", 0, 0, false},
		{"1e999", 0, 0, false},
		{"", 0, 0, false},
		{"1 2", 0, 0, false},
		{"1E", 0, 0, false},
	} {
		v, res, ok := labelNumber(c.s)
		if ok != c.isValid || (ok && (v != c.v || math.Abs(res-c.res) > 1e-12*c.res)) {
			t.Errorf("labelNumber(%q) = %v, %v, %v; want %v, %v, %v", c.s, v, res, ok, c.v, c.res, c.isValid)
		}
	}
}
