package pipeline

import (
	"crypto/sha256"
	"encoding/hex"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// growingFile is an open file that another writer appends to while it is
// read: its first Read appends more bytes before reading, as an instrument
// still exporting the series would. Only Read and Stat: an embedded
// *os.File would hand io.Copy its WriteTo, past this Read.
type growingFile struct {
	f     *os.File
	path  string
	grown bool
	t     *testing.T
}

func (g *growingFile) Read(p []byte) (int, error) {
	if !g.grown {
		g.grown = true
		w, err := os.OpenFile(g.path, os.O_APPEND|os.O_WRONLY, 0)
		if err != nil {
			g.t.Fatal(err)
		}
		if _, err := w.WriteString("9000,0.5\n"); err != nil {
			g.t.Fatal(err)
		}
		if err := w.Close(); err != nil {
			g.t.Fatal(err)
		}
	}
	return g.f.Read(p)
}

func (g *growingFile) Stat() (os.FileInfo, error) { return g.f.Stat() }

// TestHashRefusesAFileChangedWhileRead: a file that grows while it is
// hashed gets an error naming it and saying what to do, by both hashing
// routes (HashFile's and the yielding one beside the parse); a file left
// alone gets the SHA-256 Go's crypto/sha256 (FIPS 180-4) gives for its
// bytes, over several of the yielding route's pieces.
func TestHashRefusesAFileChangedWhileRead(t *testing.T) {
	dir := t.TempDir()
	body := strings.Repeat("1000,0.25\n", 3*hashPiece/10+7)
	routes := map[string]func(r io.Reader, path string) (int64, string, error){
		"whole":    hashStream,
		"yielding": func(r io.Reader, path string) (int64, string, error) { return hashYielding(r, path, new(hashTurn)) },
	}
	for name, route := range routes {
		p := filepath.Join(dir, name+".csv")
		if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
		hash := func(f statReader) (int64, string, error) {
			return hashUnchanged(f, p, func(r io.Reader) (int64, string, error) { return route(r, p) })
		}
		f, err := os.Open(p)
		if err != nil {
			t.Fatal(err)
		}
		n, sum, err := hash(f)
		f.Close()
		want := sha256.Sum256([]byte(body))
		if err != nil || n != int64(len(body)) || sum != hex.EncodeToString(want[:]) {
			t.Errorf("%s, unchanged file: %d bytes, %s, %v; want %d, %x", name, n, sum, err, len(body), want)
		}
		f, err = os.Open(p)
		if err != nil {
			t.Fatal(err)
		}
		_, sum, err = hash(&growingFile{f: f, path: p, t: t})
		f.Close()
		if err == nil || sum != "" {
			t.Fatalf("%s, growing file: sum %q, error %v; want an error and no sum", name, sum, err)
		}
		for _, part := range []string{p, "changed while it was read", "run again once the file is no longer being written"} {
			if !strings.Contains(err.Error(), part) {
				t.Errorf("%s, growing file: error %q does not say %q", name, err, part)
			}
		}
		if strings.Contains(err.Error(), "\n") {
			t.Errorf("%s: error on more than one line: %q", name, err)
		}
	}
}
