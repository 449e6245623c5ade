//go:build unix

package spectra

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
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

// watchOpens reports whether anything opened the FIFO at p for reading
// while it ran: a non-blocking open for writing succeeds only while a
// reader holds the FIFO open (POSIX open(2), ENXIO otherwise), and lets a
// reader blocked in its own opening go on. stop ends the watch.
func watchOpens(p string) (stop func() bool) {
	done, opened := make(chan struct{}), make(chan bool, 1)
	go func() {
		seen := false
		for {
			if w, err := os.OpenFile(p, os.O_WRONLY|syscall.O_NONBLOCK, 0); err == nil {
				seen = true
				w.Close()
			}
			select {
			case <-done:
				opened <- seen
				return
			case <-time.After(5 * time.Millisecond):
			}
		}
	}()
	return func() bool { close(done); return <-opened }
}

// A FIFO among a folder's spectra, named like them (scan_999s.csv) or
// linked there, is refused by name and never opened (docs/security.md:
// "devices, FIFOs and sockets are refused by name before they are opened
// (also through a link inside a data folder)"). The folder's other files
// read as spectra, so the advice about a lone stray file applies (move it
// out, or --drop it); checking it once opened the FIFO and waited for a
// writer for ever.
func TestFolderNeverOpensAFIFO(t *testing.T) {
	for _, linked := range []bool{false, true} {
		for _, opt := range []FolderOptions{{TimesFromName: true}, {TimesFile: "times"}} {
			dir := t.TempDir()
			var table strings.Builder
			table.WriteString("file,time_s\n")
			for i := range 4 {
				name := fmt.Sprintf("scan_%ds.csv", 30*i)
				var b strings.Builder
				for x := 1000; x < 1100; x += 10 {
					fmt.Fprintf(&b, "%d,%g\n", x, 1+0.01*float64(i*x%7))
				}
				if err := os.WriteFile(filepath.Join(dir, name), []byte(b.String()), 0o644); err != nil {
					t.Fatal(err)
				}
				fmt.Fprintf(&table, "%s,%d\n", name, 30*i)
			}
			table.WriteString("scan_999s.csv,999\n")
			fifo := filepath.Join(dir, "scan_999s.csv")
			if linked {
				fifo = filepath.Join(t.TempDir(), "pipe")
				if err := os.Symlink(fifo, filepath.Join(dir, "scan_999s.csv")); err != nil {
					t.Fatal(err)
				}
			}
			if err := syscall.Mkfifo(fifo, 0o600); err != nil {
				t.Skip("no FIFOs:", err)
			}
			if opt.TimesFile != "" {
				opt.TimesFile = filepath.Join(t.TempDir(), "times.csv")
				if err := os.WriteFile(opt.TimesFile, []byte(table.String()), 0o644); err != nil {
					t.Fatal(err)
				}
			}
			stop := watchOpens(fifo)
			_, err := ReadFolder(dir, opt)
			if stop() {
				t.Errorf("linked %v, times table %v: the FIFO was opened", linked, opt.TimesFile != "")
			}
			if err == nil || !strings.Contains(err.Error(), "scan_999s.csv: is a FIFO (named pipe), not a regular file") || !strings.Contains(err.Error(), "give --drop scan_999s.csv") {
				t.Errorf("linked %v, times table %v: %v", linked, opt.TimesFile != "", err)
			}
		}
	}
}
