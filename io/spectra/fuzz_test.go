package spectra

// Fuzz targets for the text readers. Every input must give either a valid
// result (finite values, a strictly monotonic axis, consistent sizes) or an
// *InputError whose message is one line of bounded length — never a panic,
// a hang or a message that dumps the file. Seeds live in
// testdata/fuzz/<target>/; a short bounded run is part of .ci/run.

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// fuzzFile writes data where the readers expect a path.
func fuzzFile(t *testing.T, name string, data []byte) string {
	p := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// maxMessage bounds an error line: a path, a line number, a quoted cell of
// at most 40 bytes and the advice.
const maxMessage = 1000

func checkErr(t *testing.T, err error) {
	t.Helper()
	var ie *InputError
	if !errors.As(err, &ie) {
		t.Fatalf("error is not an InputError: %T %v", err, err)
	}
	msg := err.Error()
	if strings.ContainsAny(msg, "\n\r") {
		t.Fatalf("message spans lines: %q", msg)
	}
	if len(msg) > maxMessage {
		t.Fatalf("message of %d bytes: %.200q…", len(msg), msg)
	}
}

func checkAxisValid(t *testing.T, axis []float64) {
	t.Helper()
	if len(axis) < 2 {
		t.Fatalf("accepted an axis of %d points", len(axis))
	}
	up := axis[1] > axis[0]
	for i, v := range axis {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			t.Fatalf("axis value %d is %v", i, v)
		}
		if i > 0 && (axis[i] > axis[i-1]) != up || i > 0 && axis[i] == axis[i-1] {
			t.Fatalf("accepted a non-monotonic axis at %d: %v", i, axis)
		}
	}
}

func checkFinite(t *testing.T, what string, v []float64) {
	t.Helper()
	for i, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) || math.Abs(x) > maxMagnitude {
			t.Fatalf("%s %d is %v", what, i, x)
		}
	}
}

func FuzzReadMatrixCSV(f *testing.F) {
	f.Add([]byte("wavenumber,0,10\n1000,1,2\n1002,3,4\n"))
	f.Add([]byte("\xef\xbb\xbfwavenumber;0;10\r\n1000;1;2\r\n1002;3;4\r\n"))
	f.Add([]byte("\"title, with comma\"\nwavelength\t0\t10\n500\t1\t2\n501\t1\t2\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		s, err := ReadMatrixCSV(fuzzFile(t, "m.csv", data))
		if err != nil {
			checkErr(t, err)
			return
		}
		n, m := s.Values.Dims()
		if n != len(s.Times) || m != len(s.Axis) || n != len(s.Names) || n < 1 {
			t.Fatalf("sizes: values %d×%d, %d times, %d axis points, %d names", n, m, len(s.Times), len(s.Axis), len(s.Names))
		}
		checkAxisValid(t, s.Axis)
		checkFinite(t, "time", s.Times)
		for i := 1; i < n; i++ {
			if !(s.Times[i] > s.Times[i-1]) {
				t.Fatalf("times not strictly increasing after sorting: %v", s.Times)
			}
		}
		for i := 0; i < n; i++ {
			checkFinite(t, "value", s.Values.RawRowView(i))
		}
	})
}

func FuzzReadSpectrumFile(f *testing.F) {
	f.Add([]byte("wavenumber,intensity\n1000,1\n1002,2\n"))
	f.Add([]byte("Sample 7\n\"Wavenumber (cm-1)\";\"Absorbance\"\r\n4000;0,1\r\n3998;0,2\r\n"))
	f.Add([]byte("# comment\n500 0.1\n501 0.2\n502 0.3\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		sp, err := ReadSpectrumFile(fuzzFile(t, "s.csv", data))
		if err != nil {
			checkErr(t, err)
			return
		}
		if len(sp.Axis) != len(sp.Values) {
			t.Fatalf("%d axis points, %d values", len(sp.Axis), len(sp.Values))
		}
		checkAxisValid(t, sp.Axis)
		checkFinite(t, "value", sp.Values)
		if sp.AxisName == "" {
			t.Fatal("no axis name")
		}
	})
}

func FuzzReadTimes(f *testing.F) {
	f.Add([]byte("file,time_s\na.csv,0\nb.csv,10\n"))
	f.Add([]byte("\xef\xbb\xbf# run 7\r\nfile;time_s\r\na.csv;0\r\n\r\nb.csv;1e2\r\n"))
	f.Add([]byte("time_s,file\n0,a.csv\n0,b.csv\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		tab, err := ReadTimes(fuzzFile(t, "times.csv", data))
		if err != nil {
			checkErr(t, err)
			return
		}
		if len(tab) == 0 {
			t.Fatal("accepted a table without rows")
		}
		seen := map[float64]bool{}
		for name, v := range tab {
			if name == "" {
				t.Fatal("accepted an empty file name")
			}
			if math.IsNaN(v) || math.IsInf(v, 0) || seen[v] {
				t.Fatalf("time %v of %q (non-finite or repeated)", v, name)
			}
			seen[v] = true
		}
	})
}

// TestLongLineMessage: a megabyte-long garbage cell is reported in a
// message of bounded length, on one line.
func TestLongLineMessage(t *testing.T) {
	long := strings.Repeat("x\r", 1<<19)
	p := fuzzFile(t, "long.csv", []byte("wavenumber,0,10\n1000,1,"+long+"\n1002,1,2\n"))
	_, err := ReadMatrixCSV(p)
	if err == nil {
		t.Fatal("accepted a garbage cell")
	}
	checkErr(t, err)
	if !strings.Contains(err.Error(), "long.csv:2:") {
		t.Errorf("message does not name the line: %q", err)
	}
}
