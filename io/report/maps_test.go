package report

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"testing"
)

// parseNumber must give strconv.ParseFloat's value (the Go standard
// library, correctly rounded per IEEE 754) bit for bit, and its error when
// there is one, for the text strconv.AppendFloat writes: random doubles
// over every exponent and short decimals, at the 6 and 10 significant
// digits maps.csv uses and at the shortest digits, and texts that are not
// numbers.
func TestParseNumberAsParseFloat(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	var texts []string
	for range 200000 {
		var v float64
		switch rng.IntN(3) {
		case 0:
			v = math.Float64frombits(rng.Uint64())
		case 1:
			v = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(60)-30))
		default:
			v = float64(rng.IntN(2000001)-1000000) / math.Pow(10, float64(rng.IntN(12)))
		}
		for _, digits := range []int{6, 10, -1} {
			texts = append(texts, string(strconv.AppendFloat(nil, v, 'g', digits, 64)))
		}
	}
	texts = append(texts, "0", "-0", "1e22", "1e23", "9.99999e-23", "123456789012345", "1234567890123456",
		"0.000001", "1e-400", "1e400", "", "-", ".", "1e", "1e+", "abc", "1.2.3", "NaN", "+Inf", "-Inf", "1x", "0x10", "1_0")
	for _, s := range texts {
		want, werr := strconv.ParseFloat(s, 64)
		got, gerr := parseNumber([]byte(s))
		if (werr == nil) != (gerr == nil) || math.Float64bits(got) != math.Float64bits(want) && !(math.IsNaN(got) && math.IsNaN(want)) {
			t.Fatalf("parseNumber(%q) = %v, %v; strconv.ParseFloat gives %v, %v", s, got, gerr, want, werr)
		}
	}
}

// FormatMaps' Maps is what Load reads back from its bytes (readMaps, the
// report's own reader of the file): the same axis, experiments, times and
// values, NaN where a value is missing; and no Maps where Load would not
// take the file (an axis value or a time that is not a number, no axis).
func TestFormatMapsAsReadBack(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	axis := make([]float64, 1001)
	for j := range axis {
		axis[j] = 4000 - 2.5*float64(j) + 1e-7*rng.Float64()
	}
	times := make([]float64, 523)
	exp := make([]int, len(times))
	for i := range times {
		times[i], exp[i] = 7.3*float64(i)+rng.Float64(), i/200
	}
	// FormatMaps calls At from several goroutines at once: the values are
	// drawn beforehand, so that At only reads.
	val := func(scale float64) func(i, j int) float64 {
		v := make([]float64, len(times)*len(axis))
		for i := range times {
			for j := range axis {
				switch (i*31 + j) % 97 {
				case 0:
					v[i*len(axis)+j] = math.NaN()
				case 1:
					v[i*len(axis)+j] = math.Inf(1)
				case 2:
				default:
					v[i*len(axis)+j] = scale * rng.NormFloat64()
				}
			}
		}
		return func(i, j int) float64 { return v[i*len(axis)+j] }
	}
	mats := []MapMatrix{{Name: "data", At: val(1)}, {Name: "difference", At: val(1e-3)}, {Name: "residual", At: val(1e-9)}}
	dir := t.TempDir()
	read := func(b []byte) *Maps {
		path := filepath.Join(dir, MapsFile)
		if err := os.WriteFile(path, b, 0o644); err != nil {
			t.Fatal(err)
		}
		m, err := readMaps(path)
		if err != nil {
			return nil
		}
		return m
	}
	b, m := FormatMaps(axis, times, exp, mats)
	want := read(b)
	if want == nil || m == nil {
		t.Fatalf("maps not formed (%v) or not read back (%v)", m != nil, want != nil)
	}
	if !reflect.DeepEqual(nanAs(m), nanAs(want)) {
		t.Errorf("FormatMaps' Maps differs from the file read back")
	}
	for name, c := range map[string][3][]float64{
		"a time that is not a number": {axis, append([]float64{math.NaN()}, times[1:]...)},
		"an axis value not a number":  {append([]float64{math.Inf(-1)}, axis[1:]...), times},
		"no axis":                     {nil, times},
	} {
		b, m := FormatMaps(c[0], c[1], exp, mats)
		if m != nil {
			t.Errorf("%s: Maps formed", name)
		}
		if read(b) != nil {
			t.Errorf("%s: the file is read back, so Load would take it", name)
		}
	}
}

// nanAs replaces NaN by a sentinel so that DeepEqual compares them.
func nanAs(m *Maps) *Maps {
	out := &Maps{Axis: m.Axis, Matrices: map[string]*Matrix{}}
	for name, mx := range m.Matrices {
		c := &Matrix{Experiment: mx.Experiment, Times: mx.Times}
		for _, r := range mx.Rows {
			row := make([]float64, len(r))
			for j, v := range r {
				row[j] = v
				if math.IsNaN(v) {
					row[j] = -12345.6789
				}
			}
			c.Rows = append(c.Rows, row)
		}
		out.Matrices[name] = c
	}
	return out
}

// LoadStaged with each file's bytes handed over (as a run's stage gives
// them) is Load of the folder: the same Folder, field for field; and it
// does take the handed-over bytes (every table, the summary and the
// record), so the comparison is not of Load with itself.
func TestLoadStagedAsLoad(t *testing.T) {
	dir := fixture(t, true)
	want, err := Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	asked := map[string]bool{}
	staged := func(name string) ([]byte, bool) {
		b, err := os.ReadFile(filepath.Join(dir, name))
		asked[name] = err == nil
		return b, err == nil
	}
	got, err := LoadStaged(dir, nil, staged)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("LoadStaged's Folder differs from Load's")
	}
	for _, name := range []string{"summary.json", "spectra.csv", "profiles.csv"} {
		if !asked[name] {
			t.Errorf("%s was not taken from the staged bytes", name)
		}
	}
	if !asked["uniqueness.csv"] && !asked["bands.csv"] {
		t.Errorf("the uniqueness ranges were not taken from the staged bytes")
	}
}
