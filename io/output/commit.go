package output

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"time"

	"github.com/bandsolve/bandsolve/internal/fanout"

	"github.com/bandsolve/bandsolve/internal/regular"
)

// The commit, safe against kill -9 and a second run at any instant
// (docs/security.md):
//
//  1. every staged file and folder is flushed to disk (fsync), so a crash
//     after the rename cannot leave the new names pointing at empty files
//     (the files Write stores are flushed as they are written, flush.go;
//     the commit waits for those flushes and does the rest);
//  2. under an exclusive lock on PARENT/.OUT.lock (flock; a second run
//     waits its turn), a swap a killed run left half done is completed or
//     rolled back (tidy), and the output folder is checked again;
//  3. with no output folder, one rename puts the stage in place; with one,
//     renameat2(RENAME_EXCHANGE) swaps the two folders in one step, so OUT
//     always holds either the earlier or the new results, complete. Where
//     the system has no exchange, the two renames are recorded first in
//     PARENT/.OUT.swap, which the next run reads to complete or roll back;
//  4. the parent folder is flushed, and the earlier results removed, file
//     by file from their manifest's list (own.go), never as a tree.

// started is when this process began: a staging folder not touched since
// then, and whose run holds no lock on it, belongs to a dead run.
var started = time.Now()

// exchange is renameExchange; a variable so that a test can take the
// two-step path.
var exchange = renameExchange

// Commit replaces the output folder by the staging folder.
func (s *Stage) Commit() error {
	committing.Lock()
	defer committing.Unlock()
	defer untrack(s)
	defer s.release()
	fail := func(err error) error { os.RemoveAll(s.Dir); return err }
	// Flushing needs no lock: the stage is this run's alone. The files
	// flushed since their last write (flush.go) are not flushed again.
	var flushed map[string]bool
	var err error
	if s.flush != nil {
		flushed, err = s.flush.finish()
	}
	if err == nil {
		err = syncTree(s.Dir, flushed)
	}
	if err != nil {
		return fail(fmt.Errorf("%s: cannot flush the results to disk: %w", s.Final, err))
	}
	unlock, err := lockParent(s.Final)
	if err != nil {
		return fail(err)
	}
	defer unlock()
	if err := recoverSwap(s.Final); err != nil {
		return fail(err)
	}
	parent := filepath.Dir(s.Final)
	st, err := os.Lstat(s.Final)
	if errors.Is(err, os.ErrNotExist) {
		if err := os.Rename(s.Dir, s.Final); err != nil {
			return fail(fmt.Errorf("%s: cannot move results into place: %w", s.Final, unwrap(err)))
		}
		return syncDir(parent)
	}
	if err != nil {
		return fail(fmt.Errorf("%s: %w", s.Final, unwrap(err)))
	}
	if err := replaceable(s.Final, s.Final, st, s.Force); err != nil {
		return fail(err)
	}
	if err := exchange(s.Dir, s.Final); err == nil {
		// The stage's name now holds the earlier results.
		syncDir(parent)
		dropEarlier(s.Dir, s.Final)
		return nil
	}
	return s.swapInTwoSteps()
}

// swapInTwoSteps moves the earlier results aside and the stage in, having
// recorded both names in the swap file so that the next run can finish or
// undo a swap cut short (recoverSwap).
func (s *Stage) swapInTwoSteps() error {
	old := s.Dir + ".old"
	parent := filepath.Dir(s.Final)
	j := swapPath(s.Final)
	rec := filepath.Base(s.Dir) + "\n" + filepath.Base(old) + "\n"
	// Written aside and renamed into place, so that a kill while writing
	// leaves no half record that would stop every later run.
	if err := writeSynced(j+".tmp", []byte(rec)); err != nil {
		os.Remove(j + ".tmp")
		os.RemoveAll(s.Dir)
		return fmt.Errorf("%s: cannot record the swap in %s: %w", s.Final, j, unwrap(err))
	}
	if err := os.Rename(j+".tmp", j); err != nil {
		os.Remove(j + ".tmp")
		os.RemoveAll(s.Dir)
		return fmt.Errorf("%s: cannot record the swap in %s: %w", s.Final, j, unwrap(err))
	}
	syncDir(parent)
	if err := os.Rename(s.Final, old); err != nil {
		os.Remove(j)
		os.RemoveAll(s.Dir)
		return fmt.Errorf("%s: cannot move earlier results aside: %w", s.Final, unwrap(err))
	}
	if err := os.Rename(s.Dir, s.Final); err != nil {
		os.Rename(old, s.Final)
		os.Remove(j)
		os.RemoveAll(s.Dir)
		return fmt.Errorf("%s: cannot move results into place: %w", s.Final, unwrap(err))
	}
	syncDir(parent)
	os.Remove(j)
	syncDir(parent)
	dropEarlier(old, s.Final)
	return nil
}

// removeDeadStage removes the staging folder p of a dead run. One that
// holds a list of its files (own.go) may hold the earlier results a commit
// swapped out and was killed while removing: they go file by file, as
// after a commit. One without the list is a stage whose run died before
// it was complete, holding nothing but what that run wrote.
func removeDeadStage(p, final string) {
	root := openTree(p)
	if root == nil {
		return
	}
	_, listed := ownFiles(root)
	root.Close()
	if listed {
		dropEarlier(p, final)
		return
	}
	os.RemoveAll(p)
}

// openTree opens an os.Root on the folder dir itself, or returns nil when
// dir is not a folder: a link named dir is not followed, and a folder
// swapped in after the check is not the one opened (os.SameFile).
func openTree(dir string) *os.Root {
	st, err := os.Lstat(dir)
	if err != nil || !st.IsDir() {
		return nil
	}
	root, err := os.OpenRoot(dir)
	if err != nil {
		return nil
	}
	if rst, err := root.Stat("."); err != nil || !os.SameFile(st, rst) {
		root.Close()
		return nil
	}
	return root
}

// treeFiles lists every entry below root that is not a folder, links
// included (fs.WalkDir does not follow them), as names inside root.
func treeFiles(root *os.Root) []string {
	var files []string
	fs.WalkDir(root.FS(), ".", func(p string, d fs.DirEntry, err error) error {
		if err == nil && !d.IsDir() {
			files = append(files, p)
		}
		return nil
	})
	return files
}

// removeFiles removes the named entries of root on up to eight goroutines:
// each removal waits on the file system (its journal, and on this
// machine's ext4, mounted with discard, the blocks freed), and several
// overlap. Through root, a folder of the tree swapped for a link between
// the listing and a removal cannot lead a removal outside the tree, and a
// link is removed, never followed.
func removeFiles(root *os.Root, files []string) {
	var wg sync.WaitGroup
	work := make(chan string)
	for w := 0; w < min(8, len(files)); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for p := range work {
				root.Remove(p)
			}
		}()
	}
	for _, p := range files {
		work <- p
	}
	close(work)
	wg.Wait()
}

func stagePrefix(final string) string { return "." + filepath.Base(final) + ".partial-" }

// maxSwapRecord bounds what is read of a swap record: two folder names.
const maxSwapRecord = 64 << 10

func swapPath(final string) string {
	return filepath.Join(filepath.Dir(final), "."+filepath.Base(final)+".swap")
}

// recoverSwap finishes or rolls back a two-step swap that a killed run
// recorded. Call it holding the parent lock: then no live run is swapping.
// The record is not trusted beyond naming two staging folders of final.
func recoverSwap(final string) error {
	j := swapPath(final)
	b, err := regular.ReadFile(j, maxSwapRecord)
	if errors.Is(err, os.ErrNotExist) {
		return nil
	}
	if err != nil {
		return fmt.Errorf("%s: cannot read %s: %w", final, j, unwrap(err))
	}
	names := strings.Fields(string(b))
	prefix := stagePrefix(final)
	if len(names) != 2 || names[1] != names[0]+".old" || !strings.HasPrefix(names[0], prefix) || strings.ContainsAny(names[0], `/\`) {
		return fmt.Errorf("%s: %s is not a swap record of bandsolve; remove it if no bandsolve run is writing here", final, j)
	}
	parent := filepath.Dir(final)
	stage, old := filepath.Join(parent, names[0]), filepath.Join(parent, names[1])
	exists := func(p string) bool { _, err := os.Lstat(p); return err == nil }
	switch {
	case !exists(final) && exists(stage):
		// Killed between the two renames: the stage was complete.
		if err = os.Rename(stage, final); err == nil {
			dropEarlier(old, final)
		}
	case !exists(final) && exists(old):
		err = os.Rename(old, final)
	case exists(old):
		// Both renames were done; the earlier results were still to go.
		dropEarlier(old, final)
	default:
		// Killed before the first rename: OUT is as it was.
		err = os.RemoveAll(stage)
	}
	if err != nil {
		return fmt.Errorf("%s: cannot finish the swap a stopped run left (%s): %w", final, j, unwrap(err))
	}
	syncDir(parent)
	os.Remove(j)
	return syncDir(parent)
}

// tidy, before a run stages, finishes a swap a killed run left and removes
// the staging folders of dead runs: older than this process, and not
// locked by a live one.
func tidy(final string) error {
	unlock, err := lockParent(final)
	if err != nil {
		return err
	}
	defer unlock()
	return tidyLocked(final)
}

// tidyLocked is tidy for a caller that holds the parent lock.
func tidyLocked(final string) error {
	// A swap record is written under the lock and renamed into place
	// whole; a temporary one seen under the lock is a killed run's.
	os.Remove(swapPath(final) + ".tmp")
	if err := recoverSwap(final); err != nil {
		return err
	}
	parent := filepath.Dir(final)
	ents, err := os.ReadDir(parent)
	if err != nil {
		return nil
	}
	for _, e := range ents {
		if !strings.HasPrefix(e.Name(), stagePrefix(final)) || !(e.IsDir() || e.Type().IsRegular()) {
			continue
		}
		p := filepath.Join(parent, e.Name())
		if info, err := e.Info(); err != nil || !info.ModTime().Before(started) {
			continue
		}
		if e.Type().IsRegular() {
			// A write probe of Check (output.go) that a kill left behind.
			os.Remove(p)
			continue
		}
		if f, err := os.Open(p); err == nil {
			dead := tryLock(f)
			f.Close()
			if dead {
				removeDeadStage(p, final)
			}
		}
	}
	return nil
}

// lockParent takes the exclusive lock of final's parent folder, waiting
// for another run to finish its commit. The lock file is removed on unlock;
// a run that locked a file just removed tries again.
func lockParent(final string) (unlock func(), err error) {
	p := lockPath(final)
	for try := 0; try < 100; try++ {
		f, err := openNoFollow(p)
		if err != nil {
			return nil, fmt.Errorf("%s: cannot create the lock file %s: %w", final, p, unwrap(err))
		}
		if err := lock(f); err != nil {
			f.Close()
			return nil, fmt.Errorf("%s: cannot lock %s: %w", final, p, err)
		}
		fst, err1 := f.Stat()
		pst, err2 := os.Lstat(p)
		if err1 == nil && err2 == nil && os.SameFile(fst, pst) {
			return func() { os.Remove(p); f.Close() }, nil
		}
		f.Close()
	}
	return nil, fmt.Errorf("%s: cannot take the lock %s (it keeps changing)", final, p)
}

// lockPath is the lock file of final's parent folder (lockParent).
func lockPath(final string) string {
	return filepath.Join(filepath.Dir(final), "."+filepath.Base(final)+".lock")
}

// syncTree flushes every file and folder below dir to disk, several at a
// time (the file system batches them into few journal commits), but the
// regular files in flushed (flushed since their last write).
func syncTree(dir string, flushed map[string]bool) error {
	var paths []string
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if !(d.Type().IsRegular() && flushed[p]) {
			paths = append(paths, p)
		}
		return nil
	})
	if err != nil {
		return err
	}
	errs := make([]error, len(paths))
	var wg sync.WaitGroup
	work := make(chan int)
	for w := 0; w < 8; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range work {
				errs[i] = flushOne(paths[i])
			}
		}()
	}
	for i := range paths {
		work <- i
	}
	close(work)
	wg.Wait()
	return errors.Join(errs...)
}

// flushOne is syncPath(p) on a flushing goroutine (syncTree's, the
// flusher's). A panic there, unrecovered, would end the program past a
// batch's recovery per run (cmd/bandsolve runOne). It is a bug of this
// program (a flush that fails gets an error), and becomes p's error rather
// than a panic raised again on the caller: the commit already returns its
// flushes' errors, and on an error it removes the staging folder and leaves
// the output folder as it was, where a panic would leave the stage for the
// next run's tidy. No flushing goroutine ends early, so syncTree's hand-out
// never waits for a worker that is gone, and the errors are joined in the
// paths' order whatever the scheduling.
func flushOne(p string) (err error) {
	defer func() {
		if v := recover(); v != nil {
			err = fmt.Errorf("%s: internal error while flushing it to disk: %w (please report it)", p, fanout.Error(v))
		}
	}()
	return syncPath(p)
}

// syncPath is flushPath; a variable so that a test can watch the flushes.
var syncPath = flushPath

// flushPath flushes the file or folder p to disk.
func flushPath(p string) error {
	f, err := os.Open(p)
	if err != nil {
		return err
	}
	defer f.Close()
	if err := f.Sync(); err != nil && !ignorableSyncError(err) {
		return err
	}
	return nil
}

// syncDir flushes a folder's entries (a rename's new name) to disk.
func syncDir(dir string) error {
	if err := syncPath(dir); err != nil {
		return fmt.Errorf("%s: cannot flush to disk: %w", dir, unwrap(err))
	}
	return nil
}

func writeSynced(p string, b []byte) error {
	f, err := os.OpenFile(p, os.O_WRONLY|os.O_CREATE|os.O_TRUNC|noFollow, 0o644)
	if err != nil {
		return err
	}
	if _, err := f.Write(b); err != nil {
		f.Close()
		return err
	}
	if err := f.Sync(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}
