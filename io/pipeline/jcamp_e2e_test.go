package pipeline

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/bandsolve/bandsolve/io/demo"
	"github.com/bandsolve/bandsolve/io/jcamp"
	"github.com/bandsolve/bandsolve/io/output"
)

// JCAMP-DX ordinate forms, written here from the definitions of the
// standard (McDonald & Wilks, Appl. Spectrosc. 42 (1988) 151, Table II):
// AFFN free decimals; PAC sign-delimited; SQZ pseudo-digits @A–I (0…9),
// a–i (−1…−9) for the sign and first digit; DIF %J–R / j–r for differences
// with a Y-check value opening each following line; DUP S–Z,s (1…9) for
// repeat counts. io/jcamp's reader is checked against jcampconverter on the
// stored fixtures in testdata/jcamp; this test proves that the pipeline reads
// every form into the same numbers as the same spectra written as CSV.
type jform int

const (
	formAFFN jform = iota
	formPAC
	formSQZ
	formDIF
	formDIFDUP
)

var formNames = []string{"affn", "pac", "sqz", "dif", "difdup"}

func pseudo(v int64, pos, neg string) string {
	s := strconv.FormatInt(v, 10)
	if v < 0 {
		s = s[1:]
		return string(neg[s[0]-'1']) + s[1:]
	}
	return string(pos[s[0]-'0']) + s[1:]
}

func sqz(v int64) string { return pseudo(v, "@ABCDEFGHI", "abcdefghi") }
func dif(v int64) string { return pseudo(v, "%JKLMNOPQR", "jklmnopqr") }
func dup(n int) string {
	s := strconv.Itoa(n)
	return string("STUVWXYZs"[s[0]-'1']) + s[1:]
}

// xyData renders ##XYDATA=(X++(Y..Y)) lines for integer ordinates.
func xyData(x []float64, ys []int64, f jform) string {
	const per = 10
	var b strings.Builder
	xs := func(i int) string { return strconv.FormatFloat(x[i], 'g', -1, 64) }
	switch f {
	case formAFFN, formPAC, formSQZ:
		for i := 0; i < len(ys); i += per {
			b.WriteString(xs(i))
			for j := i; j < min(i+per, len(ys)); j++ {
				switch f {
				case formAFFN:
					fmt.Fprintf(&b, " %d", ys[j])
				case formPAC:
					fmt.Fprintf(&b, "%+d", ys[j])
				default:
					b.WriteString(sqz(ys[j]))
				}
			}
			b.WriteByte('\n')
		}
	default:
		i := 0
		for i < len(ys)-1 {
			end := min(i+per, len(ys)-1)
			b.WriteString(xs(i))
			b.WriteString(sqz(ys[i]))
			var toks []string
			for j := i + 1; j <= end; j++ {
				toks = append(toks, dif(ys[j]-ys[j-1]))
			}
			for k := 0; k < len(toks); {
				n := 1
				for f == formDIFDUP && k+n < len(toks) && toks[k+n] == toks[k] {
					n++
				}
				b.WriteString(toks[k])
				if n > 1 {
					b.WriteString(dup(n))
				}
				k += n
			}
			b.WriteByte('\n')
			i = end
		}
		// The last line ends in DIF form: a closing line repeats the
		// last ordinate as its check.
		b.WriteString(xs(len(ys) - 1))
		b.WriteString(sqz(ys[len(ys)-1]))
		b.WriteByte('\n')
	}
	return b.String()
}

func jcampBlock(title, yunits string, x []float64, ys []int64, yf float64, f jform, id int) string {
	var b strings.Builder
	fmt.Fprintf(&b, "##TITLE=%s\n##JCAMP-DX=4.24\n", title)
	if id > 0 {
		fmt.Fprintf(&b, "##BLOCK_ID=%d\n", id)
	}
	fmt.Fprintf(&b, "##DATA TYPE=INFRARED SPECTRUM\n##XUNITS=1/CM\n##YUNITS=%s\n##XFACTOR=1\n##YFACTOR=%s\n", yunits, strconv.FormatFloat(yf, 'g', -1, 64))
	fmt.Fprintf(&b, "##FIRSTX=%s\n##LASTX=%s\n##NPOINTS=%d\n##FIRSTY=%s\n##XYDATA=(X++(Y..Y))\n",
		strconv.FormatFloat(x[0], 'g', -1, 64), strconv.FormatFloat(x[len(x)-1], 'g', -1, 64), len(x),
		strconv.FormatFloat(float64(ys[0])*yf, 'g', -1, 64))
	b.WriteString(xyData(x, ys, f))
	b.WriteString("##END=\n")
	return b.String()
}

func csvSpectrum(x, y []float64, col string) []byte {
	t := output.Table{Header: []string{"wavenumber", col}}
	for i := range x {
		t.Rows = append(t.Rows, []string{strconv.FormatFloat(x[i], 'g', -1, 64), strconv.FormatFloat(y[i], 'g', -1, 64)})
	}
	return t.CSV()
}

func writeFile(t *testing.T, path string, b []byte) {
	t.Helper()
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
}

// quantised is the demo's data on a coarse integer grid (×YFACTOR), coarse
// enough that runs of equal differences occur and DUP has work to do.
type quantised struct {
	x      []float64 // as the JCAMP-DX reader computes them from FIRSTX/LASTX/NPOINTS
	times  []float64
	beams  [][]int64
	blank  []int64
	yf     float64
	nSpec  int
	points int
}

func makeQuantised(t *testing.T, nSpec int) *quantised {
	t.Helper()
	tr := demo.Make(1)
	q := &quantised{yf: 5, nSpec: nSpec, points: len(tr.Axis)}
	step := len(tr.Times) / nSpec
	for i := 0; i < nSpec; i++ {
		q.times = append(q.times, tr.Times[i*step])
		row := make([]int64, len(tr.Axis))
		for j := range row {
			row[j] = int64(math.Round(tr.Beams.At(i*step, j) / q.yf))
		}
		q.beams = append(q.beams, row)
	}
	for _, v := range tr.Blank {
		q.blank = append(q.blank, int64(math.Round(v/q.yf)))
	}
	// The abscissae the CSV files must carry: exactly what the reader
	// computes, read back from one written block.
	bl, err := jcamp.Parse(strings.NewReader(jcampBlock("probe", "ARBITRARY UNITS", tr.Axis, q.blank, q.yf, formAFFN, 0)), "probe")
	if err != nil {
		t.Fatal(err)
	}
	q.x = bl[0].X
	return q
}

func (q *quantised) floats(ys []int64) []float64 {
	out := make([]float64, len(ys))
	for i, v := range ys {
		out[i] = float64(v) * q.yf
	}
	return out
}

// resultFiles are the files compared between inputs in two formats (the
// as-run record and manifest name the input files, which differ by ending).
var resultFiles = []string{"spectra.csv", "profiles.csv", "singular_values.csv", "rank.csv", "iterations.csv", "summary.json"}

func runFolder(t *testing.T, dir string, data, blank string, kind string) map[string][]byte {
	t.Helper()
	s := NewSettings()
	s.Dir = dir
	s.Data = []string{data}
	s.Kind = kind
	s.Blanks = []string{blank}
	s.TimesFromName = true
	s.Pre = 1
	s.Report = "off"
	s.Bands = "off"
	s.Out = "out"
	s.Quiet = true
	if _, err := Execute(s, Streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}); err != nil {
		t.Fatalf("%s: %v", dir, err)
	}
	got := map[string][]byte{}
	for _, f := range resultFiles {
		b, err := os.ReadFile(filepath.Join(dir, "out", f))
		if err != nil {
			if os.IsNotExist(err) {
				continue
			}
			t.Fatal(err)
		}
		got[f] = b
	}
	return got
}

func sameResults(t *testing.T, what string, want, got map[string][]byte) {
	t.Helper()
	if len(got) != len(want) {
		t.Errorf("%s: %d result files, CSV gave %d", what, len(got), len(want))
	}
	for name, w := range want {
		if d := firstDifference(name, w, got[name]); d != nil {
			t.Errorf("%s: differs from the CSV run: %s", what, d)
		}
	}
}

// Single beams in a folder of .jdx files, in every ordinate form, and the
// same numbers as two-column CSV files: byte-identical results.
func TestJCAMPFolderMatchesCSV(t *testing.T) {
	q := makeQuantised(t, 21)
	root := t.TempDir()
	want := csvReference(t, q, root)
	if len(want) < 5 {
		t.Fatalf("the CSV run wrote only %d of the result files", len(want))
	}
	for f, name := range formNames {
		dir := filepath.Join(root, name)
		dups := 0
		for i, row := range q.beams {
			// DUP tokens of counts 2…9 (count 1 is never written).
			for _, c := range xyData(q.x, row, jform(f)) {
				if strings.ContainsRune("TUVWXYZs", c) {
					dups++
				}
			}
			text := jcampBlock(fmt.Sprintf("scan %g s", q.times[i]), "ARBITRARY UNITS", q.x, row, q.yf, jform(f), 0)
			writeFile(t, filepath.Join(dir, "scans", fmt.Sprintf("scan_%04g.jdx", q.times[i])), []byte(text))
			// The reader must give back exactly the integers × YFACTOR written.
			bl, err := jcamp.Parse(strings.NewReader(text), name)
			if err != nil {
				t.Fatalf("%s: %v", name, err)
			}
			for j, v := range q.floats(row) {
				if bl[0].Y[j] != v || bl[0].X[j] != q.x[j] {
					t.Fatalf("%s: point %d reads (%v, %v), written (%v, %v)", name, j, bl[0].X[j], bl[0].Y[j], q.x[j], v)
				}
			}
		}
		writeFile(t, filepath.Join(dir, "blank.jdx"), []byte(jcampBlock("blank", "ARBITRARY UNITS", q.x, q.blank, q.yf, jform(f), 0)))
		if (jform(f) == formDIFDUP) != (dups > 0) {
			t.Fatalf("%s: %d DUP tokens; only the DIFDUP files should hold any, and they must", name, dups)
		}
		got := runFolder(t, dir, "scans", "blank.jdx", "single-beam")
		sameResults(t, name, want, got)
	}
}

// A LINK file holding every spectrum as a block, times from the titles.
func TestJCAMPLinkFileMatchesCSV(t *testing.T) {
	q := makeQuantised(t, 21)
	root := t.TempDir()
	want := csvReference(t, q, root)

	var b strings.Builder
	fmt.Fprintf(&b, "##TITLE=kinetic series\n##JCAMP-DX=5.01\n##DATA TYPE=LINK\n##BLOCKS=%d\n", len(q.beams))
	// Written out of time order: the series is ordered by the titles' times.
	for k := range q.beams {
		i := (k * 5) % len(q.beams) // 5 and 21 are coprime: a permutation
		b.WriteString(jcampBlock(fmt.Sprintf("scan %g s", q.times[i]), "ARBITRARY UNITS", q.x, q.beams[i], q.yf, formDIFDUP, k+1))
	}
	b.WriteString("##END=\n")
	dir := filepath.Join(root, "link")
	writeFile(t, filepath.Join(dir, "scans.jdx"), []byte(b.String()))
	writeFile(t, filepath.Join(dir, "blank.jdx"), []byte(jcampBlock("blank", "ARBITRARY UNITS", q.x, q.blank, q.yf, formSQZ, 0)))
	got := runFolder(t, dir, "scans.jdx", "blank.jdx", "single-beam")
	// Only summary.json names the input; compare it with that name swapped.
	got["summary.json"] = bytes.ReplaceAll(got["summary.json"], []byte(`"scans.jdx"`), []byte(`"scans"`))
	sameResults(t, "LINK file", want, got)
}

// Transmittance is read as absorbance A = −log10 T (IUPAC Gold Book,
// "absorbance"), so T files and CSV files of −log10 T agree; a --kind
// single-beam that contradicts the units is refused with a hint.
func TestJCAMPTransmittance(t *testing.T) {
	q := makeQuantised(t, 21)
	root := t.TempDir()
	csvDir := filepath.Join(root, "csv")
	tDir := filepath.Join(root, "jdx")
	// Transmittance against the blank, on a grid of 1e-6.
	const tf = 1e-6
	for i, row := range q.beams {
		ti := make([]int64, len(row))
		a := make([]float64, len(row))
		for j := range row {
			ti[j] = int64(math.Round(float64(row[j]) / float64(q.blank[j]) / tf))
			a[j] = -math.Log10(float64(ti[j]) * tf)
		}
		name := fmt.Sprintf("scan_%04g", q.times[i])
		writeFile(t, filepath.Join(tDir, "scans", name+".jdx"), []byte(jcampBlock(name, "TRANSMITTANCE", q.x, ti, tf, formDIF, 0)))
		writeFile(t, filepath.Join(csvDir, "scans", name+".csv"), csvSpectrum(q.x, a, "absorbance"))
	}
	want := runFolder(t, csvDir, "scans", "", "absorbance")
	got := runFolder(t, tDir, "scans", "", "absorbance")
	sameResults(t, "transmittance", want, got)
	// Left to the file's units, the kind is absorbance too.
	if err := os.RemoveAll(filepath.Join(tDir, "out")); err != nil {
		t.Fatal(err)
	}
	sameResults(t, "transmittance, kind from the units", want, runFolder(t, tDir, "scans", "", ""))

	s := NewSettings()
	s.Dir, s.Data, s.Kind, s.TimesFromName, s.Out, s.Quiet = tDir, []string{"scans"}, "single-beam", true, "refused", true
	_, err := Execute(s, Streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}})
	if err == nil {
		t.Fatal("--kind single-beam on transmittance files was accepted")
	}
	if _, ok := err.(*UsageError); !ok || !strings.Contains(err.Error(), "use --kind absorbance") {
		t.Errorf("error %T %q: want a usage error with the hint --kind absorbance", err, err)
	}
	if _, err := os.Stat(filepath.Join(tDir, "refused")); !os.IsNotExist(err) {
		t.Error("a refused run left an output folder")
	}
	// --kind transmittance on them is refused by what the files declare
	// (JCAMP-DX 4.24: ##YUNITS names the ordinates' units), quoted as
	// written, in the first file in time order, not the folder.
	s.Kind, s.Out = "transmittance", "refused-t"
	_, err = Execute(s, Streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}})
	first := filepath.Join("scans", fmt.Sprintf("scan_%04g.jdx", slices.Min(q.times)))
	if err == nil || !strings.Contains(err.Error(), first+" declares") || !strings.Contains(err.Error(), "##YUNITS=TRANSMITTANCE") {
		t.Errorf("--kind transmittance on T files: %v; want it refused naming %s and ##YUNITS=TRANSMITTANCE", err, first)
	}
}

// spectra.jdx holds every resolved spectrum, and io/jcamp reads it back to
// the values of spectra.csv (nine significant digits of the largest |Y|,
// as the writer promises).
func TestSpectraWrittenAsJCAMP(t *testing.T) {
	dir := t.TempDir()
	writeScans(t, dir, 10)
	s := scanSettings(dir, "out")
	s.Report, s.Bands, s.Model = "off", "off", ""
	r, err := Execute(s, Streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}})
	if err != nil {
		t.Fatal(err)
	}
	blocks, err := jcamp.ReadFile(filepath.Join(dir, "out", SpectraJCAMP))
	if err != nil {
		t.Fatal(err)
	}
	if len(blocks) != r.Components || r.Components < 2 {
		t.Fatalf("%d blocks for %d components", len(blocks), r.Components)
	}
	for k, b := range blocks {
		if b.Title != r.Names[k] || b.Kind() != "absorbance" || b.XUnits != "1/CM" {
			t.Errorf("block %d: title %q kind %q x units %q", k+1, b.Title, b.Kind(), b.XUnits)
		}
		big := 0.0
		for i := range r.Axis {
			big = math.Max(big, math.Abs(r.ALS.S.At(i, k)))
		}
		for i, x := range r.Axis {
			if b.X[i] != x && math.Abs(b.X[i]-x) > 1e-9*math.Abs(x) {
				t.Fatalf("block %d point %d: x %v, axis %v", k+1, i, b.X[i], x)
			}
			if d := math.Abs(b.Y[i] - r.ALS.S.At(i, k)); d > 1e-8*big {
				t.Fatalf("block %d point %d: y %v, resolved %v", k+1, i, b.Y[i], r.ALS.S.At(i, k))
			}
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "out", SpectraJCAMP)); err != nil {
		t.Fatal(err)
	}
}

// csvReference writes the same single beams and blank as two-column CSV
// files under root/csv and returns the results of resolving them: what every
// JCAMP-DX form must reproduce byte for byte.
func csvReference(t *testing.T, q *quantised, root string) map[string][]byte {
	t.Helper()
	csvDir := filepath.Join(root, "csv")
	for i, row := range q.beams {
		writeFile(t, filepath.Join(csvDir, "scans", fmt.Sprintf("scan_%04g.csv", q.times[i])), csvSpectrum(q.x, q.floats(row), "intensity"))
	}
	writeFile(t, filepath.Join(csvDir, "blank.csv"), csvSpectrum(q.x, q.floats(q.blank), "intensity"))
	return runFolder(t, csvDir, "scans", "blank.csv", "single-beam")
}

// A folder of .jdx files whose headers carry ##LONGDATE needs neither
// --times nor --times-from-name (README, "Folder of spectrum files"): the
// run reads the times from the headers, YYYY/MM/DD HH:MM:SS (JCAMP-DX 5.01,
// Lampen et al., Pure Appl. Chem. 71 (1999) 1549; from memory), and gives
// the same results as the CSV files with the times in their names. Names
// that are counters instead are overruled by the headers, with a warning.
func TestJCAMPFolderTimesFromHeaders(t *testing.T) {
	q := makeQuantised(t, 21)
	root := t.TempDir()
	want := csvReference(t, q, root)
	start := time.Date(2026, 11, 30, 23, 59, 0, 0, time.UTC) // the series runs past midnight
	dir := filepath.Join(root, "stamped")
	for i, row := range q.beams {
		text := jcampBlock(fmt.Sprintf("scan %d", i+1), "ARBITRARY UNITS", q.x, row, q.yf, formDIFDUP, 0)
		stamp := start.Add(time.Duration(q.times[i] * float64(time.Second))).Format("2006/01/02 15:04:05")
		text = strings.Replace(text, "##JCAMP-DX=4.24\n", "##JCAMP-DX=4.24\n##LONGDATE="+stamp+"\n", 1)
		writeFile(t, filepath.Join(dir, "scans", fmt.Sprintf("scan_%03d.jdx", i+1)), []byte(text))
	}
	writeFile(t, filepath.Join(dir, "blank.jdx"), []byte(jcampBlock("blank", "ARBITRARY UNITS", q.x, q.blank, q.yf, formSQZ, 0)))
	for _, fromName := range []bool{false, true} {
		s := NewSettings()
		s.Dir, s.Data, s.Kind, s.Blanks = dir, []string{"scans"}, "single-beam", []string{"blank.jdx"}
		s.TimesFromName, s.Pre, s.Report, s.Bands, s.Out, s.Quiet = fromName, 1, "off", "off", "out", true
		s.Force = true
		r, err := Execute(s, Streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}})
		if err != nil {
			t.Fatalf("times from name %v: %v", fromName, err)
		}
		for i, tm := range r.Times {
			if tm != q.times[i]-q.times[0] {
				t.Fatalf("times from name %v: spectrum %d at %g s, its ##LONGDATE says %g s", fromName, i+1, tm, q.times[i]-q.times[0])
			}
		}
		said := strings.Contains(strings.Join(r.Warnings, "\n"), "scan_002.jdx: its name puts it 1 s after scan_001.jdx")
		if said != fromName {
			t.Errorf("times from name %v: warning said %v; warnings %q", fromName, said, r.Warnings)
		}
		if q.times[0] != 0 {
			continue // the CSV run's times start elsewhere
		}
		got := map[string][]byte{}
		for _, f := range []string{"spectra.csv", "profiles.csv", "singular_values.csv"} {
			got[f], _ = os.ReadFile(filepath.Join(dir, "out", f))
			if d := firstDifference(f, want[f], got[f]); d != nil {
				t.Errorf("times from name %v: differs from the CSV run: %s", fromName, d)
			}
		}
	}
}
