package spectra

import (
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// Exports saved with a notes file, a peak list or a README beside the
// spectra are common practice; the tests put such a file among real
// urethane exports (testdata/urethane-atr, named by date-time stamps).

// urethaneWith copies the four stamped urethane exports into a new folder
// and writes name there with body.
func urethaneWith(t *testing.T, name, body string) string {
	t.Helper()
	src := filepath.Join("..", "..", "testdata", "urethane-atr")
	dir := t.TempDir()
	entries, err := os.ReadDir(src)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if strings.HasSuffix(e.Name(), ".CSV") {
			b, err := os.ReadFile(filepath.Join(src, e.Name()))
			if err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(filepath.Join(dir, e.Name()), b, 0o644); err != nil {
				t.Fatal(err)
			}
		}
	}
	if err := os.WriteFile(filepath.Join(dir, name), []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	return dir
}

// The stamps' differences, 0, 187, 439 and 3916 s, were computed outside
// the project with GNU date (as in TestFolderTimesFromRealStamps).
var urethaneTimes = []float64{0, 187, 439, 3916}

func checkUrethaneTimes(t *testing.T, s *Series) {
	t.Helper()
	if !slices.Equal(s.Times, urethaneTimes) {
		t.Errorf("times %v, want %v", s.Times, urethaneTimes)
	}
}

// A file that is no spectrum is named as such, with --drop as a fix, rather
// than as a name without a time; --drop FILE then leaves it out before the
// names are read.
func TestStrayFileNamedAndDropped(t *testing.T) {
	cases := []struct{ name, body, want string }{
		{"notes.txt", "Operator: AB\nCatalyst 1.00 %\nCrystal cleaned with IPA\n", "notes.txt: is not a spectrum"},
		// Three points against 1452: a peak list (describeAxisMismatch).
		{"peaklist.csv", "2270.1,0.52\n1700.3,0.31\n1530.2,0.22\n", "looks like a peak list"},
	}
	for _, c := range cases {
		dir := urethaneWith(t, c.name, c.body)
		_, err := ReadFolder(dir, FolderOptions{TimesFromName: true})
		if err == nil || !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), "--drop "+c.name) || strings.Contains(err.Error(), "\n") {
			t.Errorf("%s: err %v, want one line with %q and --drop %s", c.name, err, c.want, c.name)
		}
		s, err := ReadFolder(dir, FolderOptions{TimesFromName: true, Drop: []string{c.name}})
		if err != nil {
			t.Fatalf("%s with --drop: %v", c.name, err)
		}
		checkUrethaneTimes(t, s)
		if !slices.Equal(s.Left, []string{c.name}) || !slices.ContainsFunc(s.Notes, func(n string) bool { return strings.Contains(n, c.name+" left out") }) {
			t.Errorf("%s: left %v, notes %q, want it left out with a note", c.name, s.Left, s.Notes)
		}
	}
}

// --drop naming a spectrum of the series keeps it in the folder: it is set
// aside later at its time, not left out.
func TestDropKeepsOwnSpectrum(t *testing.T) {
	dir := urethaneWith(t, "notes.txt", "Operator: AB\n")
	own := "Thu Jul 25 14-56-58 2019 (GMT-04-00).CSV"
	s, err := ReadFolder(dir, FolderOptions{TimesFromName: true, Drop: []string{"notes.txt", own}})
	if err != nil {
		t.Fatal(err)
	}
	checkUrethaneTimes(t, s)
	if !slices.Equal(s.Left, []string{"notes.txt"}) {
		t.Errorf("left %v, want notes.txt only", s.Left)
	}
}

// One file of several that does not read, while its name gives a time like
// the others', keeps its own message and gains the advice to leave it out;
// two such files keep their message alone (the folder may be the fault).
func TestLoneFaultAdvice(t *testing.T) {
	dir := writeNamed(t, "scan_0000.csv", "scan_0060.csv", "scan_0120.csv")
	os.WriteFile(filepath.Join(dir, "notes_9.txt"), []byte("Operator: AB\nno numbers here\n"), 0o644)
	_, err := ReadFolder(dir, FolderOptions{TimesFromName: true})
	if err == nil || !strings.Contains(err.Error(), "notes_9.txt:1:") || !strings.Contains(err.Error(), "--drop notes_9.txt") {
		t.Errorf("err %v, want the file's line and --drop notes_9.txt", err)
	}
	os.WriteFile(filepath.Join(dir, "notes_8.txt"), []byte("Operator: AB\nno numbers here\n"), 0o644)
	_, err = ReadFolder(dir, FolderOptions{TimesFromName: true})
	if err == nil || strings.Contains(err.Error(), "--drop") {
		t.Errorf("err %v, want the read error without --drop advice", err)
	}
}

// A README among JCAMP-DX files whose headers carry ##LONGDATE (JCAMP-DX
// 5.01, from memory) is the file that keeps the headers' times from being
// used: named, and --drop makes them usable.
func TestNotJCAMPNamed(t *testing.T) {
	dir := t.TempDir()
	stamps := map[string]string{"a.jdx": "2019/07/29 13:20:49", "b.jdx": "2019/07/29 13:21:49", "c.jdx": "2019/07/29 14:20:49"}
	for n, d := range stamps {
		body := "##TITLE=" + n + "\n##JCAMP-DX=4.24\n##DATA TYPE=INFRARED SPECTRUM\n##LONGDATE=" + d +
			"\n##XUNITS=1/CM\n##YUNITS=ABSORBANCE\n##NPOINTS=3\n##XYPOINTS=(XY..XY)\n1000,0.1\n1001,0.2\n1002,0.3\n##END=\n"
		if err := os.WriteFile(filepath.Join(dir, n), []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	os.WriteFile(filepath.Join(dir, "README.txt"), []byte("exported spectra\n"), 0o644)
	if MayCarryTimes(dir, FolderOptions{}) {
		t.Error("MayCarryTimes with a README: true, want false")
	}
	if name, n := NotJCAMP(dir, FolderOptions{}); name != "README.txt" || n != 3 {
		t.Errorf("NotJCAMP = %q, %d; want README.txt, 3", name, n)
	}
	opt := FolderOptions{Drop: []string{"README.txt"}}
	if !MayCarryTimes(dir, opt) {
		t.Error("MayCarryTimes with --drop README.txt: false, want true")
	}
	s, err := ReadFolder(dir, opt)
	if err != nil {
		t.Fatal(err)
	}
	if want := []float64{0, 60, 3600}; !slices.Equal(s.Times, want) { // 13:20:49, 13:21:49, 14:20:49
		t.Errorf("times %v, want %v", s.Times, want)
	}
}

// A peak list whose name gives a time like the others' is refused for its
// axis, with --drop among the fixes; --drop then leaves it out.
func TestDropPeakListWithTime(t *testing.T) {
	name := "peaks 2019-07-25T15-30-00-04:00.csv"
	dir := urethaneWith(t, name, "2270.1,0.52\n1700.3,0.31\n1530.2,0.22\n")
	_, err := ReadFolder(dir, FolderOptions{TimesFromName: true})
	if err == nil || !strings.Contains(err.Error(), "looks like a peak list") || !strings.Contains(err.Error(), "--drop "+name) {
		t.Errorf("err %v, want the peak list named with --drop", err)
	}
	s, err := ReadFolder(dir, FolderOptions{TimesFromName: true, Drop: []string{name}})
	if err != nil {
		t.Fatal(err)
	}
	checkUrethaneTimes(t, s)
	if !slices.Equal(s.Left, []string{name}) {
		t.Errorf("left %v, want %s", s.Left, name)
	}
}
