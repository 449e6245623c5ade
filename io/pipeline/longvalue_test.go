package pipeline

import (
	"io"
	"path/filepath"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/cmdfile"
)

// A value of any length is quoted in a message cut to its first
// cmdfile.MaxShown characters and "…" (docs/security.md: "Values are quoted
// in messages clipped to 80 characters and …"): a 1 MB model line once gave
// a 1 MB error line. Every option is set to a long hostile value, whole and
// as the part of a NAME=VALUE pair; a refusal must stay short.
func TestLongValuesShortenedInMessages(t *testing.T) {
	long := strings.Repeat("x", 100_000)
	const most = 600 // a message's own words, and the values cut to 80 characters
	for _, o := range Options() {
		if o.IsSwitch() {
			continue
		}
		for _, v := range []string{long, "1=" + long, long + "=1"} {
			if err := NewSettings().Set(o.Name, v); err != nil && len(err.Error()) > most {
				t.Errorf("%s %.10q…: a message of %d bytes: %.200s", o.Name, v, len(err.Error()), err)
			}
		}
	}
	// A scheme that cannot be read, found when the run starts, and the
	// kinetic pairs read with it.
	scheme := strings.Repeat("A -> ", 200_000) + "A"
	for _, c := range []struct{ model, kstart string }{{scheme, ""}, {"A -> B", "1=" + long}, {"A -> B", long + "=1"}} {
		s := NewSettings()
		s.Data = []string{filepath.Join(t.TempDir(), "none.csv")}
		s.Out = filepath.Join(t.TempDir(), "out")
		s.Model, s.KStart, s.Quiet = c.model, c.kstart, true
		_, err := Execute(s, Streams{Out: io.Discard, Err: io.Discard})
		if err == nil || len(err.Error()) > most || !strings.Contains(err.Error(), "…") {
			t.Errorf("model %.20q…, k-start %.20q…: %d bytes: %.300v", c.model, c.kstart, len(errString(err)), err)
		}
	}
	// A path short enough to name a file (PATH_MAX, 4096 bytes on Linux) is
	// shown whole: the file must be found from the message.
	s0 := NewSettings()
	s0.Data = []string{filepath.Join(t.TempDir(), strings.Repeat("d", 200), "none.csv")}
	s0.Out, s0.Quiet = filepath.Join(t.TempDir(), "out"), true
	if _, err := Execute(s0, Streams{Out: io.Discard, Err: io.Discard}); err == nil || !strings.Contains(err.Error(), s0.Data[0]) {
		t.Errorf("a 200-character path: %v, want it whole", err)
	}
	// In a command file the line's place comes first, then the value cut.
	src := "data s.csv\nmodel " + scheme + "\n"
	s := NewSettings()
	f, err := cmdfile.Parse("f.bsr", []byte(src), Keywords())
	if err != nil {
		t.Fatal(err)
	}
	if _, err := applyCommandFile(f, "f.bsr", s, nil); err != nil {
		t.Fatal(err)
	}
	s.Out, s.Quiet = filepath.Join(t.TempDir(), "out"), true
	if _, err := Execute(s, Streams{Out: io.Discard, Err: io.Discard}); err == nil || len(err.Error()) > most {
		t.Errorf("command file: %d bytes: %.300v", len(errString(err)), err)
	}
}

func errString(err error) string {
	if err == nil {
		return ""
	}
	return err.Error()
}
