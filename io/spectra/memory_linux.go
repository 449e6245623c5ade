package spectra

import (
	"syscall"
	"unsafe"
)

// physicalMemory is the machine's RAM in bytes (sysinfo(2)), 0 if unknown.
func physicalMemory() int64 {
	var si syscall.Sysinfo_t
	if syscall.Sysinfo(&si) != nil {
		return 0
	}
	return int64(si.Totalram) * int64(si.Unit)
}

// hugePage is the size of a transparent huge page on amd64 and arm64 Linux.
const hugePage = 2 << 20

// adviseHugePages asks the kernel (madvise MADV_HUGEPAGE) to back the whole
// 2 MiB pages inside v with huge pages when v is first written, for a
// data-sized matrix the program is about to fill: each page of fresh memory
// costs a fault on first touch, and on virtual machines a fault costs far
// more than the writing (48 MB in 4 KiB pages: 0.16 s CPU measured on the
// benchmark machine, in 2 MiB pages 0.09 s). It changes no value, and the
// kernel ignores it where huge pages are off ("never"); memory already
// touched stays as it is. Errors are ignored: it is advice.
func adviseHugePages(v []float64) {
	if len(v)*8 < 2*hugePage {
		return
	}
	b := unsafe.Slice((*byte)(unsafe.Pointer(&v[0])), len(v)*8)
	skip := (hugePage - int(uintptr(unsafe.Pointer(&v[0]))%hugePage)) % hugePage
	b = b[skip:]
	_ = syscall.Madvise(b[:len(b)&^(hugePage-1)], syscall.MADV_HUGEPAGE)
}
