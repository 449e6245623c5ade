//go:build linux

package output

import "syscall"

const sysRenameat2 = syscall.SYS_RENAMEAT2
