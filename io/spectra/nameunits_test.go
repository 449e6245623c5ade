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
	cases := []nameTimes{
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
	checkNameTimes(t, cases)
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

// A unit set off from the number by one '_', '-' or blank is the number's
// unit too (run7_t0.35_min), and the decimal sign may be a comma
// (run7_t0,35min): SI Brochure, 9th ed., 5.4.4, and ISO 80000-1 allow the
// comma or the point on the line (from memory); min and h as in
// TestNameUnitsRead. Letters that only begin with a unit are no unit
// (sample_2_mineral is a plain 2, in --time-unit's unit).
func TestNameUnitsSeparatedAndDecimalComma(t *testing.T) {
	cases := []nameTimes{
		{[]string{"run7_t0.0000_min.csv", "run7_t0.3500_min.csv", "run7_t2.5_min.csv"}, "s", []float64{0, 21, 150}},
		{[]string{"run7_t0,0000min.csv", "run7_t0,3500min.csv", "run7_t2,5min.csv"}, "s", []float64{0, 21, 150}},
		{[]string{"run7_t0,35 min.csv", "run7_t2,5 min.csv"}, "h", []float64{21, 150}},
		{[]string{"a_1-h.csv", "a_2-H.csv"}, "min", []float64{3600, 7200}},
		{[]string{"t_0,5.csv", "t_1,5.csv"}, "min", []float64{30, 90}},
		// "0,250" cannot be digit grouping, so "1,500" is 1.5 too.
		{[]string{"t_0,250s.csv", "t_1,500s.csv"}, "min", []float64{0.25, 1.5}},
		{[]string{"sample_2_mineral.csv", "sample_3_mineral.csv"}, "min", []float64{120, 180}},
		{[]string{"x_10_scans.csv", "x_20_scans.csv"}, "s", []float64{10, 20}},
		{[]string{"x_1_m.csv", "x_2_m.csv"}, "s", []float64{1, 2}},
	}
	checkNameTimes(t, cases)
}

// Names whose commas could all be digit grouping (1,500: 1.5 or 1500;
// groups of three digits, SI Brochure 9th ed., from memory), that mix
// decimal commas and points, or that mix units written apart from the
// number, are refused in one line naming a file (two for a mix).
func TestNameMarksRefused(t *testing.T) {
	for _, c := range []struct {
		names []string
		want  []string
	}{
		{[]string{"t_1,500s.csv", "t_2,000s.csv"}, []string{"t_1,500s.csv", "decimal comma or digit grouping"}},
		{[]string{"t_0,5min.csv", "t_1.5min.csv"}, []string{"t_0,5min.csv", "t_1.5min.csv", "different decimal marks"}},
		{[]string{"t_1_min.csv", "t_90_s.csv"}, []string{"t_1_min.csv", "t_90_s.csv", "different units"}},
		{[]string{"t_1_min.csv", "t_2_min.csv", "t_3.csv"}, []string{"t_1_min.csv", "t_3.csv", "different units"}},
	} {
		_, err := ReadFolder(writeNamed(t, c.names...), FolderOptions{TimesFromName: true})
		if err == nil {
			t.Errorf("%v: read, want refused", c.names)
			continue
		}
		msg := err.Error()
		for _, w := range c.want {
			if !strings.Contains(msg, w) || strings.Contains(msg, "\n") {
				t.Errorf("%v: %q, want one line with %q", c.names, msg, w)
			}
		}
	}
}

// nameTimes is a folder's file names, --time-unit (the unit of plain
// numbers) and the times in seconds they must read as.
type nameTimes struct {
	names []string
	unit  string
	want  []float64
}

// checkNameTimes reads each case's folder with --times-from-name and
// compares its times.
func checkNameTimes(t *testing.T, cases []nameTimes) {
	t.Helper()
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
