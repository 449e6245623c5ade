package spectra

import (
	"bytes"
	"fmt"
	"os"
	"runtime/debug"
)

// mappedMin is the file size from which a matrix CSV is mapped into memory
// instead of read into a buffer: below it a copy costs nothing worth saving.
const mappedMin = 1 << 20

// readMapped returns the bytes of path like readAll, but maps large files
// (mapFile) rather than copying them: the parser then holds the values
// matrix and the page cache's own pages, not a second copy of a file that
// can be gigabytes. release must be called when nothing refers to the
// bytes any more; the parser copies every string it keeps.
func readMapped(path string) (raw []byte, release func(), err error) {
	st, err := os.Stat(path)
	if err != nil || !st.Mode().IsRegular() || st.Size() < mappedMin || st.Size() > fileLimit {
		raw, err := readAll(path) // its messages for every unusual case
		return raw, func() {}, err
	}
	raw, release, err = mapFile(path, st.Size())
	if err != nil {
		raw, err := readAll(path)
		return raw, func() {}, err
	}
	if err := guardFault(func() {
		raw = bytes.TrimPrefix(raw, []byte("\xef\xbb\xbf"))
		if bytes.IndexByte(raw, 0) >= 0 {
			err = inputErr(path, 0, "give a text export (CSV or JCAMP-DX)", "is a binary file, not text")
		} else {
			err = longestLineCheck(path, raw, MaxLineBytes)
		}
	}); err != nil {
		release()
		return nil, func() {}, inputErr(path, 0, "do not change the file while it is read", "%v", err)
	}
	if err != nil {
		release()
		return nil, func() {}, err
	}
	return raw, release, nil
}

// guardFault runs f with faults on mapped memory turned into an error
// instead of a crash: a mapped file truncated by another program while it is
// read raises SIGBUS on the missing pages (runtime/debug.SetPanicOnFault).
// Only such a fault, a runtime error with an Addr method (SetPanicOnFault's
// documentation), is the file's doing; any other panic, a runtime error of
// a bug (an index out of range) included, is raised again, so that a bug is
// not reported as a file changed while it was read.
func guardFault(f func()) (err error) {
	old := debug.SetPanicOnFault(true)
	defer func() {
		debug.SetPanicOnFault(old)
		if p := recover(); p != nil {
			if e, ok := p.(memoryFault); ok {
				err = fmt.Errorf("the file changed while it was read (%v)", e)
				return
			}
			panic(p)
		}
	}()
	f()
	return nil
}

// memoryFault is the panic value of a fault on memory under
// debug.SetPanicOnFault: a runtime.Error with the address that faulted.
type memoryFault interface {
	error
	Addr() uintptr
}
