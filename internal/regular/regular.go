// Package regular opens a path for reading only when it names a regular
// file, and never opens anything else.
//
// A path given by a user (a data file, a times table, a command file, a
// record) may name a FIFO, a device or a socket. Opening a FIFO for reading
// blocks until a writer appears, which may be never; a device such as
// /dev/zero never ends. So the path's type is checked with stat(2) before
// the opening (after links), and the opening itself is non-blocking
// (O_NONBLOCK, POSIX open(2): "an open() for reading-only shall return
// without delay" on a FIFO) and checked again with fstat(2), since the name
// may have been replaced in between. On a regular file O_NONBLOCK changes
// nothing (POSIX read(2)).
package regular

import (
	"fmt"
	"io"
	"io/fs"
	"os"
)

// NotRegularError says that Path is not a regular file: a folder, a FIFO,
// a device or a socket, by Mode.
type NotRegularError struct {
	Path string
	Mode fs.FileMode
}

func (e *NotRegularError) Error() string {
	return fmt.Sprintf("%s: is %s, not a regular file", e.Path, Kind(e.Mode))
}

// Kind names a file type for messages ("a FIFO (named pipe)" …).
func Kind(m fs.FileMode) string {
	switch {
	case m.IsDir():
		return "a folder"
	case m&fs.ModeNamedPipe != 0:
		return "a FIFO (named pipe)"
	case m&fs.ModeSocket != 0:
		return "a socket"
	case m&fs.ModeDevice != 0:
		return "a device"
	case m.IsRegular():
		return "a regular file"
	}
	return "not a regular file"
}

// Check stats path (after links) and refuses it with a *NotRegularError
// when it is not a regular file, without opening it. Other errors are
// those of os.Stat.
func Check(path string) (fs.FileInfo, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, err
	}
	if !st.Mode().IsRegular() {
		return nil, &NotRegularError{Path: path, Mode: st.Mode()}
	}
	return st, nil
}

// Open opens path for reading when it is a regular file, checked before the
// opening (Check) and after it (fstat, without blocking on a FIFO put in its
// place meanwhile). It returns the file and its information; a path that is
// not a regular file gives a *NotRegularError, other faults those of os.
func Open(path string) (*os.File, fs.FileInfo, error) {
	if _, err := Check(path); err != nil {
		return nil, nil, err
	}
	f, err := os.OpenFile(path, os.O_RDONLY|nonBlock, 0)
	if err != nil {
		return nil, nil, err
	}
	st, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, nil, err
	}
	if !st.Mode().IsRegular() {
		f.Close()
		return nil, nil, &NotRegularError{Path: path, Mode: st.Mode()}
	}
	return f, st, nil
}

// ReadFile reads the regular file at path whole, refusing more than limit
// bytes (checked while reading: the file may grow after its size was
// taken) with a *TooLargeError.
func ReadFile(path string, limit int64) ([]byte, error) {
	f, st, err := Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if st.Size() > limit {
		return nil, &TooLargeError{Path: path, Size: st.Size(), Limit: limit}
	}
	b, err := io.ReadAll(io.LimitReader(f, limit+1))
	if err != nil {
		return nil, err
	}
	if int64(len(b)) > limit {
		return nil, &TooLargeError{Path: path, Size: int64(len(b)), Limit: limit}
	}
	return b, nil
}

// TooLargeError says that the file at Path holds at least Size bytes, more
// than Limit.
type TooLargeError struct {
	Path        string
	Size, Limit int64
}

func (e *TooLargeError) Error() string {
	return fmt.Sprintf("%s: is at least %d bytes, more than the %d accepted", e.Path, e.Size, e.Limit)
}
