package spectra

import (
	"bytes"
	"errors"
	"io"
	"io/fs"
	"os"

	"github.com/bandsolve/bandsolve/internal/regular"
)

// Bounds on what a reader accepts, so that a wrong path (a disk image, a
// device, a file with no line ends) is refused with its size and the limit
// instead of exhausting memory. A spectrum export is text of a few MB; the
// widest row of a matrix CSV (10⁶ points of ~20 characters) stays far below
// MaxLineBytes.
const (
	MaxFileBytes = maxFileBytes
	MaxLineBytes = 32 << 20
)

// KindOf names a file type for messages ("a device", "a FIFO" …).
func KindOf(m fs.FileMode) string { return regular.Kind(m) }

// openRegular opens path if it is a regular file (after links), and
// returns it with its size. Devices, FIFOs and sockets are refused by name
// before they are opened, and the opening does not block on a FIFO put in
// the name's place meanwhile (regular.Open): opening a FIFO blocks, and a
// device such as /dev/zero reports size 0 and never ends.
func openRegular(path string) (*os.File, int64, error) {
	f, st, err := regular.Open(path)
	var nr *regular.NotRegularError
	switch {
	case errors.As(err, &nr):
		return nil, 0, notRegular(path, nr.Mode)
	case errors.Is(err, fs.ErrPermission):
		return nil, 0, inputErr(path, 0, "check the file's permissions", "cannot read: %v", unwrapPathErr(err))
	case err != nil:
		return nil, 0, inputErr(path, 0, "check the path", "cannot read: %v", unwrapPathErr(err))
	}
	return f, st.Size(), nil
}

func notRegular(path string, m fs.FileMode) error {
	if m.IsDir() {
		return inputErr(path, 0, "give a file here", "is a folder")
	}
	return inputErr(path, 0, "give a spectrum file (plain text) instead", "is %s, not a regular file; refused", KindOf(m))
}

// ReadAllLimited reads r to its end, refusing more than limit bytes while
// reading (a file may grow after its size was checked).
func ReadAllLimited(r io.Reader, name string, limit int64) ([]byte, error) {
	b, err := io.ReadAll(io.LimitReader(r, limit+1))
	if err != nil {
		return nil, inputErr(name, 0, "check the file", "cannot read: %v", unwrapPathErr(err))
	}
	if int64(len(b)) > limit {
		return nil, tooLarge(name, int64(len(b)), limit)
	}
	return b, nil
}

// fileLimit is what a reader accepts on this machine: MaxFileBytes, or a
// third of the physical memory when that is less, as the text and the
// numbers parsed from it must fit in memory together. Running out of
// memory is never how a run ends: a larger file is refused, with its size.
var fileLimit = memoryLimit(physicalMemory())

func memoryLimit(ram int64) int64 {
	if ram > 0 && ram/3 < MaxFileBytes {
		return ram / 3
	}
	return MaxFileBytes
}

func tooLarge(name string, size, limit int64) error {
	why := ""
	if limit < MaxFileBytes {
		why = " (a third of this machine's memory)"
	}
	return inputErr(name, 0, "split the file, or check that this is the right path", "is at least %d bytes, more than the %d accepted%s", size, limit, why)
}

// readChunk is how much readText asks the reader for at a time.
const readChunk = 1 << 20

// readText reads a text file's bytes from r, checking while it reads that
// there are at most limit bytes and no line longer than maxLine: a hostile
// file with one 2 GB line is refused after maxLine bytes, so memory stays
// about the size of real data. sizeHint (the file's size, 0 if unknown)
// only sizes the first buffer.
func readText(r io.Reader, name string, sizeHint, limit int64, maxLine int) ([]byte, error) {
	buf := make([]byte, 0, min(max(sizeHint, 0)+1, readChunk))
	lineStart, line := 0, 1
	for {
		if len(buf) == cap(buf) {
			buf = append(buf, 0)[:len(buf)]
		}
		n, err := r.Read(buf[len(buf):min(cap(buf), len(buf)+readChunk)])
		from := len(buf)
		buf = buf[:from+n]
		if int64(len(buf)) > limit {
			return nil, tooLarge(name, int64(len(buf)), limit)
		}
		for i := bytes.IndexByte(buf[from:], '\n'); i >= 0; i = bytes.IndexByte(buf[from:], '\n') {
			from += i + 1
			lineStart, line = from, line+1
		}
		if len(buf)-lineStart > maxLine {
			return nil, inputErr(name, line, "this is not a text export of spectra, or its lines need breaking", "line longer than %d bytes", maxLine)
		}
		if errors.Is(err, io.EOF) {
			return buf, nil
		}
		if err != nil {
			return nil, inputErr(name, 0, "check the file", "cannot read: %v", unwrapPathErr(err))
		}
	}
}

// longestLineCheck refuses raw (already in memory, e.g. mapped) when a line
// is longer than maxLine, naming the line.
func longestLineCheck(name string, raw []byte, maxLine int) error {
	line := 1
	for len(raw) > 0 {
		i := bytes.IndexByte(raw, '\n')
		if i < 0 {
			i = len(raw)
		}
		if i > maxLine {
			return inputErr(name, line, "this is not a text export of spectra, or its lines need breaking", "line longer than %d bytes", maxLine)
		}
		raw = raw[min(i+1, len(raw)):]
		line++
	}
	return nil
}

// limitedReader is io.LimitReader that fails, naming the file, past its limit.
type limitedReader struct {
	r     io.Reader
	name  string
	left  int64
	limit int64
}

func (l *limitedReader) Read(p []byte) (int, error) {
	if l.left <= 0 {
		// Exactly limit bytes is fine if the reader ends there.
		var one [1]byte
		if n, err := l.r.Read(one[:]); n == 0 && err != nil {
			return 0, err
		}
		return 0, tooLarge(l.name, l.limit+1, l.limit)
	}
	if int64(len(p)) > l.left {
		p = p[:l.left]
	}
	n, err := l.r.Read(p)
	l.left -= int64(n)
	return n, err
}
