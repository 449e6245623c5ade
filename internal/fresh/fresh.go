// Package fresh allocates the data-sized matrices a run is about to write in
// full, with the operating system's advice to back them by huge pages.
//
// Each page of memory a process touches for the first time costs a page
// fault, and on virtual machines a fault costs far more than the writing:
// on the benchmark machine (docs/performance.md) 48 MB in 4 KiB pages took
// 0.16–0.19 s CPU to fill the first time, in 2 MiB pages 0.02–0.06 s. The
// advice changes no value; the kernel ignores it where transparent huge
// pages are off, and memory already touched stays as it is.
//
// Go clears every allocation it hands out, and memory the heap takes back
// from a freed matrix is cleared by the allocation itself, before the
// advice can be given: on pages the runtime had returned to the kernel that
// clearing took the 4 KiB faults the advice is there to spare. Overwritten
// hands out memory without that clearing, for a caller that writes every
// value before it reads any.
//
// It reaches the runtime's allocator, runtime.mallocgc, by a linkname
// (uncleared.go). The runtime's comment on it says not to remove it or
// change its type signature (go.dev/issue/67401), a promise to the packages
// that use it, not a part of Go's compatibility guarantee: should a Go
// release drop it anyway, this package stops building (the linker names
// runtime.mallocgc), and the purego build tag (go build -tags purego) builds
// Overwritten on make instead, cleared memory, the same values written and
// read.
package fresh

import "gonum.org/v1/gonum/mat"

// Matrix is a new zero n × m matrix, advised into huge pages (Advise).
func Matrix(n, m int) *mat.Dense {
	data := make([]float64, n*m)
	Advise(data)
	return mat.NewDense(n, m, data)
}

// Overwritten is a new n × m matrix, advised into huge pages (Advise), whose
// values are whatever its memory held (zero when the kernel has just given
// it, else left from a matrix that was freed): only for a caller that writes
// every value before any is read, and that writing is the first touch of
// pages new to the process, in huge pages.
func Overwritten(n, m int) *mat.Dense {
	data := uncleared(n * m)
	Advise(data)
	return mat.NewDense(n, m, data)
}
