package pipeline

import (
	"strings"

	"github.com/bandsolve/bandsolve/io/spectra"
)

// readFault names the option that gave a file in the fault of a file that
// cannot be read at all (missing, a dangling link, no permission): the
// file's own message says nothing of where it was named, so on the command
// line the flag is named, and in a command file the fault is put at the
// line of the option it names, as a data path's is (docs/command-files.md:
// faults found while the run reads "are put at the line that set the
// option"). Any other fault of the file keeps its own place in the file.
func readFault(flag string, err error) error {
	ie, ok := err.(*spectra.InputError)
	if !ok || ie.Line != 0 || !strings.HasPrefix(ie.Msg, "cannot read") {
		return err
	}
	named := *ie
	named.Hint = "check the --" + flag + " path"
	return &named
}
