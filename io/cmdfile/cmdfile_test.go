package cmdfile

import (
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

// keys mirrors the shape of bandsolve's settings: repeatable paths, choices
// that are words or files, switches and the output folder.
var keys = []Keyword{
	{Name: "data", Multi: true, Path: ReadPath},
	{Name: "kind"},
	{Name: "blank", Path: ReadPath},
	{Name: "reference", Path: ReadPath, Words: []string{"first", "mean:"}},
	{Name: "times", Path: ReadPath},
	{Name: "times-from-name", Switch: true},
	{Name: "time-unit"},
	{Name: "region", Multi: true},
	{Name: "exclude", Multi: true},
	{Name: "components"},
	{Name: "model"},
	{Name: "map"},
	{Name: "init", Path: ReadPath, Words: []string{"purest", "efa"}},
	{Name: "out", Path: WritePath},
	{Name: "force", Switch: true},
}

func kv(f *File) [][2]string {
	var out [][2]string
	for _, e := range f.Entries {
		out = append(out, [2]string{e.Key, e.Value})
	}
	return out
}

func TestParseGood(t *testing.T) {
	src := "\ufeff# an experiment\r\n" +
		"paths-from raw\n" +
		"data     scans/          # the folder\n" +
		"data     'run two/'\n" +
		"kind     single-beam\n" +
		"blank    \"C:\\lab\\blank beam.csv\"\n" +
		"\tmodel    A -> B -> C   # scheme\n" +
		"map      A=1,B=2#not-a-comment\n" +
		"times-from-name\n" +
		"force off\n" +
		"region   \"\"\n" +
		"reference mean:4\n" +
		"init     \"say \\\"hi\\\" \\\\ \"\n" +
		"out      ../results/one\n"
	f, err := Parse("exp.bsr", []byte(src), keys)
	if err != nil {
		t.Fatal(err)
	}
	want := [][2]string{
		{"data", "scans/"}, {"data", "run two/"}, {"kind", "single-beam"},
		{"blank", `C:\lab\blank beam.csv`}, {"model", "A -> B -> C"}, {"map", "A=1,B=2#not-a-comment"},
		{"times-from-name", "on"}, {"force", "off"}, {"region", ""}, {"reference", "mean:4"},
		{"init", `say "hi" \ `}, {"out", "../results/one"},
	}
	if got := kv(f); !reflect.DeepEqual(got, want) {
		t.Fatalf("entries\n got %q\nwant %q", got, want)
	}
	if f.PathsFrom != "raw" || f.PathsFromLine != 2 {
		t.Errorf("paths-from = %q line %d", f.PathsFrom, f.PathsFromLine)
	}
	if e := f.Entries[4]; e.Line != 7 || e.Col != 2 || e.ValueCol != 11 {
		t.Errorf("model at %d:%d value col %d, want 7:2 value col 11", e.Line, e.Col, e.ValueCol)
	}
	if got := f.Dir(filepath.FromSlash("/lab/exp")); got != filepath.FromSlash("/lab/exp/raw") {
		t.Errorf("Dir = %s", got)
	}
}

func TestParseErrors(t *testing.T) {
	for _, c := range []struct{ name, src, want string }{
		{"misspelt", "kind absorbance\ncomponets 3\n", "f.bsr:2:1: unknown keyword \"componets\" (did you mean \"components\"?)"},
		{"transposed", "  dtaa x.csv\n", "f.bsr:1:3: unknown keyword \"dtaa\" (did you mean \"data\"?)"},
		{"capitals", "Data x.csv\n", "(did you mean \"data\"?)"},
		{"underscore", "time_unit min\n", "(did you mean \"time-unit\"?)"},
		{"far", "colour blue\n", "unknown keyword \"colour\"; see docs/command-files.md"},
		{"dashes", "--data x.csv\n", "f.bsr:1:1: unknown keyword \"--data\"; write keywords without dashes, e.g. \"data\""},
		{"equals", "kind=absorbance\n", "separate keyword and value by a space: \"kind absorbance\""},
		{"no value", "kind\n", "f.bsr:1:1: kind needs a value"},
		{"twice", "kind a\n\nkind b\n", "f.bsr:3:1: kind is set twice (first on line 1)"},
		{"open quote", "blank \"x.csv\n", "f.bsr:1:7: quote \" is not closed"},
		{"after quote", "blank 'x' y\n", "f.bsr:1:11: text after the quoted value"},
		{"hash after quote", "blank 'x'#c\n", "f.bsr:1:10: put a space before the #"},
		{"url", "data https://example.org/a.jdx\n", "f.bsr:1:6: \"https://example.org/a.jdx\" is a network address"},
		{"share", "blank \\\\server\\share\\b.csv\n", "is a network address"},
		{"out up", "out ../elsewhere\n", "f.bsr:1:5: out \"../elsewhere\" leaves the command file's folder"},
		{"out here", "out .\n", "leaves the command file's folder"},
		{"out absolute", "out /tmp/x\n", "is absolute"},
		// docs/command-files.md: "with `paths-from`, the combined path must
		// still stay inside": the message names that combined path and the
		// paths-from line it comes from, since it is not the one written.
		{"out via paths-from", "paths-from ..\nout results\n", "f.bsr:2:5: out \"results\", read from paths-from \"..\" (line 1) as \"../results\", leaves"},
		{"out via paths-from, after a comment", "# c\npaths-from ../data\nout shared\n", "f.bsr:3:5: out \"shared\", read from paths-from \"../data\" (line 2) as \"../data/shared\", leaves the command file's folder; name a folder inside it as seen from there, e.g. out ../cmdfile/results"},
		{"paths-from late", "kind a\npaths-from x\n", "f.bsr:2:1: paths-from must come before the first setting (line 1)"},
		{"control", "kind a\x01b\n", "f.bsr:1:7: control character U+0001"},
		{"not utf8", "kind a\nmodel \xff\n", "f.bsr:2: is not UTF-8"},
	} {
		t.Run(c.name, func(t *testing.T) {
			_, err := Parse("f.bsr", []byte(c.src), keys)
			if err == nil {
				t.Fatalf("no error for %q", c.src)
			}
			var ce *Error
			if !errors.As(err, &ce) {
				t.Errorf("error %T is not *Error", err)
			}
			if !strings.Contains(err.Error(), c.want) {
				t.Errorf("error\n %s\nwant it to contain\n %s", err, c.want)
			}
		})
	}
}

func TestWordsAreNotPaths(t *testing.T) {
	// "mean:4" would look like a scheme to a naive URL test; words of a
	// path keyword are choices, not files.
	if _, err := Parse("f", []byte("reference mean:4\ninit efa\n"), keys); err != nil {
		t.Fatal(err)
	}
	// A Windows drive letter is a local path.
	if _, err := Parse("f", []byte("blank C:\\lab\\b.csv\n"), keys); err != nil {
		t.Fatal(err)
	}
}

func TestApplyNamesPlace(t *testing.T) {
	f, err := Parse("f.bsr", []byte("kind a\n  components   many\n"), keys)
	if err != nil {
		t.Fatal(err)
	}
	err = f.Apply(func(e Entry) error {
		if e.Key == "components" {
			return errors.New(`"many": want auto or a whole number ≥ 1`)
		}
		return nil
	})
	if err == nil || err.Error() != `f.bsr:2:16: "many": want auto or a whole number ≥ 1` {
		t.Fatalf("got %v", err)
	}
}

func TestQuoteRoundTrip(t *testing.T) {
	for _, v := range []string{"", "plain", " lead", "trail ", "a #b", "#x", "'q", `"dq`, `it's "x"`, `C:\a\`, `it's \`, "tab\there", "ünïcode ∆"} {
		q, err := Quote(v)
		if err != nil {
			t.Fatal(err)
		}
		f, err := Parse("f", []byte("model "+q+"\n"), keys)
		if err != nil {
			t.Fatalf("%q quoted as %s: %v", v, q, err)
		}
		if got := f.Entries[0].Value; got != v {
			t.Errorf("%q quoted as %s reads back as %q", v, q, got)
		}
	}
	if _, err := Quote("a\nb"); err == nil {
		t.Error("a line break was accepted")
	}
}

func TestNearest(t *testing.T) {
	for in, want := range map[string]string{"exlude": "exclude", "regon": "region", "blnak": "blank", "time": "times", "paths-form": "paths-from", "xyzzy": ""} {
		if got := Nearest(in, keys); got != want {
			t.Errorf("Nearest(%q) = %q, want %q", in, got, want)
		}
	}
}

func TestInside(t *testing.T) {
	dir := t.TempDir()
	if err := os.Mkdir(filepath.Join(dir, "sub"), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := Inside(dir, filepath.Join(dir, "sub", "new", "deeper")); err != nil {
		t.Errorf("inside: %v", err)
	}
	if err := Inside(dir, dir); err == nil {
		t.Error("the folder itself was accepted")
	}
	other := t.TempDir()
	if err := os.Symlink(other, filepath.Join(dir, "link")); err != nil {
		t.Skip("no symbolic links here:", err)
	}
	if err := Inside(dir, filepath.Join(dir, "link", "results")); err == nil {
		t.Error("a link out of the folder was accepted")
	}
}
