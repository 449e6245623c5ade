//go:build unix

package regular

import (
	"errors"
	"os"
	"path/filepath"
	"syscall"
	"testing"
)

// Open refuses what is not a regular file with its kind, and reads a
// regular one; ReadFile refuses a file over its limit. The kinds are those
// of POSIX stat(2) (S_ISFIFO, S_ISDIR, S_ISCHR).
func TestOpenRefusesAllButRegularFiles(t *testing.T) {
	dir := t.TempDir()
	fifo := filepath.Join(dir, "pipe")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skip("no FIFOs:", err)
	}
	link := filepath.Join(dir, "link")
	if err := os.Symlink(fifo, link); err != nil {
		t.Fatal(err)
	}
	file := filepath.Join(dir, "a.csv")
	if err := os.WriteFile(file, []byte("1,2\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct{ path, kind string }{
		{fifo, "a FIFO (named pipe)"}, {link, "a FIFO (named pipe)"}, {dir, "a folder"}, {os.DevNull, "a device"},
	} {
		f, _, err := Open(c.path)
		var nr *NotRegularError
		if !errors.As(err, &nr) || Kind(nr.Mode) != c.kind {
			t.Errorf("%s: %v, want %s", c.path, err, c.kind)
		}
		if f != nil {
			t.Errorf("%s: opened", c.path)
		}
	}
	if b, err := ReadFile(file, 4); err != nil || string(b) != "1,2\n" {
		t.Errorf("ReadFile: %q, %v", b, err)
	}
	var big *TooLargeError
	if _, err := ReadFile(file, 3); !errors.As(err, &big) || big.Limit != 3 {
		t.Errorf("ReadFile over its limit: %v", err)
	}
	if _, err := ReadFile(filepath.Join(dir, "none"), 3); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v", err)
	}
}
