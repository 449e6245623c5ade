package spectra

import (
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/jcamp"
)

// The Unix times below were computed outside the project with GNU coreutils:
// date -u -d "2019-07-29 13:20:49-04:00" +%s.%N and so on.
func TestStampIn(t *testing.T) {
	cases := []struct {
		text string
		unix float64 // seconds since 1970-01-01T00:00:00Z
	}{
		{"scan 2019-07-29T13:20:49", 1564406449},                         // ISO 8601, no zone read as UTC
		{"2019-07-29T13:20:49Z_a", 1564406449},                           // ISO 8601 with Z
		{"run_2019-07-29T13:20:49-04:00", 1564420849},                    // ISO 8601 with offset
		{"2019-07-29 13-20-49", 1564406449},                              // ISO date, '-' for ':' (file names)
		{"x_2019-07-29T13:20:49.25+05:30", 1564386649.25},                // fraction and offset
		{"20190729_132049", 1564406449},                                  // ISO 8601 basic format
		{"spec20190729T132049.csv", 1564406449},                          // basic format with T
		{"Mon Jul 29 13-20-49 2019 (GMT-04-00)", 1564420849},             // weekday month day time year zone
		{"Thu Jul 25 14-53-51 2019 (GMT-04-00)", 1564080831},             // the real series' first file name
		{"Tuesday Feb 29 00:00:00 2000", 951782400},                      // leap day; full weekday word
		{"2000-02-29T00-00-00", 951782400},                               // leap day
		{"Mon Jul 29 13-20-49 2019 (UTC+00-00) extra words", 1564406449}, // zone named UTC
	}
	for _, c := range cases {
		got, ok, err := stampIn(c.text)
		if err != nil || !ok {
			t.Errorf("%q: ok %v, err %v", c.text, ok, err)
			continue
		}
		if u := float64(got.UnixNano()) / 1e9; math.Abs(u-c.unix) > 1e-6 {
			t.Errorf("%q: %v = %.3f s, want %.3f (GNU date)", c.text, got, u, c.unix)
		}
	}
}

func TestStampInRefuses(t *testing.T) {
	// Not stamps: counters and plain times must fall back to the last number.
	for _, s := range []string{"scan_0120", "s_0060", "t 12.5 min", "12345678_123456", "99991399_000000"} {
		if _, ok, err := stampIn(s); ok || err != nil {
			t.Errorf("%q read as a stamp (err %v)", s, err)
		}
	}
	// Stamps that are no real moment: an error, not a wrong time.
	// 2019-07-29 was a Monday (GNU date -d 2019-07-29 +%a); 2019 has no 29 February.
	for _, c := range []struct{ text, want string }{
		{"Tue Jul 29 13-20-49 2019", "was a Monday"},
		{"2019-02-29T10:00:00", "not a real date"},
		{"2019-07-29T25-00-00", "not a real date"},
	} {
		_, ok, err := stampIn(c.text)
		if !ok || err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q: ok %v, err %v, want %q", c.text, ok, err, c.want)
		}
	}
}

// Real data: four spectra of the urethane ATR-FTIR series (jevandezande/spectra,
// commit a2b2dc39, folder "1-butanol + N 3400", MIT; testdata/urethane-atr/README.md).
// Their names carry stamps 14:53:51, 14:56:58, 15:01:10 and 15:59:07 of one day,
// so the times after the first are 187, 439 and 3916 s (GNU date: 1564080831,
// 1564081018, 1564081270, 1564084747).
func TestFolderTimesFromRealStamps(t *testing.T) {
	s, err := ReadFolder(filepath.Join("..", "..", "testdata", "urethane-atr"), FolderOptions{TimesFromName: true})
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{0, 187, 439, 3916}
	if len(s.Times) != len(want) {
		t.Fatalf("%d times, want %d", len(s.Times), len(want))
	}
	for i, w := range want {
		if s.Times[i] != w {
			t.Errorf("time %d = %g s, want %g", i, s.Times[i], w)
		}
	}
	if !strings.Contains(s.Names[3], "15-59-07") {
		t.Errorf("last spectrum %s, want the 15-59-07 file", s.Names[3])
	}
	if s.AxisName != "wavenumber" || len(s.Axis) != 1452 {
		t.Errorf("axis %s with %d points, want wavenumber with 1452 (rows 2000–2700 cm⁻¹)", s.AxisName, len(s.Axis))
	}
}

// A folder mixing stamped and plain names is refused: the two would give
// times on different clocks.
func TestFolderMixedStampsRefused(t *testing.T) {
	dir := t.TempDir()
	for _, n := range []string{"2019-07-29T13-20-49.csv", "scan_0060.csv"} {
		if err := os.WriteFile(filepath.Join(dir, n), []byte("1000,0.1\n1001,0.2\n1002,0.3\n"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	_, err := ReadFolder(dir, FolderOptions{TimesFromName: true})
	if err == nil || !strings.Contains(err.Error(), "scan_0060.csv") || !strings.Contains(err.Error(), "no date-time stamp") {
		t.Fatalf("err %v, want the plain file named", err)
	}
}

// JCAMP-DX acquisition times: ##LONGDATE=YYYY/MM/DD HH:MM:SS (JCAMP-DX 5.01)
// and ##DATE=YY/MM/DD with ##TIME=HH:MM:SS (JCAMP-DX 4.24), both from memory.
func TestJCAMPAcquired(t *testing.T) {
	cases := []struct {
		labels []jcamp.Label
		unix   float64
		ok     bool
	}{
		{[]jcamp.Label{{Name: "LONGDATE", Value: "2019/07/29 13:20:49"}}, 1564406449, true},
		{[]jcamp.Label{{Name: "LONGDATE", Value: "2019/07/29 13:20:49.25 +0530"}}, 1564386649.25, true},
		{[]jcamp.Label{{Name: "DATE", Value: "19/07/29"}, {Name: "TIME", Value: "13:20:49"}}, 1564406449, true},
		{[]jcamp.Label{{Name: "DATE", Value: "2019/07/29"}, {Name: "TIME", Value: "13:20"}}, 1564406400, true},
		{[]jcamp.Label{{Name: "TIME", Value: "13:20:49"}}, 0, false}, // a time of day alone
		{[]jcamp.Label{{Name: "LONGDATE", Value: "yesterday"}}, 0, false},
	}
	for i, c := range cases {
		got, ok := jcampAcquired(jcamp.Block{Labels: c.labels})
		if ok != c.ok {
			t.Errorf("case %d: ok %v, want %v", i, ok, c.ok)
			continue
		}
		if u := float64(got.UnixNano()) / 1e9; ok && math.Abs(u-c.unix) > 1e-6 {
			t.Errorf("case %d: %.3f s, want %.3f (GNU date)", i, u, c.unix)
		}
	}
}

// A folder of JCAMP-DX files with acquisition times in their headers needs
// neither --times nor --times-from-name.
func TestFolderTimesFromJCAMPHeaders(t *testing.T) {
	dir := t.TempDir()
	stamps := map[string]string{"b.jdx": "2019/07/29 13:21:49", "a.jdx": "2019/07/29 13:20:49", "c.jdx": "2019/07/29 14:20:49"}
	for n, d := range stamps {
		body := "##TITLE=" + n + "\n##JCAMP-DX=4.24\n##DATA TYPE=INFRARED SPECTRUM\n##LONGDATE=" + d +
			"\n##XUNITS=1/CM\n##YUNITS=ABSORBANCE\n##NPOINTS=3\n##XYPOINTS=(XY..XY)\n1000,0.1\n1001,0.2\n1002,0.3\n##END=\n"
		if err := os.WriteFile(filepath.Join(dir, n), []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	s, err := ReadFolder(dir, FolderOptions{})
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{0, 60, 3600} // 13:20:49, 13:21:49, 14:20:49
	for i, w := range want {
		if s.Times[i] != w {
			t.Errorf("time %d = %g, want %g", i, s.Times[i], w)
		}
	}
	// Without the headers the folder still needs times.
	os.WriteFile(filepath.Join(dir, "d.csv"), []byte("1000,0.1\n1001,0.2\n1002,0.3\n"), 0o644)
	if _, err := ReadFolder(dir, FolderOptions{}); err == nil || !strings.Contains(err.Error(), "needs acquisition times") {
		t.Errorf("err %v, want the folder to ask for times", err)
	}
}
