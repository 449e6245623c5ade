package output

import (
	"encoding/json"
	"strings"
	"testing"
)

// A JSON file bandsolve wrote and someone changed is described by the
// field and the kinds of value JSON has (RFC 8259 §3: object, array,
// string, number, true/false, null), with the byte where it goes wrong,
// never by Go's type names ("campaign.object", "pipeline.InputFile").
func TestJSONFault(t *testing.T) {
	type file struct {
		Path  string `json:"path"`
		Bytes int64  `json:"bytes"`
	}
	type manifest struct {
		Tool     string `json:"tool"`
		Supplied []file `json:"supplied"`
	}
	for _, c := range []struct {
		text string
		into any
		want string
	}{
		{`[1,2,3]`, &map[string]json.RawMessage{}, "the file holds a list where an object belongs, near byte 1"},
		{`{"supplied":["x.csv"]}`, &manifest{}, `the field "supplied" holds a string where an object belongs, near byte 20`},
		{`{"supplied":[{"bytes":"12"}]}`, &manifest{}, `the field "supplied.bytes" holds a string where a whole number belongs, near byte 26`},
		{`{"tool":"bandsolve",`, &manifest{}, "the text stops being JSON at byte 20"},
		{`{"tool":"bandsolve",]`, &manifest{}, "the text stops being JSON at byte 21"},
	} {
		err := json.Unmarshal([]byte(c.text), c.into)
		if err == nil {
			t.Fatalf("%s: no error", c.text)
		}
		got := JSONFault(err)
		if got != c.want || strings.Contains(got, "Go ") {
			t.Errorf("%s: %q, want %q (from %v)", c.text, got, c.want, err)
		}
	}
}
