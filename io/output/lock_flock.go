//go:build linux || darwin || freebsd || netbsd || openbsd || dragonfly

package output

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"syscall"
)

// noFollow makes an open fail on a symbolic link: a link planted where a
// lock or swap file goes must not make bandsolve create a file elsewhere.
const noFollow = syscall.O_NOFOLLOW

func openNoFollow(p string) (*os.File, error) {
	return os.OpenFile(p, os.O_RDWR|os.O_CREATE|noFollow, 0o600)
}

// lock waits for an exclusive flock on f; the system releases it when the
// process dies, however it dies.
func lock(f *os.File) error {
	for {
		err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX)
		if !errors.Is(err, syscall.EINTR) {
			return err
		}
	}
}

// waitForCommit waits until no run holds final's parent lock (a commit
// holds it from the swap to the removal of the earlier results) and
// returns what ends the wait's hold. It creates and removes nothing: the
// lock file is opened only if a run made it, and held shared, so that a
// signal while it is held leaves no file behind (lockParent's file, made
// and removed by the run that holds it, would be left by a kill).
func waitForCommit(final string) (done func()) {
	f, err := os.OpenFile(lockPath(final), os.O_RDONLY|noFollow, 0)
	if err != nil {
		return func() {} // no lock file: no commit under way
	}
	for {
		err := syscall.Flock(int(f.Fd()), syscall.LOCK_SH)
		if !errors.Is(err, syscall.EINTR) {
			break
		}
	}
	return func() { f.Close() }
}

// tryLock takes an exclusive flock on f if no one holds one.
func tryLock(f *os.File) bool {
	return syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB) == nil
}

// ignorableSyncError: some file systems cannot fsync a folder (EINVAL).
func ignorableSyncError(err error) bool { return errors.Is(err, syscall.EINVAL) }

// removable checks that every folder below dir may have entries removed,
// so that replacing dir cannot fail half-way and leave its earlier results
// behind under another name. access(2) says what this user may do (root
// may do anything on a writable file system).
func removable(dir string) error {
	return filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() {
			if err := syscall.Access(p, 2 /* W_OK */); err != nil {
				return fmt.Errorf("%s: %w", p, err)
			}
		}
		return nil
	})
}
