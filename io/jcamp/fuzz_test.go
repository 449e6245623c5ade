package jcamp

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// FuzzParse checks that no input makes Parse panic or return non-finite
// data, and that whatever Parse accepts, Write can write and Parse read back
// with the same number of points.
func FuzzParse(f *testing.F) {
	files, _ := filepath.Glob(filepath.Join(fixtures, "*.jdx"))
	for _, p := range files {
		if data, err := os.ReadFile(p); err == nil {
			f.Add(data)
		}
	}
	for _, s := range []string{
		spectrum("", "0A0JJ\n2A2JJ\n"),
		spectrum("##NPOINTS=4\n", "0AV\n"),
		spectrum("", "0+12-3+4 5\n"),
		"##TITLE=t\n##XYPOINTS=(XY..XY)\n1,2; 3,4\n##END=\n",
		"##TITLE=l\n##DATA TYPE=LINK\n##BLOCKS=1\n" + spectrum("", "0 1\n") + "##END=\n",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		blocks, err := Parse(bytes.NewReader(data), "fuzz.jdx")
		if err != nil {
			return
		}
		total := 0
		for _, b := range blocks {
			total += len(b.X)
		}
		for _, b := range blocks {
			if len(b.X) == 0 || len(b.X) != len(b.Y) {
				t.Fatalf("%d abscissae, %d ordinates", len(b.X), len(b.Y))
			}
			for i := range b.X {
				if math.IsNaN(b.X[i]) || math.IsInf(b.X[i], 0) || math.IsNaN(b.Y[i]) || math.IsInf(b.Y[i], 0) {
					t.Fatalf("point %d not finite: %v %v", i, b.X[i], b.Y[i])
				}
			}
			if total > 1<<16 {
				continue // a short input can expand to millions of points; keep executions fast
			}
			var buf bytes.Buffer
			if err := Write(&buf, b); err != nil {
				t.Fatalf("Write of a parsed block: %v", err)
			}
			back, err := Parse(&buf, "rewritten.jdx")
			if err != nil {
				t.Fatalf("re-parse: %v", err)
			}
			if len(back) != 1 || len(back[0].Y) != len(b.Y) {
				t.Fatalf("re-parse gave %d blocks", len(back))
			}
		}
	})
}
