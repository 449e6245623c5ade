package output

import (
	"errors"
	"os"
	"sync"
)

// flusher flushes the files of a stage to disk (fsync) as they are
// written, on a few goroutines, so that the commit, which must have every
// file on disk before the rename (step 1 in commit.go), finds most of them
// flushed already and waits only for the rest: the flushes wait on the
// disk while the run goes on computing its later files. What the commit
// guarantees does not change: it still flushes, before the rename, every
// file and folder of the stage that no flush has covered since the file's
// last write, and every folder (a folder's new entries are flushed there,
// after the last of them is made).
//
// A flush covers a write when it began after the write ended: each write of
// a path is numbered, and a flush queued after write g records g once it
// succeeds. A path written again after that is flushed again. A flush that
// could not open its file records nothing, and the commit flushes the file
// itself. A flush that failed after opening it is kept as an error the
// commit reports: Linux reports a write-back error to one fsync only (the
// error is marked seen, and a descriptor opened later is not told;
// errseq_t, Documentation/filesystems/vfs.rst, from memory), so the
// commit's own flush of that file could succeed with its data lost. Files
// are opened read-only by their path inside the staging folder, so a flush
// never creates anything, not even after Interrupt removed the folder.
type flusher struct {
	mu      sync.Mutex
	written map[string]uint64 // path → writes so far
	flushed map[string]uint64 // path → the write the last flush covered
	queue   []flushJob
	running int   // goroutines flushing
	stop    bool  // Abort: the queue is dropped
	err     error // the flushes that failed past opening their file
	wg      sync.WaitGroup
}

type flushJob struct {
	path  string
	write uint64
}

// flushers is how many flushes run at once: enough for the file system to
// gather several into one journal commit, as syncTree's.
const flushers = 4

// add queues path, just written, for a flush.
func (f *flusher) add(path string) {
	f.mu.Lock()
	defer f.mu.Unlock()
	if f.written == nil {
		f.written, f.flushed = map[string]uint64{}, map[string]uint64{}
	}
	f.written[path]++
	f.queue = append(f.queue, flushJob{path, f.written[path]})
	if f.running < flushers && !f.stop {
		f.running++
		f.wg.Add(1)
		go f.work()
	}
}

func (f *flusher) work() {
	defer f.wg.Done()
	for {
		f.mu.Lock()
		if len(f.queue) == 0 || f.stop {
			f.running--
			f.mu.Unlock()
			return
		}
		j := f.queue[0]
		f.queue = f.queue[1:]
		f.mu.Unlock()
		err := flushOne(j.path) // a panic too, as an error
		f.mu.Lock()
		if err == nil {
			f.flushed[j.path] = max(f.flushed[j.path], j.write)
		} else if !notOpened(err) {
			f.err = errors.Join(f.err, err)
		}
		f.mu.Unlock()
	}
}

// notOpened says err is flushPath's failure to open the file: nothing was
// flushed, and no write-back error was taken from the file.
func notOpened(err error) bool {
	var pe *os.PathError
	return errors.As(err, &pe) && pe.Op == "open"
}

// finish waits for the flushes queued and returns the paths flushed since
// their last write, and the flushes that failed past opening their file.
func (f *flusher) finish() (map[string]bool, error) {
	f.wg.Wait()
	f.mu.Lock()
	defer f.mu.Unlock()
	done := map[string]bool{}
	for p, w := range f.written {
		if f.flushed[p] == w {
			done[p] = true
		}
	}
	return done, f.err
}

// abandon drops the flushes not begun and waits for those running.
func (f *flusher) abandon() {
	f.mu.Lock()
	f.stop, f.queue = true, nil
	f.mu.Unlock()
	f.wg.Wait()
}
