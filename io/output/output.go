// Package output writes an analysis's result files into a staging folder
// that replaces the output folder in one rename, so an interrupted or failed
// run never leaves half-written results and never damages earlier ones.
package output

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
)

// Stage is a folder being filled with results.
type Stage struct {
	Final string // where the results go
	Dir   string // staging folder beside it
	Force bool
	files []string
}

// ErrExists says the output folder holds earlier results.
var ErrExists = errors.New("output folder holds earlier results")

// Check reports whether out may receive results: it must not exist, be an
// empty folder, or force must be set.
func Check(out string, force bool) error {
	st, err := os.Stat(out)
	if errors.Is(err, os.ErrNotExist) {
		parent := filepath.Dir(filepath.Clean(out))
		if pst, err := os.Stat(parent); err != nil || !pst.IsDir() {
			return fmt.Errorf("%s: the folder above it, %s, does not exist; create it first", out, parent)
		}
		return writable(parent, out)
	}
	if errors.Is(err, syscall.ENOTDIR) {
		// A file stands where a folder of the path should be.
		return fmt.Errorf("%s: part of the path is a file, not a folder; choose another --out", out)
	}
	if err != nil {
		return fmt.Errorf("%s: %w", out, unwrap(err))
	}
	if !st.IsDir() {
		return fmt.Errorf("%s: is a file, not a folder; choose another --out", out)
	}
	ents, err := os.ReadDir(out)
	if err != nil {
		return fmt.Errorf("%s: cannot list: %w", out, err)
	}
	if len(ents) > 0 && !force {
		return fmt.Errorf("%s: %w; add --force to replace them, or choose another --out", out, ErrExists)
	}
	return writable(filepath.Dir(filepath.Clean(out)), out)
}

func writable(dir, out string) error {
	f, err := os.CreateTemp(dir, ".bandsolve-probe-*")
	if err != nil {
		return fmt.Errorf("%s: cannot write in %s (%v); choose a writable --out", out, dir, unwrap(err))
	}
	name := f.Name()
	f.Close()
	os.Remove(name)
	return nil
}

func unwrap(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// NewStage makes the staging folder beside out.
func NewStage(out string, force bool) (*Stage, error) {
	if err := Check(out, force); err != nil {
		return nil, err
	}
	clean := filepath.Clean(out)
	// Creating and tracking the folder is one step for Interrupt, which
	// takes the same lock: a signal in between would otherwise leave an
	// untracked staging folder behind.
	activeMu.Lock()
	defer activeMu.Unlock()
	dir, err := os.MkdirTemp(filepath.Dir(clean), "."+filepath.Base(clean)+".partial-*")
	if err != nil {
		return nil, fmt.Errorf("%s: cannot create a staging folder: %w", out, err)
	}
	// MkdirTemp makes the folder private (0700); results are ordinary
	// files a colleague may read, like any folder made with mkdir.
	if err := os.Chmod(dir, 0o755); err != nil {
		os.RemoveAll(dir)
		return nil, fmt.Errorf("%s: %w", out, err)
	}
	s := &Stage{Final: clean, Dir: dir, Force: force}
	active[s] = true // track(s), under the lock already held
	return s, nil
}

// NewPrivateStage makes a stage in a new private folder of the system's
// temporary folder (os.MkdirTemp: mode 0700, an unpredictable name), for
// work that is never committed, such as verify's rerun. Nothing that
// already exists in the temporary folder, a file or a link planted under a
// fixed name, can stand in its way or receive its files. final is what the
// stage stands for (relative paths in records are taken from it).
func NewPrivateStage(prefix, final string) (*Stage, error) {
	activeMu.Lock()
	defer activeMu.Unlock()
	dir, err := os.MkdirTemp("", prefix+"-*")
	if err != nil {
		return nil, fmt.Errorf("cannot create a temporary folder: %w", err)
	}
	s := &Stage{Final: final, Dir: dir}
	active[s] = true
	return s, nil
}

// Mkdir makes a sub-folder of the stage. Unlike os.MkdirAll it never
// re-creates a staging folder that Interrupt has removed.
func (s *Stage) Mkdir(name string) error {
	writing.RLock()
	defer writing.RUnlock()
	if err := os.Mkdir(s.Path(name), 0o755); err != nil && !errors.Is(err, os.ErrExist) {
		return fmt.Errorf("making %s: %w", name, err)
	}
	return nil
}

// Path returns where a result file goes inside the staging folder.
func (s *Stage) Path(name string) string { return filepath.Join(s.Dir, name) }

// Files lists the files written so far, in order.
func (s *Stage) Files() []string { return append([]string(nil), s.files...) }

// Write stores one file.
func (s *Stage) Write(name string, data []byte) error {
	writing.RLock()
	defer writing.RUnlock()
	if err := os.WriteFile(s.Path(name), data, 0o644); err != nil {
		return fmt.Errorf("writing %s: %w", name, err)
	}
	s.files = append(s.files, name)
	return nil
}

// Abort removes the staging folder, leaving the output folder as it was.
func (s *Stage) Abort() { untrack(s); os.RemoveAll(s.Dir) }

// Commit replaces the output folder by the staging folder. Earlier results
// are moved aside first and deleted only once the new ones are in place.
func (s *Stage) Commit() error {
	committing.Lock()
	defer committing.Unlock()
	defer untrack(s)
	var old string
	if st, err := os.Stat(s.Final); err == nil && st.IsDir() {
		ents, _ := os.ReadDir(s.Final)
		if len(ents) > 0 && !s.Force {
			s.Abort()
			return fmt.Errorf("%s: %w; add --force", s.Final, ErrExists)
		}
		old = s.Dir + ".old"
		if err := os.Rename(s.Final, old); err != nil {
			s.Abort()
			return fmt.Errorf("%s: cannot move earlier results aside: %w", s.Final, err)
		}
	}
	if err := os.Rename(s.Dir, s.Final); err != nil {
		if old != "" {
			os.Rename(old, s.Final)
		}
		s.Abort()
		return fmt.Errorf("%s: cannot move results into place: %w", s.Final, err)
	}
	if old != "" {
		os.RemoveAll(old)
	}
	return nil
}

// Float formats a number for result files: 10 significant digits, enough
// for any measured absorbance, and the same text on every platform.
func Float(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		// Never reached by valid results; written as empty rather than NaN
		// so no output file ever holds a non-number.
		return ""
	}
	if v == 0 {
		return "0"
	}
	return strconv.FormatFloat(v, 'g', 10, 64)
}

// Table is a header and rows of cells, written as CSV.
type Table struct {
	Header []string
	Rows   [][]string
}

// CSV renders the table with comma separators and LF line ends. Cells are
// quoted only when they hold a separator, quote or line break.
func (t Table) CSV() []byte {
	var b bytes.Buffer
	w := bufio.NewWriter(&b)
	writeRow := func(r []string) {
		for i, c := range r {
			if i > 0 {
				w.WriteByte(',')
			}
			if strings.ContainsAny(c, ",\"\n\r") {
				w.WriteByte('"')
				w.WriteString(strings.ReplaceAll(c, `"`, `""`))
				w.WriteByte('"')
			} else {
				w.WriteString(c)
			}
		}
		w.WriteByte('\n')
	}
	writeRow(t.Header)
	for _, r := range t.Rows {
		writeRow(r)
	}
	w.Flush()
	return b.Bytes()
}

// JSON renders v indented, with a final newline. encoding/json refuses NaN
// and Inf, which is the guarantee that summary.json holds none.
func JSON(v any) ([]byte, error) {
	var b bytes.Buffer
	enc := json.NewEncoder(&b)
	// Citations hold "&" and "<"; HTML escaping would make them unreadable.
	enc.SetEscapeHTML(false)
	enc.SetIndent("", "  ")
	if err := enc.Encode(v); err != nil {
		return nil, fmt.Errorf("encoding summary: %w", err)
	}
	return b.Bytes(), nil
}
