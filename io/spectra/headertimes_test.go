package spectra

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// writeStamped writes one JCAMP-DX single beam per name with the header
// line ##LONGDATE=stamp (no line when stamp is ""). ##LONGDATE's form is
// YYYY/MM/DD HH:MM:SS[.SSSS] [±UUUU], the offset from UTC in hours and
// minutes (JCAMP-DX 5.01, Lampen et al., Pure Appl. Chem. 71 (1999)
// 1549–1556; from memory); the rest of the header is JCAMP-DX 4.24's
// required labels (McDonald & Wilks, Appl. Spectrosc. 42 (1988) 151).
func writeStamped(t *testing.T, dir string, files, stamps []string) {
	t.Helper()
	for i, n := range files {
		body := "##TITLE=" + n + "\n##JCAMP-DX=4.24\n##DATA TYPE=INFRARED SPECTRUM\n"
		if stamps[i] != "" {
			body += "##LONGDATE=" + stamps[i] + "\n"
		}
		body += "##XUNITS=1/CM\n##YUNITS=ARBITRARY UNITS\n##NPOINTS=3\n##XYPOINTS=(XY..XY)\n1000,5\n1001,6\n1002,7\n##END=\n"
		if err := os.WriteFile(filepath.Join(dir, n), []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// Spectra every 30 s, named by a counter: the first in UTC+1 by its
// offset, 10:00:00 +0100 being 09:00:00 UTC, so the series is 0, 30, 60,
// 90 s (the definition's ±UUUU, quoted above writeStamped).
var (
	counterNames = []string{"scan_001.jdx", "scan_002.jdx", "scan_003.jdx", "scan_004.jdx"}
	every30s     = []string{"2026/11/30 10:00:00 +0100", "2026/11/30 09:00:30", "2026/11/30 09:01:00", "2026/11/30 09:01:30"}
)

func wantTimes(t *testing.T, got, want []float64) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("times %v, want %v", got, want)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("times %v, want %v", got, want)
		}
	}
}

// With --times-from-name the instrument's stamps win over counters in the
// names (scan_002 is not 1 s after scan_001), and the disagreement is one
// warning naming the first file at odds and what to do.
func TestHeaderTimesWinOverNames(t *testing.T) {
	dir := t.TempDir()
	writeStamped(t, dir, counterNames, every30s)
	s, err := ReadFolder(dir, FolderOptions{TimesFromName: true})
	if err != nil {
		t.Fatal(err)
	}
	wantTimes(t, s.Times, []float64{0, 30, 60, 90})
	if len(s.Warnings) != 1 {
		t.Fatalf("warnings %q, want one", s.Warnings)
	}
	w := s.Warnings[0]
	for _, part := range []string{"scan_002.jdx: its name puts it 1 s after scan_001.jdx", "acquisition time 30 s", "3 of 4 spectra", "headers were used", "--times FILE"} {
		if !strings.Contains(w, part) {
			t.Errorf("warning %q lacks %q", w, part)
		}
	}
	if strings.Contains(w, "\n") {
		t.Errorf("warning %q is not one line", w)
	}
	// Without any option the same folder reads the same times, silently.
	s, err = ReadFolder(dir, FolderOptions{})
	if err != nil {
		t.Fatal(err)
	}
	wantTimes(t, s.Times, []float64{0, 30, 60, 90})
	if len(s.Warnings) != 0 {
		t.Errorf("warnings %q, want none", s.Warnings)
	}
}

// Names that carry the same times as the headers agree: no warning.
func TestHeaderTimesAgreeWithNames(t *testing.T) {
	dir := t.TempDir()
	writeStamped(t, dir, []string{"t0000.jdx", "t0030.jdx", "t0060.jdx", "t0090.jdx"}, every30s)
	s, err := ReadFolder(dir, FolderOptions{TimesFromName: true})
	if err != nil {
		t.Fatal(err)
	}
	wantTimes(t, s.Times, []float64{0, 30, 60, 90})
	if len(s.Warnings) != 0 {
		t.Errorf("warnings %q, want none", s.Warnings)
	}
}

// A --times table overrules the headers (the one way to correct a wrong
// clock); one that counts from the mixing, 105 s before the first
// spectrum, agrees with them in every interval, so it is silent; one whose
// third row is off by 20 s is said, that file named.
func TestTimesTableOverrulesHeaders(t *testing.T) {
	dir := t.TempDir()
	writeStamped(t, dir, counterNames, every30s)
	table := filepath.Join(t.TempDir(), "times.csv")
	write := func(rows string) {
		if err := os.WriteFile(table, []byte("file,time_s\n"+rows), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	write("scan_001.jdx,-105\nscan_002.jdx,-75\nscan_003.jdx,-45\nscan_004.jdx,-15\n")
	s, err := ReadFolder(dir, FolderOptions{TimesFile: table})
	if err != nil {
		t.Fatal(err)
	}
	wantTimes(t, s.Times, []float64{-105, -75, -45, -15})
	if len(s.Warnings) != 0 {
		t.Errorf("warnings %q, want none", s.Warnings)
	}
	write("scan_001.jdx,0\nscan_002.jdx,30\nscan_003.jdx,80\nscan_004.jdx,90\n")
	s, err = ReadFolder(dir, FolderOptions{TimesFile: table})
	if err != nil {
		t.Fatal(err)
	}
	wantTimes(t, s.Times, []float64{0, 30, 80, 90})
	if len(s.Warnings) != 1 || !strings.Contains(s.Warnings[0], "scan_003.jdx: --times "+table+" puts it 80 s after scan_001.jdx, its JCAMP-DX acquisition time 60 s (1 of 4") ||
		!strings.Contains(s.Warnings[0], "the table's times were used") {
		t.Errorf("warnings %q, want one naming scan_003.jdx", s.Warnings)
	}
}

// Without an option, a file whose header has no time is named.
func TestHeaderTimesMissingNamesTheFile(t *testing.T) {
	dir := t.TempDir()
	writeStamped(t, dir, counterNames, []string{every30s[0], every30s[1], "", every30s[3]})
	_, err := ReadFolder(dir, FolderOptions{})
	if err == nil || !strings.Contains(err.Error(), "scan_003.jdx: its JCAMP-DX header has no acquisition time") || !strings.Contains(err.Error(), "--times-from-name") {
		t.Fatalf("err %v, want scan_003.jdx named", err)
	}
	// With names asked for, a folder not every header of which has a time
	// takes the names' times, as asked.
	s, err := ReadFolder(dir, FolderOptions{TimesFromName: true})
	if err != nil {
		t.Fatal(err)
	}
	wantTimes(t, s.Times, []float64{1, 2, 3, 4})
}

// Several blocks of one LINK file follow the same rule: their ##LONGDATE
// wins over numbers in their ##TITLEs.
func TestHeaderTimesWinOverTitles(t *testing.T) {
	var b strings.Builder
	b.WriteString("##TITLE=series\n##JCAMP-DX=5.01\n##DATA TYPE=LINK\n##BLOCKS=3\n")
	for i, st := range every30s[:3] {
		b.WriteString("##TITLE=scan " + string(rune('1'+i)) + "\n##JCAMP-DX=5.01\n##DATA TYPE=INFRARED SPECTRUM\n##BLOCK_ID=" + string(rune('1'+i)) +
			"\n##LONGDATE=" + st + "\n##XUNITS=1/CM\n##YUNITS=ARBITRARY UNITS\n##NPOINTS=3\n##XYPOINTS=(XY..XY)\n1000,5\n1001,6\n1002,7\n##END=\n")
	}
	b.WriteString("##END=\n")
	p := filepath.Join(t.TempDir(), "series.jdx")
	if err := os.WriteFile(p, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	s, err := Load(p, FolderOptions{TimesFromName: true})
	if err != nil {
		t.Fatal(err)
	}
	wantTimes(t, s.Times, []float64{0, 30, 60})
	if len(s.Warnings) != 1 || !strings.Contains(s.Warnings[0], "its ##TITLE puts it 1 s after") {
		t.Errorf("warnings %q, want the titles' disagreement", s.Warnings)
	}
}
