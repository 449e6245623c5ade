package jcamp

import (
	"bytes"
	"flag"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the go_written_*.jdx files in testdata/jcamp")

// checkWritten checks the layout Write promises: lines of at most 80
// characters and the structural labels in order.
func checkWritten(t *testing.T, text string) {
	t.Helper()
	for i, l := range strings.Split(strings.TrimSuffix(text, "\n"), "\n") {
		if len(l) > lineWidth {
			t.Errorf("line %d has %d characters: %q", i+1, len(l), l)
		}
	}
	order := []string{"##TITLE=", "##JCAMP-DX=5.01\n", "##DATA TYPE=", "##XUNITS=", "##YUNITS=",
		"##XFACTOR=", "##YFACTOR=", "##FIRSTX=", "##LASTX=", "##NPOINTS=", "##FIRSTY=", "##MINY=", "##MAXY=", "\n##END=\n"}
	pos := 0
	for _, o := range order {
		i := strings.Index(text[pos:], o)
		if i < 0 {
			t.Fatalf("%q missing or out of order in\n%s", o, text)
		}
		pos += i
	}
	if !strings.HasSuffix(text, "##END=\n") {
		t.Errorf("file does not end with ##END=")
	}
}

// TestWriteRoundTrip writes every fixture spectrum and reads it back. The
// ordinates are stored as integers times YFACTOR = 10^k with nine digits for
// the largest |Y|, so they return within half a YFACTOR unit; abscissae
// return to rounding. Writing the result again gives the same bytes.
func TestWriteRoundTrip(t *testing.T) {
	files, _ := filepath.Glob(filepath.Join(fixtures, "ir_*.jdx"))
	n := 0
	for _, f := range files {
		if strings.HasSuffix(f, "ir_peaktable.jdx") {
			continue
		}
		blocks, err := ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		for _, b := range blocks {
			n++
			var buf bytes.Buffer
			if err := Write(&buf, b); err != nil {
				t.Fatalf("%s: %v", f, err)
			}
			checkWritten(t, buf.String())
			back, err := Parse(bytes.NewReader(buf.Bytes()), "written.jdx")
			if err != nil {
				t.Fatalf("%s %q: %v\n%s", f, b.Title, err, buf.String())
			}
			r := back[0]
			if len(back) != 1 || r.Title != b.Title || r.XUnits != b.XUnits || r.YUnits != b.YUnits || r.DataType != b.DataType || len(r.Y) != len(b.Y) {
				t.Fatalf("%s: read back %d blocks %q %q %q, %d points", f, len(back), r.Title, r.XUnits, r.YUnits, len(r.Y))
			}
			maxAbs, dx := 0.0, math.Abs(b.X[1]-b.X[0])
			for _, y := range b.Y {
				maxAbs = math.Max(maxAbs, math.Abs(y))
			}
			for i := range b.Y {
				if d := math.Abs(r.Y[i] - b.Y[i]); d > 0.5e-8*maxAbs {
					t.Fatalf("%s: Y[%d] %v came back as %v", f, i, b.Y[i], r.Y[i])
				}
				if d := math.Abs(r.X[i] - b.X[i]); d > 1e-6*dx {
					t.Fatalf("%s: X[%d] %v came back as %v", f, i, b.X[i], r.X[i])
				}
			}
			for _, l := range b.Labels {
				if l.Name == "ORIGIN" || l.Name == "OWNER" || l.Name == "RESOLUTION" {
					if v, ok := r.Value(l.Name); !ok || v != l.Value {
						t.Errorf("%s: label %s=%q not carried over (got %q)", f, l.Name, l.Value, v)
					}
				}
			}
			var again bytes.Buffer
			if err := Write(&again, r); err != nil {
				t.Fatal(err)
			}
			if again.String() != buf.String() {
				t.Errorf("%s: second write differs:\n%s\n---\n%s", f, buf.String(), again.String())
			}
		}
	}
	if n < 12 {
		t.Fatalf("only %d blocks round-tripped", n)
	}
}

// TestWrittenFilesStable pins Write's output for two fixtures. The pinned
// files were read by jcampconverter 12.5.3 too (gen.mjs stores their
// *.expected.json, which TestAgainstJcampconverter compares), so another
// reader accepts what Write produces.
func TestWrittenFilesStable(t *testing.T) {
	for src, dst := range map[string]string{
		"ir_diff_sqzdup.jdx": "go_written_xydata.jdx",
		"ir_xypoints.jdx":    "go_written_xypoints.jdx",
	} {
		blocks, err := ReadFile(filepath.Join(fixtures, src))
		if err != nil {
			t.Fatal(err)
		}
		var buf bytes.Buffer
		if err := Write(&buf, blocks[0]); err != nil {
			t.Fatal(err)
		}
		path := filepath.Join(fixtures, dst)
		if *update {
			if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
				t.Fatal(err)
			}
		}
		want, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(buf.Bytes(), want) {
			t.Errorf("Write(%s) differs from %s; if intended, run go test -update and testdata/jcamp/gen.sh", src, dst)
		}
	}
}

func TestWriteUnevenGivesXYPoints(t *testing.T) {
	b := Block{Title: "uneven", XUnits: "1/CM", YUnits: "ABSORBANCE",
		X: []float64{4000, 3990.5, 3700.25, 1e-7}, Y: []float64{0.1, -2.5e-9, 1.2345678901234567, 0}}
	var buf bytes.Buffer
	if err := Write(&buf, b); err != nil {
		t.Fatal(err)
	}
	text := buf.String()
	checkWritten(t, text)
	if !strings.Contains(text, "##XYPOINTS=(XY..XY)\n") || strings.Contains(text, "##XYDATA") {
		t.Fatalf("want XYPOINTS:\n%s", text)
	}
	back, err := Parse(strings.NewReader(text), "uneven.jdx")
	if err != nil {
		t.Fatal(err)
	}
	// Shortest round-trip decimals: exact.
	for i := range b.X {
		if back[0].X[i] != b.X[i] || back[0].Y[i] != b.Y[i] {
			t.Fatalf("got %v %v, want %v %v", back[0].X, back[0].Y, b.X, b.Y)
		}
	}
}

func TestWriteDefaultsAndLongValues(t *testing.T) {
	title := strings.Repeat("film under nitrogen, ", 8) + "end"
	b := Block{Title: title, X: []float64{1, 2, 3}, Y: []float64{0, 0, 0},
		Labels: []Label{{Name: "OWNER", Value: "public domain"}, {Name: "$NOTE", Value: "a\n##not a label"}}}
	var buf bytes.Buffer
	if err := Write(&buf, b); err == nil {
		t.Fatalf("a value line starting with ## must be refused:\n%s", buf.String())
	}
	b.Labels = b.Labels[:1]
	buf.Reset()
	if err := Write(&buf, b); err != nil {
		t.Fatal(err)
	}
	checkWritten(t, buf.String())
	back, err := Parse(&buf, "long.jdx")
	if err != nil {
		t.Fatal(err)
	}
	r := back[0]
	// Continuation lines come back joined by newlines.
	if strings.ReplaceAll(r.Title, "\n", " ") != title {
		t.Errorf("title %q", r.Title)
	}
	if r.DataType != "INFRARED SPECTRUM" || r.XUnits != "ARBITRARY UNITS" || r.Kind() != "single-beam" {
		t.Errorf("defaults: %q %q %q", r.DataType, r.XUnits, r.Kind())
	}
	if v, _ := r.Value("OWNER"); v != "public domain" {
		t.Errorf("OWNER %q", v)
	}
	if r.Y[0] != 0 || r.X[2] != 3 {
		t.Errorf("data %v %v", r.X, r.Y)
	}
}

func TestWriteRejects(t *testing.T) {
	for name, b := range map[string]Block{
		"empty":      {},
		"lengths":    {X: []float64{1, 2}, Y: []float64{1}},
		"NaN":        {X: []float64{1, 2}, Y: []float64{1, math.NaN()}},
		"Inf":        {X: []float64{math.Inf(1), 2}, Y: []float64{1, 2}},
		"comment":    {Title: "a $$ b", X: []float64{1}, Y: []float64{1}},
		"label name": {Labels: []Label{{Name: "A=B", Value: "1"}}, X: []float64{1}, Y: []float64{1}},
	} {
		if err := Write(&bytes.Buffer{}, b); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
}

func BenchmarkParseDIF(b *testing.B) {
	data, err := os.ReadFile(filepath.Join(fixtures, "ir_dif.jdx"))
	if err != nil {
		b.Fatal(err)
	}
	for b.Loop() {
		if _, err := Parse(bytes.NewReader(data), "ir_dif.jdx"); err != nil {
			b.Fatal(err)
		}
	}
}
