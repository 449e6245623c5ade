//go:build linux

package output

// sysRenameat2 is renameat2's number on linux/amd64 (arch/x86/entry/syscalls/syscall_64.tbl).
const sysRenameat2 = 316
