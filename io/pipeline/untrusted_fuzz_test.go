package pipeline

import (
	"os"
	"path/filepath"
	"testing"

	"github.com/bandsolve/bandsolve/io/cmdfile"
)

// Fuzz targets of the two files of an output folder that verify reads and
// trusts in nothing (docs/security.md): manifest.json and as-run.bsr. Any
// input gives a result or one bounded error, never a panic; what verify
// would accept as a path inside the folder stays inside it.

func FuzzReadManifest(f *testing.F) {
	seed, err := os.ReadFile(filepath.Join("testdata", "untrusted", "manifest.json"))
	if err != nil {
		f.Fatal(err)
	}
	f.Add(seed)
	f.Add([]byte(`{"tool":"bandsolve","supplied":[{"path":"../../x/evil.txt","bytes":8,"sha256":"00"}]}`))
	f.Add([]byte(`{"tool":"bandsolve","inputs":[{"path":"/etc/shadow"}],"supplied":[{"path":"a/../../b"}]}`))
	f.Add([]byte(`{"tool":"other"}`))
	f.Add([]byte(`[1,2`))
	f.Fuzz(func(t *testing.T, b []byte) {
		m, err := parseManifest("out/manifest.json", b)
		if err != nil {
			if n := len(err.Error()); n > 1000 {
				t.Errorf("error of %d bytes", n)
			}
			return
		}
		if m.Tool != "bandsolve" {
			t.Fatalf("accepted a manifest of %q", m.Tool)
		}
		// The rule checkInputs applies to supplied files (and readInside
		// to every name): a path it accepts never leads out of the folder.
		for _, in := range append(append([]InputFile(nil), m.Inputs...), m.Supplied...) {
			p := filepath.FromSlash(in.Path)
			if !filepath.IsLocal(p) {
				continue
			}
			rel, err := filepath.Rel("/out", filepath.Join("/out", p))
			if err != nil || !filepath.IsLocal(rel) {
				t.Errorf("%q: accepted, but leads to %q", in.Path, rel)
			}
		}
	})
}

func FuzzReadRecord(f *testing.F) {
	seed, err := os.ReadFile(filepath.Join("testdata", "untrusted", "as-run.bsr"))
	if err != nil {
		f.Fatal(err)
	}
	f.Add(seed)
	f.Add([]byte("paths-from ../..\ndata ../../etc/passwd\nout ../thesis\nforce\n"))
	f.Add([]byte("out /tmp/x\n"))
	f.Add([]byte("known-spectrum 1=../../a.csv:5\nreference mean:3\n"))
	f.Fuzz(func(t *testing.T, b []byte) {
		if len(b) > cmdfile.MaxBytes {
			return
		}
		s := NewSettings()
		if err := loadRecord("/out/as-run.bsr", b, s); err != nil {
			// Values are quoted clipped: one short line whatever the input.
			if n := len(err.Error()); n > 2000 {
				t.Errorf("error of %d bytes: %.200s", n, err)
			}
			return
		}
		// A record's out, when it has one, stays inside its folder.
		if s.Out != "" {
			rel, err := filepath.Rel("/out", filepath.Clean(s.Path(s.Out)))
			if err != nil || !filepath.IsLocal(rel) {
				t.Errorf("out %q accepted, leads to %q", s.Out, s.Path(s.Out))
			}
		}
	})
}
