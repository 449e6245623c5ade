//go:build !unix

package regular

// nonBlock is unset where there are no FIFOs to wait on in the file system.
const nonBlock = 0
