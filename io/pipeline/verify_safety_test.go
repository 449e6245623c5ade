package pipeline

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"io/fs"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

// The promises checked here are docs/security.md's: nothing in an output
// folder is trusted, verify writes only into its own private temporary
// folder, and it never shows another file's content or digest.

// verifyFolder makes an output folder of the scans example (small: ten
// scans, no report) under root/proj and returns its path.
func verifyFolder(t *testing.T, root string) string {
	t.Helper()
	proj := filepath.Join(root, "proj")
	writeScans(t, proj, 10)
	s := scanSettings(proj, "out")
	s.Report, s.Bands = "off", "off"
	if _, err := Execute(s, Streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}); err != nil {
		t.Fatal(err)
	}
	return filepath.Join(proj, "out")
}

func editManifest(t *testing.T, out string, edit func(m *Manifest)) {
	t.Helper()
	m, err := ReadManifest(out)
	if err != nil {
		t.Fatal(err)
	}
	edit(m)
	b, _ := json.MarshalIndent(m, "", "  ")
	writeFile(t, filepath.Join(out, ManifestName), b)
}

func fingerprint(b []byte) InputFile {
	sum := sha256.Sum256(b)
	return InputFile{Bytes: int64(len(b)), SHA256: hex.EncodeToString(sum[:])}
}

// noFileNamed fails if a file called name exists anywhere below dir other
// than at the paths allowed.
func noFileNamed(t *testing.T, dir, name string, allowed ...string) {
	t.Helper()
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err == nil && d.Name() == name {
			for _, a := range allowed {
				if p == a {
					return nil
				}
			}
			t.Errorf("verify wrote %s", p)
		}
		return nil
	})
}

// The audit's case: a supplied entry ../../x/evil.txt with the matching
// SHA-256 used to make verify create that path outside the folder and its
// temporary folder. It must be refused by name, and nothing written.
func TestVerifyRefusesSuppliedPathLeavingTheFolder(t *testing.T) {
	root := t.TempDir()
	tmp := filepath.Join(root, "tmp", "a")
	os.MkdirAll(tmp, 0o755)
	t.Setenv("TMPDIR", tmp)
	out := verifyFolder(t, root)
	evil := []byte("planted\n")
	src := filepath.Join(out, "..", "..", "x", "evil.txt")
	writeFile(t, src, evil)
	editManifest(t, out, func(m *Manifest) {
		f := fingerprint(evil)
		f.Path = "../../x/evil.txt"
		m.Supplied = append(m.Supplied, f)
	})
	v, err := Verify(out, nil)
	if err != nil {
		t.Fatal(err)
	}
	if v.OK() || !strings.Contains(v.Differences[0].String(), `"../../x/evil.txt": refused`) {
		t.Fatalf("want the entry refused by name, got %v", v.Differences)
	}
	noFileNamed(t, root, "evil.txt", filepath.Clean(src))
}

// A symbolic link inside the folder that leads out of it is refused, both
// as a supplied file and as a result file, and the target's content never
// reaches a message.
func TestVerifyRefusesLinksLeavingTheFolder(t *testing.T) {
	root := t.TempDir()
	out := verifyFolder(t, root)
	secret := filepath.Join(root, "secret.txt")
	body := []byte("SECRET-LINE-1\nSECRET-LINE-2\n")
	writeFile(t, secret, body)

	// A supplied file that is a link to the secret, with its true SHA-256.
	if err := os.Symlink(secret, filepath.Join(out, "notes.txt")); err != nil {
		t.Skip("no symbolic links here:", err)
	}
	editManifest(t, out, func(m *Manifest) {
		f := fingerprint(body)
		f.Path = "notes.txt"
		m.Supplied = append(m.Supplied, f)
	})
	v, err := Verify(out, nil)
	if err != nil {
		t.Fatal(err)
	}
	if v.OK() || !strings.Contains(v.Differences[0].String(), "notes.txt leads outside") {
		t.Fatalf("supplied link: want it refused, got %v", v.Differences)
	}
	os.Remove(filepath.Join(out, "notes.txt"))
	editManifest(t, out, func(m *Manifest) { m.Supplied = m.Supplied[:len(m.Supplied)-1] })

	// A result file replaced by a link to the secret.
	os.Remove(filepath.Join(out, "spectra.csv"))
	os.Symlink(secret, filepath.Join(out, "spectra.csv"))
	v, err = Verify(out, nil)
	if err != nil {
		t.Fatal(err)
	}
	var msgs []string
	for _, d := range v.Differences {
		msgs = append(msgs, d.String())
	}
	all := strings.Join(msgs, "\n")
	if v.OK() || !strings.Contains(all, "spectra.csv: refused: spectra.csv leads outside") {
		t.Errorf("result link: want it refused, got %q", all)
	}
	if strings.Contains(all, "SECRET") {
		t.Errorf("a message shows the content of a file outside the folder: %q", all)
	}
}

// A manifest input the record does not name (here a file outside the
// project, by absolute path) is refused without being read: verify must not
// print the digest or size of a file it was not asked about.
func TestVerifyRefusesInputsTheRecordDoesNotName(t *testing.T) {
	root := t.TempDir()
	out := verifyFolder(t, root)
	secret := filepath.Join(root, "secret.txt")
	body := []byte("not an input\n")
	writeFile(t, secret, body)
	editManifest(t, out, func(m *Manifest) {
		m.Inputs = append(m.Inputs, InputFile{Path: filepath.ToSlash(secret), Bytes: 1, SHA256: strings.Repeat("0", 64)})
	})
	v, err := Verify(out, nil)
	if err != nil {
		t.Fatal(err)
	}
	if v.OK() {
		t.Fatal("verify accepted a manifest input the record does not name")
	}
	msg := v.Differences[0].String()
	if !strings.Contains(msg, "the as-run record names no such input") {
		t.Errorf("message %q does not say why", msg)
	}
	if f := fingerprint(body); strings.Contains(msg, f.SHA256) || regexp.MustCompile(`\b13 bytes`).MatchString(msg) {
		t.Errorf("message %q reveals the file", msg)
	}
}

// A record naming a device as an input is refused by name, never hashed
// (a device such as /dev/zero never ends).
func TestVerifyNeverHashesADevice(t *testing.T) {
	if _, err := os.Stat("/dev/null"); err != nil {
		t.Skip("no /dev/null")
	}
	root := t.TempDir()
	out := verifyFolder(t, root)
	rec := filepath.Join(out, RecordName)
	b, _ := os.ReadFile(rec)
	text := regexp.MustCompile(`(?m)^blank +\S+`).ReplaceAllString(string(b), "blank /dev/null")
	writeFile(t, rec, []byte(text))
	editManifest(t, out, func(m *Manifest) {
		m.Inputs = append(m.Inputs, InputFile{Path: "/dev/null", SHA256: strings.Repeat("0", 64)})
	})
	v, err := Verify(out, nil)
	if err != nil {
		t.Fatal(err)
	}
	if v.OK() || !strings.Contains(v.Differences[len(v.Differences)-1].String(), "is a device, not a regular file") {
		t.Errorf("want /dev/null refused as a device, got %v", v.Differences)
	}
}

// verify works in a private temporary folder of its own: a file planted
// where a fixed name would go ($TMPDIR/bandsolve-verify) no longer matters,
// and nothing is left in the temporary folder afterwards.
func TestVerifyUsesAPrivateTemporaryFolder(t *testing.T) {
	root := t.TempDir()
	tmp := filepath.Join(root, "tmp")
	os.MkdirAll(tmp, 0o755)
	t.Setenv("TMPDIR", tmp)
	writeFile(t, filepath.Join(tmp, "bandsolve-verify"), []byte("in the way\n"))
	out := verifyFolder(t, root)
	v, err := Verify(out, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !v.OK() {
		t.Fatalf("not reproduced: %v", v.Differences[0])
	}
	ents, _ := os.ReadDir(tmp)
	if len(ents) != 1 {
		t.Errorf("temporary folder holds %d entries after verify, want only the planted file", len(ents))
	}
}
