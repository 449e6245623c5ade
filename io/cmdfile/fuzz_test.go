package cmdfile

import (
	"reflect"
	"testing"
)

// FuzzParse checks that Parse never panics, and that whatever it accepts,
// Format writes back as text that Parse reads to the same settings.
func FuzzParse(f *testing.F) {
	f.Add([]byte("data scans/\nkind absorbance\n"))
	f.Add([]byte("paths-from ..\r\nblank 'a b.csv' # c\n"))
	f.Add([]byte("model \"A -> \\\"B\\\"\"\nforce\n"))
	f.Fuzz(func(t *testing.T, src []byte) {
		a, err := Parse("fuzz", src, keys)
		if err != nil {
			if _, ok := err.(*Error); !ok {
				t.Fatalf("error of type %T: %v", err, err)
			}
			return
		}
		text, err := Format(a)
		if err != nil {
			t.Fatalf("accepted %q but cannot write it back: %v", src, err)
		}
		b, err := Parse("fuzz", text, keys)
		if err != nil {
			t.Fatalf("%q written back as %q does not parse: %v", src, text, err)
		}
		if a.PathsFrom != b.PathsFrom || !reflect.DeepEqual(kv(a), kv(b)) {
			t.Fatalf("%q -> %q changed the settings:\n%q\n%q", src, text, kv(a), kv(b))
		}
	})
}
