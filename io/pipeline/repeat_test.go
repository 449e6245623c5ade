package pipeline

import (
	"fmt"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/cmdfile"
)

// The "set twice" message lists what may repeat; it must name exactly the
// keywords the parser lets through twice (the user's check: zero-region
// repeated fine while the message said only data, region and exclude).
func TestSetTwiceNamesWhatRepeats(t *testing.T) {
	_, err := cmdfile.Parse("f.bsr", []byte("kind absorbance\nkind difference\n"), Keywords())
	if err == nil {
		t.Fatal("kind given twice was accepted")
	}
	_, list, ok := strings.Cut(err.Error(), "only ")
	if !ok {
		t.Fatalf("message names nothing that repeats: %v", err)
	}
	list = strings.TrimSuffix(list, " may repeat")
	listed := map[string]bool{}
	for _, f := range strings.FieldsFunc(list, func(r rune) bool { return r == ',' || r == ' ' }) {
		if f != "and" {
			listed[f] = true
		}
	}
	for _, o := range Options() {
		v := "x"
		if o.IsSwitch() {
			v = "on"
		}
		src := fmt.Sprintf("%s %s\n%s %s\n", o.Name, v, o.Name, v)
		_, err := cmdfile.Parse("f.bsr", []byte(src), Keywords())
		repeats := err == nil || !strings.Contains(err.Error(), "set twice")
		if repeats != listed[o.Name] {
			t.Errorf("%s: repeats %v, listed as repeatable %v (%q)", o.Name, repeats, listed[o.Name], list)
		}
	}
}
