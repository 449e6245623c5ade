package pipeline

import (
	"strings"
	"testing"
)

// What verify says of the two programs: nothing when version and commit
// agree and the commit is known; the change when either differs; and, when
// neither build recorded a commit, that the two cannot be told apart.
func TestBuildNotes(t *testing.T) {
	for _, c := range []struct {
		version, commit, thisVersion, thisCommit string
		want                                     string
	}{
		{"0.1.0", "abc123", "0.1.0", "abc123", ""},
		{"0.1.0", "abc123", "0.1.0", "def456", "a difference may come from the change of version"},
		{"0.0.9", "abc123", "0.1.0", "abc123", "written by bandsolve 0.0.9"},
		{"0.1.0", "unknown", "0.1.0", "abc123", "(commit unknown), this is 0.1.0 (commit abc123)"},
		{"0.1.0", "unknown", "0.1.0", "unknown", "neither the program that wrote the folder nor this one recorded its commit"},
	} {
		got := strings.Join(buildNotes(c.version, c.commit, c.thisVersion, c.thisCommit), " | ")
		if (c.want == "") != (got == "") || !strings.Contains(got, c.want) {
			t.Errorf("%s/%s against %s/%s: %q, want %q", c.version, c.commit, c.thisVersion, c.thisCommit, got, c.want)
		}
	}
}
