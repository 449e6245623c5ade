package report

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// TestCellIsParseFloat: a cell reads as strconv.ParseFloat reads its
// trimmed text (the reference: Go's standard library, correctly rounded),
// bit for bit, and as NaN when that fails or gives an infinity, whether or
// not decimal.Parse's shortcut takes the text.
func TestCellIsParseFloat(t *testing.T) {
	want := func(s string) float64 {
		v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
		if err != nil || math.IsInf(v, 0) {
			return math.NaN()
		}
		return v
	}
	texts := []string{"", " ", "0", "-0", "+5", "5.", ".5", ".", "-", "1e5", "1E+05", "1e-5", "1e", "1e400", "-1e400",
		"1e-400", "inf", "-Inf", "nan", "NaN", "0x1p-2", "1_000", " 1.5 ", "\t-2.25\n", "1.5x", "x", "123456789012345",
		"1234567890123456789", "9007199254740993", "0.1", "4.35", "1e22", "1e23", "1e-22", "1e-23", "2.2250738585072014e-308",
		"1.7976931348623157e308", "1.7976931348623159e308", "species_1"}
	rng := rand.New(rand.NewPCG(1, 2))
	for i := 0; i < 20000; i++ {
		v := math.Float64frombits(rng.Uint64())
		texts = append(texts, strconv.FormatFloat(v, 'g', 1+rng.IntN(17), 64), strconv.FormatFloat(rng.NormFloat64()*math.Pow(10, float64(rng.IntN(40)-20)), 'g', 10, 64))
	}
	for _, s := range texts {
		got, w := cell([]string{s}, 0), want(s)
		if math.Float64bits(got) != math.Float64bits(w) && !(math.IsNaN(got) && math.IsNaN(w)) {
			t.Errorf("cell(%q) = %v (%#x), strconv gives %v (%#x)", s, got, math.Float64bits(got), w, math.Float64bits(w))
		}
	}
	if !math.IsNaN(cell([]string{"1"}, 1)) || !math.IsNaN(cell([]string{"1"}, -1)) {
		t.Error("a cell beyond the row must read as NaN")
	}
}

// TestLongEnvelopeFirstExperiment: the envelope of one component and side
// is read from the first experiment's rows only (the one the first such
// row names, an empty cell being one too), with the pointwise lower and
// upper of the two bound columns (uniqueness.csv as docs/constraints.md
// describes it; at_min and at_max may cross).
func TestLongEnvelopeFirstExperiment(t *testing.T) {
	text := "component,side,experiment,position,solution,at_min,at_max\n" +
		"a,spectrum,2,10,0,1,3\n" +
		"b,spectrum,1,10,0,9,9\n" +
		"a,profile,2,10,0,9,9\n" +
		"a,spectrum,1,11,0,7,7\n" +
		"a,spectrum,2,11,0,5,4\n" +
		"a,spectrum,2,12,0,6,8\n"
	tab, err := ParseTable("uniqueness.csv", []byte(text))
	if err != nil {
		t.Fatal(err)
	}
	x, lo, hi := longEnvelope(tab, "a", "spectrum", "at_min", "at_max")
	if !slices.Equal(x, []float64{10, 11, 12}) || !slices.Equal(lo, []float64{1, 4, 6}) || !slices.Equal(hi, []float64{3, 5, 8}) {
		t.Errorf("got x %v lo %v hi %v, want x [10 11 12] lo [1 4 6] hi [3 5 8]", x, lo, hi)
	}
	empty := strings.ReplaceAll(text, ",2,", ",,")
	tab, _ = ParseTable("uniqueness.csv", []byte(empty))
	if x, _, _ := longEnvelope(tab, "a", "spectrum", "at_min", "at_max"); !slices.Equal(x, []float64{10, 11, 12}) {
		t.Errorf("empty experiment cells: got x %v, want [10 11 12]", x)
	}
	if x, _, _ := longEnvelope(tab, "b", "spectrum", "at_min", "at_max"); x != nil {
		t.Errorf("one row is no envelope: got %v", x)
	}
}

// LoadParsed takes a table parsed ahead only for the very bytes it was
// parsed from: the folder is the one Load reads (the reference), the
// table given is taken for a file with those bytes, and one given for
// other bytes is not.
func TestLoadParsedTakesOnlyTheSameBytes(t *testing.T) {
	dir := t.TempDir()
	spectra := []byte("wavenumber,a\n1000,0.5\n1002,0.25\n")
	profiles := []byte("time,a\n0,1\n60,0.5\n")
	for name, b := range map[string][]byte{"summary.json": []byte(`{"tool": "bandsolve", "component_names": ["a"]}`),
		"spectra.csv": spectra, "profiles.csv": profiles} {
		if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	same, _ := ParseTable("spectra.csv", bytes.Clone(spectra))
	stale, _ := ParseTable("profiles.csv", []byte("time,a\n0,1\n60,0.75\n"))
	parsed := map[string]Parsed{"spectra.csv": {Bytes: bytes.Clone(spectra), Table: same},
		"profiles.csv": {Bytes: []byte("time,a\n0,1\n60,0.75\n"), Table: stale}}
	got, err := LoadParsed(dir, nil, nil, parsed)
	if err != nil {
		t.Fatal(err)
	}
	want, err := Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got, want) {
		t.Error("LoadParsed's folder differs from Load's")
	}
	if got.Spectra != same {
		t.Error("the table parsed from spectra.csv's bytes was not taken")
	}
	if got.Profiles == stale {
		t.Error("a table parsed from other bytes than profiles.csv's was taken")
	}
}

// envelopeOf on the rows longRows indexes gives, for every component and
// side, what a plain scan of the whole table gives (the definition: the
// rows of that component and side in order, first experiment only),
// on random long tables with several components, sides and experiments,
// empty experiment cells and rows cut short.
func TestLongRowsAsAScan(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 32))
	scan := func(tab *Table, comp, side string) (x, lo, hi []float64) {
		cj, sj, ej, pj := tab.Index("component"), tab.Index("side"), tab.Index("experiment"), tab.Index("position")
		lj, hj := tab.Index("at_min"), tab.Index("at_max")
		first, seen := "", false
		for _, r := range tab.Text {
			if len(r) <= max(cj, sj, ej, pj, lj, hj) || r[cj] != comp || r[sj] != side {
				continue
			}
			if !seen {
				first, seen = r[ej], true
			}
			if r[ej] != first {
				continue
			}
			l, h := cell(r, lj), cell(r, hj)
			x, lo, hi = append(x, cell(r, pj)), append(lo, math.Min(l, h)), append(hi, math.Max(l, h))
		}
		if len(x) < 2 {
			return nil, nil, nil
		}
		return x, lo, hi
	}
	for trial := range 50 {
		text := "component,side,experiment,position,start,at_min,at_max\n"
		for range rng.IntN(400) {
			row := fmt.Sprintf("%c,%s,%s,%d,0,%d,%d", 'a'+rng.IntN(3), []string{"spectrum", "profile"}[rng.IntN(2)],
				[]string{"", "1", "2"}[rng.IntN(3)], rng.IntN(100), rng.IntN(50), rng.IntN(50))
			if rng.IntN(20) == 0 {
				row = row[:rng.IntN(len(row))]
			}
			text += row + "\n"
		}
		tab, err := ParseTable("uniqueness.csv", []byte(text))
		if err != nil {
			continue // a row cut so short the table does not parse
		}
		for _, comp := range []string{"a", "b", "c", "d"} {
			for _, side := range []string{"spectrum", "profile"} {
				x, lo, hi := longEnvelope(tab, comp, side, "at_min", "at_max")
				wx, wlo, whi := scan(tab, comp, side)
				same := func(a, b []float64) bool {
					return slices.EqualFunc(a, b, func(u, v float64) bool { return math.Float64bits(u) == math.Float64bits(v) })
				}
				if !same(x, wx) || !same(lo, wlo) || !same(hi, whi) {
					t.Fatalf("trial %d, %s %s: got %v %v %v, the scan %v %v %v", trial, comp, side, x, lo, hi, wx, wlo, whi)
				}
			}
		}
	}
}

// longEnvelope is envelopeOf of one component and side of t, their rows
// found by longRows, as the figures find them.
func longEnvelope(t *Table, comp, side, loName, hiName string) (x, lo, hi []float64) {
	return envelopeOf(t, longRows(t)[[2]string{comp, side}], loName, hiName)
}
