package campaign

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
)

// Given is the batch as the command line gave it: the command files in
// batch order (patterns expanded, each sorted by name), the arguments that
// name none, and how the batch was given.
type Given struct {
	Files []string
	Bad   []BadArg
	// Args is how many arguments were given; Pattern says that one of them
	// was a pattern expanded here (quoted for the shell, as a job array
	// gives it) that matched at least one file.
	Args    int
	Pattern bool
}

// BadArg is an argument that names no command file, and why; Usage marks a
// slip of the command line (a folder given for its files) rather than a
// file that cannot be read.
type BadArg struct {
	Arg, Why string
	Usage    bool
}

// Expand expands the arguments that are not files but patterns (the shell
// did not, as when quoted for a job array); ext is the command files'
// ending, for the hint given for a folder.
func Expand(args []string, ext string) Given {
	g := Given{Args: len(args)}
	for _, a := range args {
		st, err := os.Stat(a)
		switch {
		case err == nil && st.IsDir():
			pattern := filepath.Join(a, "*"+ext)
			g.Bad = append(g.Bad, BadArg{Arg: a, Usage: true,
				Why: fmt.Sprintf("is a folder, not a command file; give the command files in it, e.g. bandsolve run '%s' (quoted: bandsolve expands the pattern)", pattern)})
		case err != nil && strings.ContainsAny(a, "*?["):
			m, gerr := filepath.Glob(a)
			if gerr != nil || len(m) == 0 {
				g.Bad = append(g.Bad, BadArg{Arg: a, Why: "no file matches this pattern; check the folder and the pattern"})
				continue
			}
			g.Files = append(g.Files, m...)
			g.Pattern = true
		default:
			g.Files = append(g.Files, a)
		}
	}
	return g
}

// Batch says whether the files are run as a batch, each writing to
// OUT/NAME under --out: when several arguments, a pattern or a share
// (--shard) were given. It depends on how the batch was given, never on how
// many files a pattern matched or a share took, so a file writes to the
// same folder (OUT/NAME) whichever pattern or share runs it; only one plain
// file without --shard is a single run, whose --out is its output folder.
func (g Given) Batch(sharded bool) bool {
	return g.Args > 1 || g.Pattern || sharded
}

// Missing lists dir and the folders above it that do not exist yet, the
// deepest first: the folders a batch makes for --out (mkdir -p), which
// Tidy may remove again.
func Missing(dir string) []string {
	var out []string
	for p := filepath.Clean(dir); ; p = filepath.Dir(p) {
		if _, err := os.Lstat(p); err == nil {
			return out
		}
		out = append(out, p)
		if filepath.Dir(p) == p {
			return out
		}
	}
}

// Tidy removes the folders Missing listed that are still empty, deepest
// first, and stops at the first that is not: a batch whose every run
// failed leaves no empty --out folder behind, and a folder holding
// anything (a run's results, a user's file) is never touched (os.Remove
// removes only an empty folder).
func Tidy(made []string) {
	for _, p := range made {
		if os.Remove(p) != nil {
			return
		}
	}
}
