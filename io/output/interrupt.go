package output

import (
	"os"
	"sync"
)

// Staging folders not yet committed or aborted, so that an interrupted
// process can remove them (see Interrupt).
var (
	activeMu   sync.Mutex
	active     = map[*Stage]bool{}
	committing sync.Mutex   // held while Commit swaps folders
	writing    sync.RWMutex // read-held by every Write; Interrupt takes it for good
)

func untrack(s *Stage) {
	activeMu.Lock()
	delete(active, s)
	activeMu.Unlock()
}

// Interrupt removes every staging folder of the process that is neither
// committed nor aborted, and returns them. A commit in progress is let
// finish first, so an output folder is left holding either its earlier
// results or the complete new ones, never a mixture. A write in progress
// is let finish too, and every later Write of the process blocks, so that
// nothing re-creates a removed folder: call Interrupt from a signal handler
// just before exiting.
func Interrupt() []string {
	committing.Lock()
	defer committing.Unlock()
	writing.Lock() // never released: the process is about to exit
	// Never released either: a stage made after this sweep, between its
	// end and the exit, would be left behind.
	activeMu.Lock()
	var dirs []string
	for s := range active {
		for try := 0; try < 3; try++ {
			if err := os.RemoveAll(s.Dir); err == nil {
				break
			}
		}
		dirs = append(dirs, s.Dir)
		delete(active, s)
	}
	return dirs
}
