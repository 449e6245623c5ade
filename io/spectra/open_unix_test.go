//go:build unix

package spectra

import (
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

// A FIFO is refused before it is opened: opening one for reading blocks
// until a writer comes, so the run would hang.
func TestReadRefusesFIFOs(t *testing.T) {
	p := filepath.Join(t.TempDir(), "pipe.csv")
	if err := syscall.Mkfifo(p, 0o600); err != nil {
		t.Skip("no FIFOs:", err)
	}
	if _, err := ReadMatrixCSV(p); err == nil || !strings.Contains(err.Error(), "is a FIFO (named pipe), not a regular file") {
		t.Errorf("FIFO: %v", err)
	}
}
