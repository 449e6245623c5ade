//go:build unix

package regular

import "syscall"

// nonBlock opens without waiting for a FIFO's writer.
const nonBlock = syscall.O_NONBLOCK
