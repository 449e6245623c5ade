package pipeline

import "runtime/debug"

// Version of bandsolve, shown by --version and recorded with every run.
const Version = "0.1.0"

// Commit returns the VCS revision the binary was built from, if known.
func Commit() string {
	info, ok := debug.ReadBuildInfo()
	if !ok {
		return "unknown"
	}
	rev, dirty := "unknown", false
	for _, s := range info.Settings {
		switch s.Key {
		case "vcs.revision":
			rev = s.Value
		case "vcs.modified":
			dirty = s.Value == "true"
		}
	}
	if dirty {
		rev += "+modified"
	}
	return rev
}
