package jcamp

import (
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const fixtures = "../../testdata/jcamp"

// reference is one *.expected.json written by testdata/jcamp/gen.mjs: the
// arrays that the npm package jcampconverter 12.5.3 (convert(text).flatten)
// returned for the fixture of the same name.
type reference struct {
	Source   string            `json:"source"`
	Writer   string            `json:"writer"`
	Versions map[string]string `json:"versions"`
	Blocks   []struct {
		Title    string    `json:"title"`
		DataType string    `json:"dataType"`
		XUnits   string    `json:"xUnits"`
		YUnits   string    `json:"yUnits"`
		X        []float64 `json:"x"`
		Y        []float64 `json:"y"`
	} `json:"blocks"`
}

func loadReference(t *testing.T, path string) reference {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var ref reference
	if err := json.Unmarshal(data, &ref); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	return ref
}

// maxRelDiff is max |a-b| / max(1e-300, max|b|) over the arrays.
func maxRelDiff(a, b []float64) float64 {
	scale, d := 0.0, 0.0
	for i := range b {
		scale = math.Max(scale, math.Abs(b[i]))
		d = math.Max(d, math.Abs(a[i]-b[i]))
	}
	return d / math.Max(scale, 1e-300)
}

// TestAgainstJcampconverter compares Parse with the arrays that the npm
// package jcampconverter 12.5.3 returned for the same files (see
// testdata/jcamp/gen.mjs; the compressed fixtures were written by the npm
// package convert-to-jcamp 7.0.1). Both compute X as FIRSTX + i*DELTAX and Y
// as integer*YFACTOR, so agreement is to rounding.
func TestAgainstJcampconverter(t *testing.T) {
	refs, err := filepath.Glob(filepath.Join(fixtures, "*.expected.json"))
	if err != nil || len(refs) < 10 {
		t.Fatalf("reference files missing: %v %v", refs, err)
	}
	for _, rp := range refs {
		jdx := strings.TrimSuffix(rp, ".expected.json") + ".jdx"
		t.Run(filepath.Base(jdx), func(t *testing.T) {
			ref := loadReference(t, rp)
			if !strings.HasPrefix(ref.Source, "jcampconverter 12.5.3") {
				t.Fatalf("unexpected reference source %q", ref.Source)
			}
			blocks, err := ReadFile(jdx)
			if err != nil {
				t.Fatal(err)
			}
			if len(blocks) != len(ref.Blocks) {
				t.Fatalf("%d blocks, jcampconverter found %d", len(blocks), len(ref.Blocks))
			}
			for i, b := range blocks {
				r := ref.Blocks[i]
				if b.Title != r.Title || b.DataType != r.DataType || b.XUnits != r.XUnits || b.YUnits != r.YUnits {
					t.Errorf("block %d: got %q %q %q %q, want %q %q %q %q", i, b.Title, b.DataType, b.XUnits, b.YUnits, r.Title, r.DataType, r.XUnits, r.YUnits)
				}
				if len(b.X) != len(r.X) || len(b.Y) != len(r.Y) {
					t.Fatalf("block %d: %d/%d points, want %d/%d", i, len(b.X), len(b.Y), len(r.X), len(r.Y))
				}
				if d := maxRelDiff(b.X, r.X); d > 1e-13 {
					t.Errorf("block %d: X differs by %g relative", i, d)
				}
				if d := maxRelDiff(b.Y, r.Y); d > 1e-13 {
					t.Errorf("block %d: Y differs by %g relative", i, d)
				}
			}
		})
	}
}

func TestPeakTableIsNotASpectrum(t *testing.T) {
	// Fixture written by convert-to-jcamp 7.0.1 fromJSON without an encoding.
	_, err := ReadFile(filepath.Join(fixtures, "ir_peaktable.jdx"))
	if err == nil || !strings.Contains(err.Error(), "peak table") {
		t.Fatalf("want a peak-table error, got %v", err)
	}
	var pe *ParseError
	if !errors.As(err, &pe) || pe.Line != 15 {
		t.Errorf("want a ParseError at the ##PEAK TABLE= line 15, got %#v", err)
	}
}

func TestLinkBlocks(t *testing.T) {
	blocks, err := ReadFile(filepath.Join(fixtures, "ir_link.jdx"))
	if err != nil {
		t.Fatal(err)
	}
	// Four nested blocks: two single beams, an absorbance and a peak table,
	// which is skipped.
	want := []struct{ title, kind, id string }{
		{"background single beam", "single-beam", "1"},
		{"sample single beam", "single-beam", "2"},
		{"sample absorbance", "absorbance", "3"},
	}
	if len(blocks) != len(want) {
		t.Fatalf("%d blocks, want %d", len(blocks), len(want))
	}
	for i, w := range want {
		b := blocks[i]
		id, _ := b.Value("BLOCK_ID")
		if b.Title != w.title || b.Kind() != w.kind || id != w.id {
			t.Errorf("block %d: %q %q id %q, want %q %q %q", i, b.Title, b.Kind(), id, w.title, w.kind, w.id)
		}
		if b.Line <= 1 || b.Labels[0].Name != "TITLE" || b.Labels[0].Line != b.Line {
			t.Errorf("block %d: Line %d, first label %+v", i, b.Line, b.Labels[0])
		}
	}
	// Definition (Beer-Lambert, absorbance = log10(I0/I)): the file's
	// absorbance block is log10 of background over sample, within the
	// printed resolution of the three blocks.
	for i := range blocks[0].Y {
		a := math.Log10(blocks[0].Y[i] / blocks[1].Y[i])
		if d := math.Abs(a - blocks[2].Y[i]); d > 2e-4 {
			t.Fatalf("point %d: log10(I0/I) = %v, absorbance block %v", i, a, blocks[2].Y[i])
		}
	}
}

func TestLabels(t *testing.T) {
	src := "\ufeff##TITLE=two-line\r\n  title $$ a comment\r\n##JCAMP-DX=5.01\r\n##Data_Type=INFRARED SPECTRUM\r\n" +
		"##.OBSERVE FREQUENCY=1\r##$MY-LABEL=kept\r\n##X UNITS=1/CM\r\n##y/units=ABSORBANCE\r\n" +
		"##XFACTOR=1\r\n##YFACTOR=0.5\r\n##FIRSTX=10\r\n##LASTX=13\r\n##NPOINTS=4\r\n##FIRSTY=0.5\r\n" +
		"##XYDATA=(X++(Y..Y)) $$ AFFN\r\n10 1 2 $$ first two\r\n12 3 4\r\n##END=\r\n\x1a"
	blocks, err := Parse(strings.NewReader(src), "labels.jdx")
	if err != nil {
		t.Fatal(err)
	}
	b := blocks[0]
	if b.Title != "two-line\ntitle" || b.XUnits != "1/CM" || b.YUnits != "ABSORBANCE" || b.DataType != "INFRARED SPECTRUM" {
		t.Errorf("fields: %q %q %q %q", b.Title, b.XUnits, b.YUnits, b.DataType)
	}
	names := []string{}
	for _, l := range b.Labels {
		names = append(names, l.Name)
	}
	// Normalisation per JCAMP-DX 4.24: case, spaces, '-', '_' and '/' ignored.
	wantNames := "TITLE JCAMPDX DATATYPE .OBSERVEFREQUENCY $MYLABEL XUNITS YUNITS XFACTOR YFACTOR FIRSTX LASTX NPOINTS FIRSTY XYDATA END"
	if got := strings.Join(names, " "); got != wantNames {
		t.Errorf("labels\n got %s\nwant %s", got, wantNames)
	}
	if v, _ := b.Value("$my label"); v != "kept" {
		t.Errorf("$MYLABEL = %q", v)
	}
	if v, _ := b.Value("XYDATA"); v != "(X++(Y..Y))" {
		t.Errorf("XYDATA value %q", v)
	}
	if b.Labels[4].Line != 6 {
		t.Errorf("a lone CR ends a line: $MYLABEL on line %d, want 6", b.Labels[4].Line)
	}
	wantX := []float64{10, 11, 12, 13}
	wantY := []float64{0.5, 1, 1.5, 2}
	for i := range wantX {
		if b.X[i] != wantX[i] || b.Y[i] != wantY[i] {
			t.Fatalf("got %v %v, want %v %v", b.X, b.Y, wantX, wantY)
		}
	}
}

func TestKind(t *testing.T) {
	// YUNITS words of the JCAMP-DX IR standard; COUNTS is common practice.
	for _, c := range []struct{ units, kind string }{
		{"ABSORBANCE", "absorbance"},
		{"absorbance", "absorbance"},
		{"TRANSMITTANCE", "transmittance"},
		{"% TRANSMISSION", "transmittance"},
		{"ARBITRARY UNITS", "single-beam"},
		{"COUNTS", "single-beam"},
		{"single beam", "single-beam"},
		{"REFLECTANCE", ""},
		{"KUBELKA-MUNK", ""},
		{"", ""},
	} {
		if got := (Block{YUnits: c.units}).Kind(); got != c.kind {
			t.Errorf("Kind(%q) = %q, want %q", c.units, got, c.kind)
		}
	}
}
