package report

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// Nothing in an output folder is trusted (docs/security.md): a result file
// that is a link leading out of the folder is left out of the report with
// its name, and its target's content appears nowhere.
func TestLoadRefusesLinksLeavingTheFolder(t *testing.T) {
	w := t.TempDir()
	secret := filepath.Join(w, "secret.csv")
	os.WriteFile(secret, []byte("SECRET,1\nSECRET,2\n"), 0o600)
	out := filepath.Join(w, "out")
	os.Mkdir(out, 0o755)
	os.WriteFile(filepath.Join(out, "summary.json"), []byte("{}\n"), 0o644)
	if err := os.Symlink(secret, filepath.Join(out, "spectra.csv")); err != nil {
		t.Skip("no symbolic links:", err)
	}
	f, err := Load(out)
	if err != nil {
		t.Fatal(err)
	}
	if f.Spectra != nil {
		t.Fatal("spectra.csv, a link out of the folder, was read")
	}
	problems := strings.Join(f.Problems, "\n")
	if !strings.Contains(problems, "spectra.csv left out") || !strings.Contains(problems, "leads outside the folder") || strings.Contains(problems, "SECRET") {
		t.Errorf("problems %q", problems)
	}
	// summary.json as such a link: an error naming it, not its content.
	os.Remove(filepath.Join(out, "summary.json"))
	os.Symlink(secret, filepath.Join(out, "summary.json"))
	if _, err := Load(out); err == nil || strings.Contains(err.Error(), "SECRET") || !strings.Contains(err.Error(), "summary.json") {
		t.Errorf("summary.json linked out: %v", err)
	}
}
