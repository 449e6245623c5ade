//go:build unix

package spectra

import (
	"syscall"

	"github.com/bandsolve/bandsolve/internal/regular"
)

// mapFile maps path read-only and private, if it is still a regular file.
func mapFile(path string, size int64) ([]byte, func(), error) {
	f, _, err := regular.Open(path)
	if err != nil {
		return nil, nil, err
	}
	defer f.Close()
	b, err := syscall.Mmap(int(f.Fd()), 0, int(size), syscall.PROT_READ, syscall.MAP_PRIVATE)
	if err != nil {
		return nil, nil, err
	}
	return b, func() { syscall.Munmap(b) }, nil
}
