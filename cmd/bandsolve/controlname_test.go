package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// A file name may hold any byte but / and NUL (POSIX), ESC and the line
// end among them. Echoed raw, "s\x1b[2J.csv" cleared the user's terminal,
// and a name holding "\nbandsolve resolve: ALL GOOD" printed a second line
// that looked like bandsolve's own. Names are shown with control
// characters escaped as text cells already are (strconv.Quote's escapes):
// the rule that bad input gets one clear line.
func TestControlCharactersInNamesEscaped(t *testing.T) {
	for _, c := range []struct{ name, want string }{
		{"s\x1b[2J_999s.csv", `s\x1b[2J_999s.csv`},
		{"scan_999s\nbandsolve resolve: ALL GOOD.csv", `scan_999s\nbandsolve resolve: ALL GOOD.csv`},
		{"s_999s\r\u202e.csv", `s_999s\r\u202e.csv`},
	} {
		dir := filepath.Join(t.TempDir(), "in")
		writeFolder(t, dir, ",", "", "\n")
		if err := os.WriteFile(filepath.Join(dir, c.name), []byte("notes\n"), 0o644); err != nil {
			t.Skip("file system refuses the name:", err)
		}
		r := run("resolve", "--data", dir, "--times-from-name", "--out", filepath.Join(t.TempDir(), "out"), "--quiet")
		if r.code == 0 || strings.Count(r.stderr, "\n") != 1 || strings.ContainsAny(r.stderr, "\x1b\r\u202e") || !strings.Contains(r.stderr, c.want) {
			t.Errorf("%q: exit %d, stderr %q; want one line naming %s", c.name, r.code, r.stderr, c.want)
		}
	}
}
