package output

import (
	"errors"
	"syscall"
	"unsafe"
)

// renameExchange swaps two folders in one step: renameat2(2) with
// RENAME_EXCHANGE (Linux 3.15 and later; not every file system has it).
// The syscall package has no wrapper, so it is called by number
// (golang.org/x/sys/unix would add a dependency for one call).
func renameExchange(a, b string) error {
	if sysRenameat2 == 0 {
		return errNoExchange
	}
	pa, err := syscall.BytePtrFromString(a)
	if err != nil {
		return err
	}
	pb, err := syscall.BytePtrFromString(b)
	if err != nil {
		return err
	}
	const atFDCWD, renameExchangeFlag = -100, 2
	fd := atFDCWD
	_, _, errno := syscall.Syscall6(sysRenameat2, uintptr(fd), uintptr(unsafe.Pointer(pa)), uintptr(fd), uintptr(unsafe.Pointer(pb)), renameExchangeFlag, 0)
	if errno != 0 {
		return errno
	}
	return nil
}

var errNoExchange = errors.New("no atomic exchange on this system")
