package pipeline

import (
	"bytes"
	"crypto/sha256"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"runtime"
	"slices"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/bandsolve/bandsolve/io/demo"
	"github.com/bandsolve/bandsolve/io/output"
)

// writeScans writes a subset of the demo's single beams as a folder of
// two-column files named by their time, plus the blank.
func writeScans(t *testing.T, dir string, every int) {
	t.Helper()
	tr := demo.Make(1)
	for i := 0; i < len(tr.Times); i += every {
		tab := output.Table{Header: []string{"wavenumber", "intensity"}}
		for j, x := range tr.Axis {
			tab.Rows = append(tab.Rows, []string{output.Float(x), output.Float(tr.Beams.At(i, j))})
		}
		writeFile(t, filepath.Join(dir, "scans", fmt.Sprintf("scan_%04g.csv", tr.Times[i])), tab.CSV())
	}
	tab := output.Table{Header: []string{"wavenumber", "intensity"}}
	for j, x := range tr.Axis {
		tab.Rows = append(tab.Rows, []string{output.Float(x), output.Float(tr.Blank[j])})
	}
	writeFile(t, filepath.Join(dir, "blank.csv"), tab.CSV())
}

func scanSettings(dir, out string) *Settings {
	s := NewSettings()
	s.Dir = dir
	s.Data = []string{"scans"}
	s.TimesFromName = true
	s.Kind = "single-beam"
	s.Blanks = []string{"blank.csv"}
	s.Pre = 1
	s.Model = "A -> B -> C"
	s.Out = out
	s.Quiet = true
	return s
}

func folderFiles(t *testing.T, dir string) map[string][]byte {
	t.Helper()
	names, err := listFiles(dir)
	if err != nil {
		t.Fatal(err)
	}
	got := map[string][]byte{}
	for _, n := range names {
		b, err := os.ReadFile(filepath.Join(dir, n))
		if err != nil {
			t.Fatal(err)
		}
		got[n] = b
	}
	return got
}

// Same inputs, same bytes: two runs, and GOMAXPROCS 1 against 2 (the
// readers, the factor analysis and the report work in parallel chunks).
// Every file is compared except the manifest, whose start time differs.
func TestDeterministicAcrossRunsAndThreads(t *testing.T) {
	dir := t.TempDir()
	writeScans(t, dir, 4)
	prev := runtime.GOMAXPROCS(0)
	defer runtime.GOMAXPROCS(prev)
	var ref map[string][]byte
	for i, procs := range []int{2, 1, 2} {
		runtime.GOMAXPROCS(procs)
		out := fmt.Sprintf("out%d", i)
		if _, err := Execute(scanSettings(dir, out), Streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}); err != nil {
			t.Fatal(err)
		}
		got := folderFiles(t, filepath.Join(dir, out))
		delete(got, ManifestName)
		if ref == nil {
			ref = got
			for _, f := range []string{"spectra.csv", "profiles.csv", "summary.json", RecordName, "report.html"} {
				if _, ok := got[f]; !ok {
					t.Fatalf("the run wrote no %s", f)
				}
			}
			continue
		}
		if len(got) != len(ref) {
			t.Errorf("run %d (GOMAXPROCS %d) wrote %d files, the first %d", i+1, procs, len(got), len(ref))
		}
		for name, want := range ref {
			if d := firstDifference(name, want, got[name]); d != nil {
				t.Errorf("run %d (GOMAXPROCS %d): %s", i+1, procs, d)
			}
		}
	}
}

// The as-run record read back gives every recorded setting its value.
func TestRecordReadsBack(t *testing.T) {
	dir := t.TempDir()
	writeScans(t, dir, 10)
	s := scanSettings(dir, "out")
	s.Kind = "" // the record makes the kind explicit
	s.Regions = []string{"1850:1050"}
	s.Excludes = []string{"1400:1350", "1300:1290"}
	s.Map = "A=1,B=2,C=3"
	s.Report, s.Bands = "off", "off"
	s.MaxIter = 500
	if _, err := Execute(s, Streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}); err != nil {
		t.Fatal(err)
	}
	rec := filepath.Join(dir, "out", RecordName)
	back := NewSettings()
	if _, err := LoadCommandFile(rec, back, nil); err != nil {
		t.Fatal(err)
	}
	if filepath.Clean(back.Dir) != filepath.Clean(dir) {
		t.Errorf("record's folder %s, the run's %s", back.Dir, dir)
	}
	s.Kind = "single-beam"
	for _, o := range Options() {
		if !o.Record {
			continue
		}
		if got, want := back.Get(o.Name), s.Get(o.Name); !reflect.DeepEqual(got, want) {
			t.Errorf("%s: record gives %q, the run had %q", o.Name, got, want)
		}
	}
	text, _ := os.ReadFile(rec)
	for _, o := range Options() {
		// A switch written only when on (fit-t0) is off here.
		if want := o.Record && !o.onlyWhenOn; want != strings.Contains(string(text), "\n"+o.Name+" ") {
			t.Errorf("%s: recorded %v, want %v", o.Name, !want, want)
		}
	}
	m, err := ReadManifest(filepath.Join(dir, "out"))
	if err != nil {
		t.Fatal(err)
	}
	// Every scan file read (11 of the demo's 101 times), then the blank,
	// each with its SHA-256, named relative to the output folder.
	if len(m.Inputs) != 12 || m.Inputs[0].Path != "../scans/scan_0000.csv" || m.Inputs[11].Path != "../blank.csv" {
		t.Fatalf("manifest inputs %+v", m.Inputs)
	}
	_, sum, _ := HashFile(filepath.Join(dir, "blank.csv"))
	if m.Inputs[11].SHA256 != sum || len(sum) != 64 {
		t.Errorf("blank's SHA-256 %s, recorded %s", sum, m.Inputs[11].SHA256)
	}
	if m.Seed != 1 || m.Version != Version || m.Host.OS != runtime.GOOS || m.Started == "" {
		t.Errorf("manifest %+v", m)
	}
}

func TestFirstDifference(t *testing.T) {
	for _, c := range []struct {
		a, b string
		line int
	}{
		{"x\ny\n", "x\ny\n", 0},
		{"x\ny\n", "x\nz\n", 2},
		{"x\ny\n", "x\ny\nz\n", 3},
		{"x\ny\n", "x\ny", 2},
	} {
		d := firstDifference("f", []byte(c.a), []byte(c.b))
		switch {
		case c.line == 0 && d != nil:
			t.Errorf("%q vs %q: %v", c.a, c.b, d)
		case c.line > 0 && (d == nil || d.Line != c.line):
			t.Errorf("%q vs %q: %v, want line %d", c.a, c.b, d, c.line)
		}
	}
}

// SHA-256 of "abc": FIPS 180-2, Appendix B.1.
func TestHashFileKnownVector(t *testing.T) {
	p := filepath.Join(t.TempDir(), "abc")
	writeFile(t, p, []byte("abc"))
	n, sum, err := HashFile(p)
	if err != nil || n != 3 || sum != "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad" {
		t.Errorf("HashFile(abc) = %d, %s, %v", n, sum, err)
	}
}

// The sums begun ahead of the manifest are SHA-256's: "abc" gives the
// digest of FIPS 180-2's first example (appendix B.1); a file not begun is
// hashed when asked for, a path given relative to the working folder finds
// the sum begun under its absolute path, and a file that is missing gives
// HashFile's own error.
func TestInputSumsAheadOfTheManifest(t *testing.T) {
	dir := t.TempDir()
	abc, other, missing := filepath.Join(dir, "abc.csv"), filepath.Join(dir, "other.csv"), filepath.Join(dir, "gone.csv")
	if err := os.WriteFile(abc, []byte("abc"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(other, []byte(""), 0o644); err != nil {
		t.Fatal(err)
	}
	h := startInputSums([]string{abc, missing})
	const fips = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
	wd, _ := os.Getwd()
	rel, err := filepath.Rel(wd, abc)
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range []string{abc, rel} {
		if n, sum, err := h.hash(p); err != nil || n != 3 || sum != fips {
			t.Errorf("%s: %d bytes, %s, %v; want 3 bytes, %s", p, n, sum, err, fips)
		}
	}
	// SHA-256 of no bytes (the empty message's widely published digest; from memory).
	if n, sum, err := h.hash(other); err != nil || n != 0 || sum != "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855" {
		t.Errorf("file not begun: %d bytes, %s, %v", n, sum, err)
	}
	_, _, want := HashFile(missing)
	if _, _, err := h.hash(missing); err == nil || want == nil || err.Error() != want.Error() {
		t.Errorf("missing file: %v, want %v", err, want)
	}
}

// A run that writes a folder hashes its data files while it analyses them
// and has finished hashing when it returns (no goroutine outlives it); the
// sums are HashFile's (checked against FIPS 180-2 above) for every data
// file. Run alone, which writes no manifest, hashes nothing.
func TestFolderRunHashesItsDataBeforeReturning(t *testing.T) {
	dir := t.TempDir()
	writeScans(t, dir, 10)
	r, err := runForFolder(scanSettings(dir, "out"), nil)
	if err != nil {
		t.Fatal(err)
	}
	select {
	case <-r.inputSums.done:
	default:
		t.Fatal("runForFolder returned before the data files were hashed")
	}
	files := dataFiles(r)
	if len(files) != len(r.Experiments[0].Series.Names) || len(r.inputSums.sums) != len(files) {
		t.Fatalf("%d data files, %d hashed; want one per spectrum file (%d)", len(files), len(r.inputSums.sums), len(r.Experiments[0].Series.Names))
	}
	for _, f := range files {
		n, sum, err := HashFile(f)
		if got := r.inputSums.sums[f]; err != nil || got.err != nil || got.n != n || got.sum != sum {
			t.Errorf("%s: hashed %d bytes %s (%v), HashFile gives %d bytes %s (%v)", f, got.n, got.sum, got.err, n, sum, err)
		}
	}
	plain, err := Run(scanSettings(dir, "out"), nil)
	if err != nil {
		t.Fatal(err)
	}
	if plain.inputSums != nil {
		t.Error("Run hashed the data files, though it writes no manifest")
	}
}

// The low-priority hashing reads and hashes a piece at a time: a message
// longer than several pieces gives its SHA-256 all the same. One million
// times "a" is FIPS 180-2's third example (appendix B.3; digest quoted
// from memory, and checked here against crypto/sha256 too), about 3.8
// pieces; "abc" is its first (B.1), less than one piece.
func TestHashYieldingIsSHA256(t *testing.T) {
	million := bytes.Repeat([]byte("a"), 1_000_000)
	cases := []struct {
		name string
		data []byte
		want string
	}{
		{"abc", []byte("abc"), "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"},
		{"a million a", million, "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0"},
		{"whole pieces", million[:2*hashPiece], fmt.Sprintf("%x", sha256.Sum256(million[:2*hashPiece]))},
		{"empty", nil, "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"},
	}
	for _, c := range cases {
		if got := fmt.Sprintf("%x", sha256.Sum256(c.data)); got != c.want {
			t.Fatalf("%s: crypto/sha256 gives %s, the quoted digest is %s", c.name, got, c.want)
		}
		p := filepath.Join(t.TempDir(), "data")
		writeFile(t, p, c.data)
		n, sum, err := hashFileYielding(p, new(hashTurn))
		if err != nil || n != int64(len(c.data)) || sum != c.want {
			t.Errorf("%s: %d bytes, %s, %v; want %d bytes, %s", c.name, n, sum, err, len(c.data), c.want)
		}
	}
}

// Sums begun after others take the earlier ones' and hash only the files
// those did not begin; when every file was begun the earlier sums serve.
// The digests are checked against HashFile's (FIPS 180-2 above).
func TestInputSumsAfterTakeTheEarlierOnes(t *testing.T) {
	dir := t.TempDir()
	a, b := filepath.Join(dir, "a.csv"), filepath.Join(dir, "b.csv")
	writeFile(t, a, []byte("abc"))
	writeFile(t, b, []byte("abcd"))
	first := startInputSums([]string{a})
	if got := startInputSumsAfter(first, []string{a}); got != first {
		t.Error("sums of files all begun were begun again")
	}
	both := startInputSumsAfter(first, []string{a, b})
	both.wait()
	if len(both.sums) != 2 || !slices.Equal(both.begun(), []string{a, b}) {
		t.Fatalf("sums of %v, begun %v; want both files", both.sums, both.begun())
	}
	for _, p := range []string{a, b} {
		n, sum, err := HashFile(p)
		if got := both.sums[p]; err != nil || got.err != nil || got.n != n || got.sum != sum {
			t.Errorf("%s: %d bytes %s (%v), HashFile gives %d bytes %s (%v)", p, got.n, got.sum, got.err, n, sum, err)
		}
	}
}

// A run that fails abandons the hashing: told to stop, the hashing ends
// after the piece it is on (a file of three pieces gives no sum), and a
// sum asked for afterwards is HashFile's, read then (SHA-256 of three
// pieces of "a" checked against crypto/sha256).
func TestAbandonedSumsStopAndFallBack(t *testing.T) {
	data := bytes.Repeat([]byte("a"), 3*hashPiece)
	p := filepath.Join(t.TempDir(), "data.csv")
	writeFile(t, p, data)
	stop := new(hashTurn)
	stop.stop.Store(true)
	if _, _, err := hashFileYielding(p, stop); err != errHashStopped {
		t.Errorf("told to stop: %v, want errHashStopped", err)
	}
	h := startInputSums([]string{p})
	h.abandon()
	want := fmt.Sprintf("%x", sha256.Sum256(data))
	if n, sum, err := h.hash(p); err != nil || n != int64(len(data)) || sum != want {
		t.Errorf("after abandon: %d bytes, %s, %v; want %d bytes, %s", n, sum, err, len(data), want)
	}
}

// Sums waited for are finished at an ordinary goroutine's priority: with
// one processor and two goroutines that keep yielding to each other, so
// that one of them always waits for the processor (the hashing's cue to
// step aside), the sums of a file of five pieces are ready while they
// still run, instead of once they end. The sum is crypto/sha256's.
func TestWaitedSumsDoNotStepAside(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(1))
	data := bytes.Repeat([]byte("b"), 5*hashPiece)
	p := filepath.Join(t.TempDir(), "data.csv")
	writeFile(t, p, data)
	var spinning, stop atomic.Bool
	spinning.Store(true)
	var wg sync.WaitGroup
	deadline := time.Now().Add(time.Minute)
	for range 2 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for !stop.Load() && time.Now().Before(deadline) {
				runtime.Gosched()
			}
			spinning.Store(false)
		}()
	}
	h := startInputSums([]string{p})
	h.wait()
	stillSpinning := spinning.Load()
	stop.Store(true)
	wg.Wait()
	if !stillSpinning {
		t.Error("the sums waited for were done only once the other goroutines ended")
	}
	if got := h.sums[p]; got.err != nil || got.sum != fmt.Sprintf("%x", sha256.Sum256(data)) {
		t.Errorf("sum %s (%v), want crypto/sha256's", got.sum, got.err)
	}
}
