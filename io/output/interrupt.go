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
	committing sync.Mutex // held while Commit swaps folders
)

func track(s *Stage) {
	activeMu.Lock()
	active[s] = true
	activeMu.Unlock()
}

func untrack(s *Stage) {
	activeMu.Lock()
	delete(active, s)
	activeMu.Unlock()
}

// Interrupt removes every staging folder of the process that is neither
// committed nor aborted, and returns them. A commit in progress is let
// finish first, so an output folder is left holding either its earlier
// results or the complete new ones, never a mixture. Call it from a signal
// handler just before exiting.
func Interrupt() []string {
	committing.Lock()
	defer committing.Unlock()
	activeMu.Lock()
	defer activeMu.Unlock()
	var dirs []string
	for s := range active {
		os.RemoveAll(s.Dir)
		dirs = append(dirs, s.Dir)
		delete(active, s)
	}
	return dirs
}
