package fresh

import (
	"syscall"
	"unsafe"
)

// hugePage is the size of a transparent huge page on amd64 and arm64 Linux.
const hugePage = 2 << 20

// Advise asks the kernel (madvise MADV_HUGEPAGE) to back the whole 2 MiB
// pages inside v with huge pages when they are first written. Only whole
// pages inside v are advised, so no memory outside it changes; errors are
// ignored: it is advice.
func Advise(v []float64) {
	if len(v)*8 < 2*hugePage {
		return
	}
	b := unsafe.Slice((*byte)(unsafe.Pointer(&v[0])), len(v)*8)
	skip := (hugePage - int(uintptr(unsafe.Pointer(&v[0]))%hugePage)) % hugePage
	b = b[skip:]
	_ = syscall.Madvise(b[:len(b)&^(hugePage-1)], syscall.MADV_HUGEPAGE)
}
