package output

import (
	"errors"
	"os"
	"path/filepath"
	"slices"
	"sync"
	"syscall"
	"testing"
)

// watchFlushes replaces syncPath for the test: fail gives the error of a
// path that fails to flush, nil for one flushed (the call is recorded
// either way). It returns the paths flushed so far, in order.
func watchFlushes(t *testing.T, fail func(p string) error) func() []string {
	var mu sync.Mutex
	var calls []string
	t.Cleanup(func() { syncPath = flushPath })
	syncPath = func(p string) error {
		mu.Lock()
		calls = append(calls, p)
		mu.Unlock()
		if err := fail(p); err != nil {
			return err
		}
		return flushPath(p)
	}
	return func() []string {
		mu.Lock()
		defer mu.Unlock()
		return slices.Clone(calls)
	}
}

// A flush covers a write only when queued after it: a path written again
// while its first flush runs is flushed again, and a flush that fails
// covers nothing (the definition in flush.go; commit.go step 1 needs every
// file on disk before the rename).
func TestFlusherCoversEachWrite(t *testing.T) {
	dir := t.TempDir()
	a, b := filepath.Join(dir, "a"), filepath.Join(dir, "b")
	for _, p := range []string{a, b} {
		if err := os.WriteFile(p, []byte("x"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	started, release := make(chan struct{}), make(chan struct{})
	var once sync.Once
	watchFlushes(t, func(p string) error {
		if p == a {
			once.Do(func() { close(started); <-release })
		}
		if p == b {
			return notOpenable(p)
		}
		return nil
	})
	var f flusher
	f.add(a)
	<-started // a's first flush has begun (and waits)
	f.add(a)  // a written again: its first flush no longer covers it
	f.add(b)
	close(release)
	got, err := f.finish()
	if err != nil {
		t.Errorf("a flush that could not open its file reported as %v; the commit flushes the file", err)
	}
	if !got[a] || got[b] {
		t.Errorf("flushed since the last write: %v; want %s and not %s (its flush failed)", got, a, b)
	}
	if f.written[a] != 2 || f.flushed[a] != 2 {
		t.Errorf("a written %d times, last flush covers write %d: want 2, 2", f.written[a], f.flushed[a])
	}
}

// notOpenable is the error of a flush that could not open p (too many
// open files): nothing was flushed.
func notOpenable(p string) error {
	return &os.PathError{Op: "open", Path: p, Err: syscall.EMFILE}
}

// The commit flushes again what the flushes beside the writes did not
// cover (here a file whose flush could not open it) and every folder, and no file
// twice that was covered.
func TestCommitFlushesWhatWasNotFlushed(t *testing.T) {
	out := filepath.Join(t.TempDir(), "out")
	st, err := NewStage(out, false)
	if err != nil {
		t.Fatal(err)
	}
	bad := st.Path("b.csv")
	var failed sync.Once
	calls := watchFlushes(t, func(p string) error {
		var err error
		if p == bad {
			failed.Do(func() { err = notOpenable(p) }) // the first flush only
		}
		return err
	})
	if err := st.Mkdir("figures"); err != nil {
		t.Fatal(err)
	}
	for _, n := range []string{"a.csv", "b.csv", filepath.Join("figures", "c.svg"), ManifestName} {
		if err := st.Write(n, []byte(n)); err != nil {
			t.Fatal(err)
		}
	}
	st.flush.finish() // the flushes beside the writes are done; finish again in Commit
	before := len(calls())
	if err := st.Commit(); err != nil {
		t.Fatal(err)
	}
	atCommit := calls()[before:]
	want := []string{st.Dir, filepath.Join(st.Dir, "figures"), bad}
	for _, p := range want {
		if !slices.Contains(atCommit, p) {
			t.Errorf("%s not flushed at the commit (flushed %v)", p, atCommit)
		}
	}
	for _, n := range []string{"a.csv", filepath.Join("figures", "c.svg"), ManifestName} {
		p := filepath.Join(st.Dir, n)
		if slices.Contains(atCommit, p) {
			t.Errorf("%s flushed again at the commit", p)
		}
		if !slices.Contains(calls()[:before], p) {
			t.Errorf("%s not flushed beside the writes", p)
		}
	}
	if b, err := os.ReadFile(filepath.Join(out, "b.csv")); err != nil || string(b) != "b.csv" {
		t.Errorf("b.csv committed as %q (%v)", b, err)
	}
}

// Prewrite puts a file in the stage ahead of its turn: Write with the
// same bytes lists it where Write is called (Files keeps the order of the
// Write calls), Write with other bytes replaces it, and a file no Write
// lists is removed by DropUnlisted with the folder Prewrite made for it
// when left empty; a folder holding a listed file stays. Every file
// committed is flushed (TestCommitFlushesWhatWasNotFlushed's check).
func TestPrewriteListedAtItsTurn(t *testing.T) {
	out := filepath.Join(t.TempDir(), "out")
	st, err := NewStage(out, false)
	if err != nil {
		t.Fatal(err)
	}
	st.Prewrite(filepath.Join("figures", "a.svg"), []byte("a"))
	st.Prewrite(filepath.Join("figures", "b.svg"), []byte("b ahead"))
	st.Prewrite(filepath.Join("spare", "c.svg"), []byte("c"))
	for _, f := range []struct{ name, body string }{{"first.csv", "1"}, {filepath.Join("figures", "b.svg"), "b"},
		{filepath.Join("figures", "a.svg"), "a"}, {ManifestName, "{}"}} {
		if err := st.Write(f.name, []byte(f.body)); err != nil {
			t.Fatal(err)
		}
	}
	st.DropUnlisted()
	want := []string{"first.csv", filepath.Join("figures", "b.svg"), filepath.Join("figures", "a.svg"), ManifestName}
	if got := st.Files(); !slices.Equal(got, want) {
		t.Errorf("files listed %v, want %v", got, want)
	}
	if err := st.Commit(); err != nil {
		t.Fatal(err)
	}
	for name, body := range map[string]string{"figures/a.svg": "a", "figures/b.svg": "b"} {
		if b, err := os.ReadFile(filepath.Join(out, name)); err != nil || string(b) != body {
			t.Errorf("%s holds %q (%v), want %q", name, b, err, body)
		}
	}
	if _, err := os.Lstat(filepath.Join(out, "spare")); !os.IsNotExist(err) {
		t.Errorf("the folder of a file prewritten and never listed is still there (%v)", err)
	}
}

// A flush beside the writes that failed once its file was open fails the
// commit: Linux reports a file's write-back error to one fsync only
// (errseq_t, Documentation/filesystems/vfs.rst, "Handling errors during
// writeback"; from memory), so flushing the file again at the commit may
// succeed with its data lost. The output folder is not made and the stage
// is removed.
func TestCommitReportsAFailedFlush(t *testing.T) {
	out := filepath.Join(t.TempDir(), "out")
	st, err := NewStage(out, false)
	if err != nil {
		t.Fatal(err)
	}
	bad := st.Path("a.csv")
	var failed sync.Once
	watchFlushes(t, func(p string) error {
		var err error
		if p == bad {
			failed.Do(func() { err = &os.PathError{Op: "sync", Path: p, Err: syscall.EIO} })
		}
		return err
	})
	for _, n := range []string{"a.csv", ManifestName} {
		if err := st.Write(n, []byte(n)); err != nil {
			t.Fatal(err)
		}
	}
	err = st.Commit()
	if !errors.Is(err, syscall.EIO) {
		t.Errorf("commit after a failed flush: %v, want the flush's error", err)
	}
	if _, err := os.Lstat(out); !os.IsNotExist(err) {
		t.Errorf("output folder made after a failed flush (%v)", err)
	}
	if _, err := os.Lstat(st.Dir); !os.IsNotExist(err) {
		t.Errorf("stage left after a failed commit (%v)", err)
	}
}

// A Prewrite that fails leaves the file to Write (Prewrite's doc), even
// where an earlier Prewrite of the same name had written it: Write with
// those earlier bytes then writes the file rather than listing one that
// is not there. Here the second Prewrite meets a folder standing at the
// file's name (open(2) gives EISDIR), so Write must fail.
func TestFailedPrewriteLeavesTheFileToWrite(t *testing.T) {
	out := filepath.Join(t.TempDir(), "out")
	st, err := NewStage(out, false)
	if err != nil {
		t.Fatal(err)
	}
	defer st.Abort()
	st.Prewrite("a.svg", []byte("a"))
	p := st.Path("a.svg")
	if err := os.Remove(p); err != nil {
		t.Fatal(err)
	}
	if err := os.MkdirAll(filepath.Join(p, "x"), 0o755); err != nil {
		t.Fatal(err)
	}
	st.Prewrite("a.svg", []byte("a"))
	if err := st.Write("a.svg", []byte("a")); err == nil {
		t.Errorf("Write listed a.svg without writing it (files %v)", st.Files())
	}
}
