package spectra

import (
	"io"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
)

// hostile is a generated reader of n bytes of fill with a newline every
// `every` bytes (never, when every is 0): a 2 GB file without writing one.
type hostile struct {
	n, read, every int64
	fill           byte
}

func (h *hostile) Read(p []byte) (int, error) {
	if h.read >= h.n {
		return 0, io.EOF
	}
	k := min(int64(len(p)), h.n-h.read)
	for i := range p[:k] {
		p[i] = h.fill
		if h.every > 0 && (h.read+int64(i)+1)%h.every == 0 {
			p[i] = '\n'
		}
	}
	h.read += k
	return int(k), nil
}

// A 2 GB line with no line end is refused once it passes MaxLineBytes:
// reading stops there, and memory stays about that size, not 2 GB.
func TestReadTextRefusesAHostileLine(t *testing.T) {
	h := &hostile{n: 2 << 30, fill: '1'}
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	_, err := readText(h, "line.csv", 0, MaxFileBytes, MaxLineBytes)
	runtime.ReadMemStats(&after)
	if err == nil || !strings.Contains(err.Error(), "line.csv:1: line longer than 33554432 bytes") {
		t.Fatalf("err = %v", err)
	}
	if h.read > MaxLineBytes+2*readChunk {
		t.Errorf("read %d bytes of a hostile line, want at most %d", h.read, MaxLineBytes+2*readChunk)
	}
	// Every buffer the growing slice went through, summed: a few times the
	// bytes read (append's growth), against 2 GB and more before.
	if alloc := after.TotalAlloc - before.TotalAlloc; alloc > 8*MaxLineBytes {
		t.Errorf("allocated %d bytes for a refused line, want under %d", alloc, 8*MaxLineBytes)
	}
}

// The byte cap is checked while reading (a device or a growing file has no
// useful size beforehand) and the message gives the size and the limit.
func TestReadTextByteCap(t *testing.T) {
	h := &hostile{n: 10000, every: 10, fill: '2'}
	_, err := readText(h, "big.csv", 0, 5000, MaxLineBytes)
	if err == nil || !strings.Contains(err.Error(), "more than the 5000 accepted") {
		t.Fatalf("err = %v", err)
	}
	h = &hostile{n: 5000, every: 10, fill: '2'}
	b, err := readText(h, "ok.csv", 5000, 5000, MaxLineBytes)
	if err != nil || len(b) != 5000 || strings.Count(string(b), "\n") != 500 {
		t.Fatalf("a file of exactly the limit: %d bytes, %v", len(b), err)
	}
	if err := longestLineCheck("m.csv", []byte("a\nbbbb\nc"), 3); err == nil || !strings.Contains(err.Error(), "m.csv:2:") {
		t.Errorf("longestLineCheck: %v", err)
	}
	if err := longestLineCheck("m.csv", []byte("a\nbbb\nccc"), 3); err != nil {
		t.Errorf("longestLineCheck: %v", err)
	}
}

// Devices are refused by name, directly and through a link inside a data
// folder; /dev/zero used to be read until memory ran out.
func TestReadRefusesDevices(t *testing.T) {
	if _, err := os.Stat("/dev/zero"); err != nil {
		t.Skip("no /dev/zero")
	}
	if _, err := ReadMatrixCSV("/dev/zero"); err == nil || !strings.Contains(err.Error(), "/dev/zero: is a device, not a regular file; refused") {
		t.Errorf("matrix CSV /dev/zero: %v", err)
	}
	if _, err := ReadSpectrumFile("/dev/zero"); err == nil || !strings.Contains(err.Error(), "is a device") {
		t.Errorf("spectrum file /dev/zero: %v", err)
	}
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, "scan_0000.csv"), []byte("wavenumber,intensity\n1000,1\n1001,2\n"), 0o644)
	link := filepath.Join(dir, "scan_0060.csv")
	if err := os.Symlink("/dev/zero", link); err != nil {
		t.Skip("no symbolic links:", err)
	}
	_, err := ReadFolder(dir, FolderOptions{TimesFromName: true, TimeUnit: "s"})
	if err == nil || !strings.Contains(err.Error(), link+": is a device") {
		t.Errorf("folder with a link to /dev/zero: %v", err)
	}
	jdx := filepath.Join(dir, "zero.jdx")
	os.Symlink("/dev/zero", jdx)
	if _, err := ReadSpectrumFile(jdx); err == nil || !strings.Contains(err.Error(), "is a device") {
		t.Errorf("JCAMP-DX link to /dev/zero: %v", err)
	}
}

// The byte limit follows the machine: a third of its memory when that is
// below MaxFileBytes, and the message says so.
func TestFileLimitFollowsMemory(t *testing.T) {
	for _, c := range []struct{ ram, want int64 }{
		{0, MaxFileBytes}, {3 << 30, 1 << 30}, {64 << 30, MaxFileBytes},
	} {
		if got := memoryLimit(c.ram); got != c.want {
			t.Errorf("memory %d: limit %d, want %d", c.ram, got, c.want)
		}
	}
	if fileLimit <= 0 || fileLimit > MaxFileBytes {
		t.Errorf("this machine's limit %d", fileLimit)
	}
	if err := tooLarge("big.csv", 2<<30, 1<<30); !strings.Contains(err.Error(), "big.csv: is at least 2147483648 bytes, more than the 1073741824 accepted (a third of this machine's memory)") {
		t.Errorf("message %v", err)
	}
}
