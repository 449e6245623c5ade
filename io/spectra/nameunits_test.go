package spectra

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// writeNamed writes a three-point spectrum under each name in a new folder.
func writeNamed(t *testing.T, names ...string) string {
	t.Helper()
	dir := t.TempDir()
	for _, n := range names {
		if err := os.WriteFile(filepath.Join(dir, n), []byte("1000,0.1\n1001,0.2\n1002,0.3\n"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// A unit written straight after a name's number is the unit of that number:
// 1 min = 60 s, 1 h = 3600 s, 1 ms = 1e-3 s (SI Brochure, 9th ed., Table 8
// for min and h, the SI prefix milli for ms; ISO 80000-3; from memory).
// sec and hr are the spellings exports use beside them (common practice).
func TestNameUnitsRead(t *testing.T) {
	cases := []struct {
		names []string
		unit  string // --time-unit, the unit of plain numbers
		want  []float64
	}{
		{[]string{"run7_t0.0000min.csv", "run7_t0.3500min.csv", "run7_t2.5min.csv"}, "s", []float64{0, 21, 150}},
		{[]string{"run7_t0.0000min.csv", "run7_t0.3500min.csv", "run7_t2.5min.csv"}, "min", []float64{0, 21, 150}},
		// A unit in the name wins over --time-unit, which is for plain numbers.
		{[]string{"a_1h.csv", "a_2h.csv"}, "min", []float64{3600, 7200}},
		{[]string{"a_1hr.csv", "a_2HR.csv"}, "s", []float64{3600, 7200}},
		{[]string{"x_500ms.csv", "x_1500ms.csv"}, "s", []float64{0.5, 1.5}},
		{[]string{"x_10s.csv", "x_20sec.csv"}, "min", []float64{10, 20}},
		// Letters that only begin with a unit are no unit: 10 scans, plain.
		{[]string{"x_10scans.csv", "x_20scans.csv"}, "min", []float64{600, 1200}},
		// m is the metre's symbol (SI), not read as minutes.
		{[]string{"x_1m.csv", "x_2m.csv"}, "s", []float64{1, 2}},
	}
	for _, c := range cases {
		s, err := ReadFolder(writeNamed(t, c.names...), FolderOptions{TimesFromName: true, TimeUnit: c.unit})
		if err != nil {
			t.Fatalf("%v: %v", c.names, err)
		}
		for i, w := range c.want {
			if d := s.Times[i] - w; d > 1e-9*w || d < -1e-9*w {
				t.Errorf("%v with --time-unit %s: time %d = %g s, want %g", c.names, c.unit, i, s.Times[i], w)
			}
		}
	}
}

// Names that disagree on the unit, or where only some carry one, are
// refused with two of them named: one folder is one series, named alike
// (common practice).
func TestNameUnitsMixRefused(t *testing.T) {
	for _, names := range [][]string{
		{"t_1min.csv", "t_90s.csv"},
		{"t_1min.csv", "t_0002.csv"},
		{"t_0001.csv", "t_2h.csv"},
	} {
		_, err := ReadFolder(writeNamed(t, names...), FolderOptions{TimesFromName: true})
		if err == nil {
			t.Fatalf("%v: read, want the mix refused", names)
		}
		msg := err.Error()
		if !strings.Contains(msg, names[0]) || !strings.Contains(msg, names[1]) || !strings.Contains(msg, "different units") || strings.Count(msg, "\n") > 0 {
			t.Errorf("%v: %q, want one line naming both files", names, msg)
		}
	}
}
