package output

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func mustWrite(t *testing.T, p, text string) {
	t.Helper()
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
}

// --force replaces only a folder bandsolve made (it holds bandsolve's
// manifest) or an empty one; never a folder of other files, never through
// a symbolic link, never the working folder or one above it.
func TestForceReplacesOnlyOwnFolders(t *testing.T) {
	w := t.TempDir()
	t.Chdir(w)
	own := filepath.Join(w, "own")
	mustWrite(t, filepath.Join(own, ManifestName), string(ownManifest("spectra.csv")))
	mustWrite(t, filepath.Join(own, "spectra.csv"), "x\n")
	thesis := filepath.Join(w, "thesis")
	mustWrite(t, filepath.Join(thesis, "chapter1.tex"), "keep me\n")
	fake := filepath.Join(w, "fake")
	mustWrite(t, filepath.Join(fake, ManifestName), `{"tool": "something else"}`)
	empty := filepath.Join(w, "empty")
	os.Mkdir(empty, 0o755)
	for _, c := range []struct {
		out, want string
	}{
		{own, ""},
		{empty, ""},
		{filepath.Join(w, "new", "deeper"), ""},
		{thesis, "holds files bandsolve did not write"},
		{fake, "holds files bandsolve did not write"},
		{".", "is the working folder or a folder above it"},
		{"..", "is the working folder or a folder above it"},
		{"own/..", "is the working folder or a folder above it"},
		{w, "is the working folder or a folder above it"},
		{filepath.Dir(w), "is the working folder or a folder above it"},
	} {
		err := Check(c.out, true)
		if c.want == "" && err != nil || c.want != "" && (err == nil || !strings.Contains(err.Error(), c.want)) {
			t.Errorf("Check(%q, force) = %v, want %q", c.out, err, c.want)
		}
	}
	// Without --force the user's own files are named as such at once: the
	// advice to add --force would only lead to the refusal above.
	if err := Check(thesis, false); err == nil || errors.Is(err, ErrExists) || !strings.Contains(err.Error(), "holds files bandsolve did not write") || strings.Contains(err.Error(), "add --force") {
		t.Errorf("without force: %v", err)
	}
	if err := Check(own, false); !errors.Is(err, ErrExists) {
		t.Errorf("own results without force: %v", err)
	}
	if err := os.Symlink(own, filepath.Join(w, "link")); err != nil {
		t.Skip("no symbolic links:", err)
	}
	if err := Check("link", true); err == nil || !strings.Contains(err.Error(), "is a symbolic link") {
		t.Errorf("--out link --force: %v", err)
	}
}

// --force replaces a folder bandsolve made only while it holds nothing but
// the files its manifest lists (and the report `bandsolve report` adds):
// a file or folder a user put into it is named and the folder refused,
// with or without --force; a folder whose manifest has no list (an
// earlier bandsolve's) is refused too, as its files cannot be told from
// the user's. The rule is bandsolve's own ("never delete what it did not
// make", docs/security.md).
func TestForceKeepsFilesAddedToResults(t *testing.T) {
	w := t.TempDir()
	results := func(name string, extra ...string) string {
		d := filepath.Join(w, name)
		mustWrite(t, filepath.Join(d, "spectra.csv"), "x\n")
		mustWrite(t, filepath.Join(d, "figures", "a.svg"), "<svg/>")
		mustWrite(t, filepath.Join(d, ManifestName), string(ownManifest("spectra.csv", "figures/a.svg")))
		for _, f := range extra {
			mustWrite(t, filepath.Join(d, filepath.FromSlash(f)), "the user's\n")
		}
		return d
	}
	for _, c := range []struct {
		out, want string
	}{
		{results("clean"), ""},
		{results("rebuilt", "report.html", ".report-123.html"), ""},
		{results("notes", "notes.txt"), "holds notes.txt, which bandsolve did not write"},
		{results("deep", "figures/mine.png", "extra/x.csv", "a.txt", "b.txt"), "holds a.txt, b.txt, extra/ and 1 more, which"},
		{results("report-elsewhere", "figures/report.html"), "holds figures/report.html"},
	} {
		err := Check(c.out, true)
		if c.want == "" && err != nil || c.want != "" && (err == nil || !strings.Contains(err.Error(), c.want)) {
			t.Errorf("Check(%s, force) = %v, want %q", filepath.Base(c.out), err, c.want)
		}
		if c.want != "" {
			if err := Check(c.out, false); err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("Check(%s) without force = %v, want %q at once", filepath.Base(c.out), err, c.want)
			}
		}
	}
	old := filepath.Join(w, "old")
	mustWrite(t, filepath.Join(old, ManifestName), `{"tool": "bandsolve", "version": "0.1"}`)
	mustWrite(t, filepath.Join(old, "spectra.csv"), "x\n")
	if err := Check(old, true); err == nil || !strings.Contains(err.Error(), "does not list the files it wrote") {
		t.Errorf("a folder without the list: %v", err)
	}
}

// A folder holding an input of the run is never an output folder, even
// one bandsolve made (a rerun of OUT/as-run.bsr into OUT reads OUT/input).
func TestProtectInputs(t *testing.T) {
	w := t.TempDir()
	d := filepath.Join(w, "d")
	mustWrite(t, filepath.Join(d, "input", "series.csv"), "x\n")
	if err := Protect(d, []string{filepath.Join(d, "input", "series.csv")}); err == nil || !strings.Contains(err.Error(), "an input of this run") {
		t.Errorf("input inside: %v", err)
	}
	if err := Protect(filepath.Join(d, "input"), []string{filepath.Join(d, "input")}); err == nil {
		t.Error("the data folder itself accepted as output folder")
	}
	if err := Protect(filepath.Join(w, "out"), []string{filepath.Join(d, "input", "series.csv")}); err != nil {
		t.Errorf("input elsewhere: %v", err)
	}
}

// Missing folders above --out are made, as mkdir -p would.
func TestStageMakesMissingParents(t *testing.T) {
	out := filepath.Join(t.TempDir(), "a", "b", "results")
	st, err := NewStage(out, false)
	if err != nil {
		t.Fatal(err)
	}
	st.Write("x.csv", []byte("1\n"))
	if err := st.Commit(); err != nil {
		t.Fatal(err)
	}
	if b, err := os.ReadFile(filepath.Join(out, "x.csv")); err != nil || string(b) != "1\n" {
		t.Errorf("committed file: %q, %v", b, err)
	}
}

// A read-only output folder cannot be replaced: --force fails up front,
// non-zero, and leaves nothing beside it (it used to return 0 and leave
// the earlier results in a .old folder).
func TestForceOnReadOnlyFolder(t *testing.T) {
	if os.Geteuid() == 0 {
		t.Skip("root may remove files from any folder")
	}
	w := t.TempDir()
	out := filepath.Join(w, "out")
	mustWrite(t, filepath.Join(out, ManifestName), string(ownManifest()))
	os.Chmod(out, 0o555)
	t.Cleanup(func() { os.Chmod(out, 0o755) })
	if _, err := NewStage(out, true); err == nil || !strings.Contains(err.Error(), "--force cannot remove the earlier results") {
		t.Errorf("read-only folder with --force: %v", err)
	}
	if ents, _ := os.ReadDir(w); len(ents) != 1 {
		t.Errorf("beside the output: %d entries", len(ents))
	}
}
