package output

import (
	"bytes"
	"encoding/csv"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// A stage replaces the output folder only on Commit; earlier results are
// refused without force and kept intact when a run is aborted (the "never
// overwrite without --force, writes atomic" rule).
func TestStageLifecycle(t *testing.T) {
	out := filepath.Join(t.TempDir(), "results")
	st, err := NewStage(out, false)
	if err != nil {
		t.Fatal(err)
	}
	if err := st.Write("a.csv", []byte("first\n")); err != nil {
		t.Fatal(err)
	}
	// The manifest is what lets --force recognise the folder as bandsolve's.
	st.Write(ManifestName, ownManifest("a.csv"))
	if _, err := os.Stat(out); !errors.Is(err, os.ErrNotExist) {
		t.Fatalf("the output folder exists before Commit: %v", err)
	}
	if err := st.Commit(); err != nil {
		t.Fatal(err)
	}
	if fi, err := os.Stat(out); err != nil || fi.Mode().Perm() != 0o755 {
		t.Fatalf("committed folder: %v, mode %v", err, fi.Mode())
	}
	if err := Check(out, false); !errors.Is(err, ErrExists) {
		t.Fatalf("earlier results not refused: %v", err)
	}
	// An aborted forced run leaves the earlier results as they were.
	st2, err := NewStage(out, true)
	if err != nil {
		t.Fatal(err)
	}
	st2.Write("a.csv", []byte("second\n"))
	st2.Abort()
	if b, _ := os.ReadFile(filepath.Join(out, "a.csv")); string(b) != "first\n" {
		t.Fatalf("aborted run changed earlier results: %q", b)
	}
	// A committed forced run replaces them and leaves no staging folder.
	st3, _ := NewStage(out, true)
	st3.Write("a.csv", []byte("third\n"))
	if err := st3.Commit(); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(filepath.Join(out, "a.csv")); string(b) != "third\n" {
		t.Fatalf("forced run did not replace: %q", b)
	}
	ents, _ := os.ReadDir(filepath.Dir(out))
	if len(ents) != 1 {
		t.Fatalf("left beside the output: %v", ents)
	}
}

// Float writes 10 significant digits that read back within half a unit in
// the 10th digit (IEEE 754 round-to-nearest), never NaN or Inf, and +0 for
// zeros of either sign.
func TestFloat(t *testing.T) {
	for _, v := range []float64{1, -2.5, 0.1234567890123, 6.02214076e23, 1e-300, 123456789012} {
		got, err := strconv.ParseFloat(Float(v), 64)
		if err != nil || math.Abs(got-v) > 5e-10*math.Abs(v) {
			t.Errorf("Float(%v) = %q", v, Float(v))
		}
	}
	if Float(math.Copysign(0, -1)) != "0" || Float(math.NaN()) != "" || Float(math.Inf(1)) != "" {
		t.Error("zero, NaN or Inf formatted wrongly")
	}
}

// CSV quoting follows RFC 4180: cells with separators, quotes or line
// breaks are quoted, quotes doubled.
func TestTableCSV(t *testing.T) {
	got := string(Table{Header: []string{"a", "b"}, Rows: [][]string{{`x,y`, `say "hi"`}}}.CSV())
	want := "a,b\n\"x,y\",\"say \"\"hi\"\"\"\n"
	if got != want {
		t.Errorf("got %q want %q", got, want)
	}
}

// The CSV writer gives, cell by cell, the bytes of Table.CSV with the same
// cells, and those of Go's encoding/csv Writer (RFC 4180 quoting, LF line
// ends; a reference outside this package, as Table.CSV is written with the
// CSV writer itself): text with separators, quotes, line breaks and none,
// empty cells, numbers as Float writes them (NaN and Inf empty) and
// integers, on lines of different lengths.
func TestCSVWriterAsTable(t *testing.T) {
	texts := []string{"a", "", "x,y", `say "hi"`, "two\nlines", "cr\r", "wavenumber / cm⁻¹"}
	nums := []float64{0, 1, -2.5, 1e-7, 123456789.0123, math.NaN(), math.Inf(-1), 6.02214076e23}
	var tab Table
	var w CSV
	for i := range 40 {
		var row []string
		for j := range i % 7 {
			switch (i + j) % 3 {
			case 0:
				row = append(row, texts[(i*j)%len(texts)])
				w.Text(row[len(row)-1])
			case 1:
				v := nums[(i+2*j)%len(nums)]
				row = append(row, Float(v))
				w.Float(v)
			default:
				row = append(row, strconv.Itoa(i*j-7))
				w.Int(i*j - 7)
			}
		}
		w.End()
		if i == 0 {
			tab.Header = row
		} else {
			tab.Rows = append(tab.Rows, row)
		}
	}
	if got, want := string(w.Bytes()), string(tab.CSV()); got != want {
		t.Errorf("CSV writer gives\n%q\nTable.CSV\n%q", got, want)
	}
	var ref bytes.Buffer
	cw := csv.NewWriter(&ref)
	if err := cw.WriteAll(append([][]string{tab.Header}, tab.Rows...)); err != nil {
		t.Fatal(err)
	}
	if got, want := string(w.Bytes()), ref.String(); got != want {
		t.Errorf("CSV writer gives\n%q\nencoding/csv\n%q", got, want)
	}
}

// needsQuotes is RFC 4180's rule for a cell that must be quoted (it holds
// a comma, a double quote, CR or LF), checked against strings.ContainsAny
// of those four bytes (the standard library, the test's reference) for
// every single byte, UTF-8 text and each byte at each place of a cell.
func TestNeedsQuotesAsRFC4180(t *testing.T) {
	const special = ",\"\n\r"
	cells := []string{"", "species_1", "wavenumber / cm⁻¹", "true", "spectrum"}
	for b := range 256 {
		cells = append(cells, string([]byte{byte(b)}), "ab"+string([]byte{byte(b)}), string([]byte{byte(b)})+"cd")
	}
	for _, c := range cells {
		if got, want := needsQuotes(c), strings.ContainsAny(c, special); got != want {
			t.Errorf("needsQuotes(%q) = %v, want %v", c, got, want)
		}
	}
}

// BenchmarkCSVText: a row of uniqueness.csv's text cells (name, side, an
// empty experiment, two convergence flags), none of which needs quotes.
func BenchmarkCSVText(b *testing.B) {
	var w CSV
	for b.Loop() {
		w.b = w.b[:0]
		for range 1000 {
			w.Text("species_1")
			w.Text("spectrum")
			w.Text("")
			w.Text("true")
			w.Text("true")
			w.End()
		}
	}
}
