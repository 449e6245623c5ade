//go:build !(linux || darwin || freebsd || netbsd || openbsd || dragonfly)

package output

import "os"

// Without flock, commits are not serialised between processes and no
// staging folder is ever taken for a dead run's (tryLock says no).
const noFollow = 0

func openNoFollow(p string) (*os.File, error) {
	return os.OpenFile(p, os.O_RDWR|os.O_CREATE, 0o600)
}

func lock(f *os.File) error             { return nil }
func waitForCommit(final string) func() { return func() {} }
func tryLock(f *os.File) bool           { return false }
func ignorableSyncError(err error) bool { return true }

func removable(dir string) error { return nil }
