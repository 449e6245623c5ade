// Package output writes an analysis's result files into a staging folder
// that replaces the output folder in one rename, so an interrupted or failed
// run never leaves half-written results and never damages earlier ones.
package output

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"sync"
	"syscall"

	"github.com/bandsolve/bandsolve/internal/regular"
)

// Stage is a folder being filled with results.
type Stage struct {
	Final string // where the results go
	Dir   string // staging folder beside it
	Force bool
	files []string
	alive *os.File // the staging folder, locked while the run lives (see cleanStale)
	// written is what each file was written with (Written).
	written map[string][]byte
	// flush flushes each file to disk as it is written (flush.go), for a
	// stage that is to be committed.
	flush *flusher
	// pre are the files Prewrite wrote and Write has not listed yet, with
	// their bytes; made the folders Prewrite made.
	preMu sync.Mutex
	pre   map[string][]byte
	made  []string
}

// ErrExists says the output folder holds earlier results.
var ErrExists = errors.New("output folder holds earlier results")

// ManifestName is the file every output folder of bandsolve holds; --force
// recognises a folder bandsolve made by it (see Made).
const ManifestName = "manifest.json"

// Check reports whether out may receive results: it must not exist, be an
// empty folder, or (with force) be an output folder bandsolve made that
// holds only the files it lists (own.go). It is
// never the working folder or one above it, and never a symbolic link: a
// commit replaces the folder as a whole, and through a link it would
// replace the link. Folders missing above out are made by NewStage.
func Check(out string, force bool) error {
	clean := filepath.Clean(out)
	if err := notAboveHere(out, clean); err != nil {
		return err
	}
	// Another run committing into the same out may replace the folder while
	// this one looks into it (listing a folder removed after it was opened
	// fails with "no such file"; a two-step swap leaves out missing for a
	// moment; the earlier results an exchange moved aside lose their
	// manifest last, while this run may be reading them). A refusal is
	// given only once confirmed after any commit under way has ended (the
	// parent's lock, which a commit holds from the swap to the removal of
	// the earlier results, taken shared: waitForCommit makes no file); a
	// folder that is fine needs no wait. Commit checks once more under the
	// lock.
	if checkOnce(out, clean, force) == nil {
		return nil
	}
	done := waitForCommit(clean)
	defer done()
	return checkOnce(out, clean, force)
}

func checkOnce(out, clean string, force bool) error {
	st, err := os.Lstat(clean)
	if errors.Is(err, os.ErrNotExist) {
		return checkNew(out, clean)
	}
	if errors.Is(err, syscall.ENOTDIR) {
		// A file stands where a folder of the path should be.
		return fmt.Errorf("%s: part of the path is a file, not a folder; choose another --out", out)
	}
	if err != nil {
		return fmt.Errorf("%s: %w", out, unwrap(err))
	}
	if err := replaceable(out, clean, st, force); err != nil {
		return err
	}
	return writable(filepath.Dir(clean), out)
}

// replaceable checks an existing out (st from Lstat) against the rules of
// Check: Commit checks again, as the folder may change during a run.
func replaceable(out, clean string, st os.FileInfo, force bool) error {
	if st.Mode()&os.ModeSymlink != 0 {
		return fmt.Errorf("%s: is a symbolic link; bandsolve never writes through a link (it would replace the link, not the folder it points to): give the folder itself, or another --out", out)
	}
	if !st.IsDir() {
		return fmt.Errorf("%s: is a file, not a folder; choose another --out", out)
	}
	ents, err := os.ReadDir(clean)
	if err != nil {
		return fmt.Errorf("%s: cannot list: %w", out, unwrap(err))
	}
	if len(ents) == 0 {
		return nil
	}
	// The user's own files are told apart first: advising --force for them
	// would only lead to a second refusal.
	if !Made(clean) {
		return fmt.Errorf("%s: holds files bandsolve did not write (it has no %s of bandsolve), which it never replaces, with or without --force: choose another --out, a new or empty folder", out, ManifestName)
	}
	if err := othersFiles(out, clean); err != nil {
		return err
	}
	if !force {
		return fmt.Errorf("%s: %w; add --force to replace them, or choose another --out", out, ErrExists)
	}
	if err := removable(clean); err != nil {
		return fmt.Errorf("%s: --force cannot remove the earlier results (%v); make the folder writable, or choose another --out", out, unwrap(err))
	}
	return nil
}

// Made says whether dir is an output folder bandsolve made: it holds a
// regular file manifest.json whose "tool" is bandsolve.
func Made(dir string) bool {
	p := filepath.Join(dir, ManifestName)
	st, err := os.Lstat(p)
	if err != nil || !st.Mode().IsRegular() || st.Size() > 64<<20 {
		return false
	}
	b, err := regular.ReadFile(p, 64<<20)
	if err != nil {
		return false
	}
	var m struct {
		Tool string `json:"tool"`
	}
	return json.Unmarshal(b, &m) == nil && m.Tool == "bandsolve"
}

// notAboveHere refuses ".", ".." and any folder that holds the working
// folder: replacing it would pull the floor from under the user.
func notAboveHere(out, clean string) error {
	refuse := fmt.Errorf("%s: is the working folder or a folder above it; bandsolve replaces its output folder as a whole, so give a new folder, e.g. --out results", out)
	if b := filepath.Base(clean); b == "." || b == ".." || clean == string(filepath.Separator) {
		return refuse
	}
	wd, err := os.Getwd()
	if err != nil {
		return nil
	}
	if Within(resolved(clean), resolved(wd)) {
		return refuse
	}
	return nil
}

// Within says whether p is dir or lies inside it (both absolute and clean).
func Within(dir, p string) bool {
	rel, err := filepath.Rel(dir, p)
	return err == nil && (rel == "." || filepath.IsLocal(rel))
}

// resolved makes p absolute with the links of its longest existing prefix
// resolved, so that two names of one folder compare equal.
func resolved(p string) string {
	abs, err := filepath.Abs(p)
	if err != nil {
		return filepath.Clean(p)
	}
	rest := ""
	for cur := abs; ; {
		if r, err := filepath.EvalSymlinks(cur); err == nil {
			return filepath.Join(r, rest)
		}
		parent := filepath.Dir(cur)
		if parent == cur {
			return abs
		}
		rest = filepath.Join(filepath.Base(cur), rest)
		cur = parent
	}
}

// Protect refuses an output folder that is, or holds, one of the run's
// inputs: --force must never delete what the run reads.
func Protect(out string, inputs []string) error {
	o := resolved(out)
	for _, in := range inputs {
		if Within(o, resolved(in)) {
			return fmt.Errorf("%s: holds %s, an input of this run; bandsolve never replaces a folder holding its inputs: choose another --out", out, in)
		}
	}
	return nil
}

// checkNew checks a path that does not exist yet: the nearest existing
// folder above it must be a folder bandsolve can write in (the missing
// ones are made, as mkdir -p would).
func checkNew(out, clean string) error {
	parent := filepath.Dir(clean)
	for {
		st, err := os.Stat(parent)
		if err == nil {
			if !st.IsDir() {
				return fmt.Errorf("%s: %s is a file, not a folder; choose another --out", out, parent)
			}
			return writable(parent, out)
		}
		if !errors.Is(err, os.ErrNotExist) {
			return fmt.Errorf("%s: %s: %w", out, parent, unwrap(err))
		}
		up := filepath.Dir(parent)
		if up == parent {
			return fmt.Errorf("%s: no folder of the path exists; choose another --out", out)
		}
		parent = up
	}
}

func writable(dir, out string) error {
	// Named like a staging folder of out, so that the next run's tidy
	// removes it if this process is killed before it does. Made and
	// removed under Interrupt's lock, so that an interrupt never leaves it.
	activeMu.Lock()
	defer activeMu.Unlock()
	f, err := os.CreateTemp(dir, stagePrefix(out)+"probe-*")
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
	if err := os.MkdirAll(filepath.Dir(clean), 0o755); err != nil {
		return nil, fmt.Errorf("%s: cannot make the folders above it: %w", out, unwrap(err))
	}
	// The parent lock is held from tidying to locking the new stage: a
	// second run's tidy could otherwise take the stage, created but not
	// yet locked, for a dead run's and remove it.
	unlock, err := lockParent(clean)
	if err != nil {
		return nil, err
	}
	defer unlock()
	if err := tidyLocked(clean); err != nil {
		return nil, err
	}
	// Creating and tracking the folder is one step for Interrupt, which
	// takes the same lock: a signal in between would otherwise leave an
	// untracked staging folder behind.
	activeMu.Lock()
	defer activeMu.Unlock()
	dir, err := os.MkdirTemp(filepath.Dir(clean), stagePrefix(clean)+"*")
	if err != nil {
		return nil, fmt.Errorf("%s: cannot create a staging folder: %w", out, err)
	}
	// MkdirTemp makes the folder private (0700); results are ordinary
	// files a colleague may read, like any folder made with mkdir.
	if err := os.Chmod(dir, 0o755); err != nil {
		os.RemoveAll(dir)
		return nil, fmt.Errorf("%s: %w", out, err)
	}
	s := &Stage{Final: clean, Dir: dir, Force: force, flush: &flusher{}}
	// The lock says "a live run owns this folder": cleanStale leaves it be.
	if s.alive, err = os.Open(dir); err == nil {
		if !tryLock(s.alive) {
			s.alive.Close()
			s.alive = nil
		}
	}
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

// Write stores one file. A file Prewrite wrote with the same bytes is
// only listed.
func (s *Stage) Write(name string, data []byte) error {
	writing.RLock()
	defer writing.RUnlock()
	s.preMu.Lock()
	pre, ok := s.pre[name]
	delete(s.pre, name)
	s.preMu.Unlock()
	if ok && bytes.Equal(pre, data) {
		s.list(name, data)
		return nil
	}
	if err := os.WriteFile(s.Path(name), data, 0o644); err != nil {
		return fmt.Errorf("writing %s: %w", name, err)
	}
	if s.flush != nil {
		s.flush.add(s.Path(name))
	}
	s.list(name, data)
	return nil
}

func (s *Stage) list(name string, data []byte) {
	s.files = append(s.files, name)
	if s.written == nil {
		s.written = map[string][]byte{}
	}
	s.written[name] = data
}

// Prewrite writes a file ahead of its turn, for Write to list at its turn
// (Files keeps the order of the Write calls): a Write of name with the
// same bytes then only lists it, other bytes replace it, and a file
// prewritten that no Write lists is removed by DropUnlisted. The folder
// above name is made if missing (and removed by DropUnlisted if left
// empty). It may be called from another goroutine than Write's, never for
// a name Write is writing at the same time. A file that cannot be written
// is left to Write: the error is dropped.
func (s *Stage) Prewrite(name string, data []byte) {
	writing.RLock()
	defer writing.RUnlock()
	if dir := filepath.Dir(name); dir != "." {
		if err := os.Mkdir(s.Path(dir), 0o755); err == nil {
			s.preMu.Lock()
			s.made = append(s.made, dir)
			s.preMu.Unlock()
		}
	}
	if os.WriteFile(s.Path(name), data, 0o644) != nil {
		os.Remove(s.Path(name))
		// Nor is an earlier Prewrite of name, whose file is gone: Write
		// must write it.
		s.preMu.Lock()
		delete(s.pre, name)
		s.preMu.Unlock()
		return
	}
	if s.flush != nil {
		s.flush.add(s.Path(name))
	}
	s.preMu.Lock()
	if s.pre == nil {
		s.pre = map[string][]byte{}
	}
	s.pre[name] = data
	s.preMu.Unlock()
}

// DropUnlisted removes the files Prewrite wrote that no Write listed, and
// the folders it made that are left empty: the stage then holds what was
// written at its turn. Call it once no Prewrite runs.
func (s *Stage) DropUnlisted() {
	writing.RLock()
	defer writing.RUnlock()
	s.preMu.Lock()
	defer s.preMu.Unlock()
	for name := range s.pre {
		os.Remove(s.Path(name))
	}
	s.pre = nil
	for i := len(s.made) - 1; i >= 0; i-- {
		os.Remove(s.Path(s.made[i])) // fails, as it should, when not empty
	}
	s.made = nil
}

// Written gives the bytes the file name was last written with by Write
// (callers hand Write bytes they no longer change), so that a reader of
// the stage in the same process need not read them back from the disk.
func (s *Stage) Written(name string) ([]byte, bool) {
	b, ok := s.written[name]
	return b, ok
}

// Abort removes the staging folder, leaving the output folder as it was.
func (s *Stage) Abort() {
	untrack(s)
	if s.flush != nil {
		s.flush.abandon()
	}
	os.RemoveAll(s.Dir)
	s.release()
}

// release drops the staging folder's liveness lock.
func (s *Stage) release() {
	if s.alive != nil {
		s.alive.Close()
		s.alive = nil
	}
}

// Float formats a number for result files: 10 significant digits, enough
// for any measured absorbance, and the same text on every platform.
func Float(v float64) string {
	var b [32]byte
	return string(AppendFloat(b[:0], v))
}

// AppendFloat appends Float(v) to b.
func AppendFloat(b []byte, v float64) []byte { return AppendDigits(b, v, 10) }

// AppendDigits appends v with digits significant digits (AppendG); never
// NaN, Inf or −0: nothing for the first two, "0" for the last.
func AppendDigits(b []byte, v float64, digits int) []byte {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		// Never reached by valid results; written as empty rather than NaN
		// so no output file ever holds a non-number.
		return b
	}
	if v == 0 {
		return append(b, '0')
	}
	return AppendG(b, v, digits)
}

// AppendDigitsValue is AppendDigits that also gives the value its text
// reads back as, when AppendGValue forms it exactly (exact; 0 for "0").
func AppendDigitsValue(b []byte, v float64, digits int) (out []byte, value float64, exact bool) {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return b, 0, false
	}
	if v == 0 {
		return append(b, '0'), 0, true
	}
	return AppendGValue(b, v, digits)
}

// Table is a header and rows of cells, written as CSV.
type Table struct {
	Header []string
	Rows   [][]string
}

// CSV renders the table with comma separators and LF line ends. Cells are
// quoted only when they hold a separator, quote or line break.
func (t Table) CSV() []byte {
	lines := append([][]string{t.Header}, t.Rows...)
	n := 0
	for _, r := range lines {
		n += len(r) // separators and the line end
		for _, c := range r {
			n += len(c)
		}
	}
	var w CSV
	w.b = make([]byte, 0, n+n/16)
	for _, r := range lines {
		w.Row(r)
	}
	return w.Bytes()
}

// CSV is a CSV file written cell by cell, the bytes Table.CSV gives for the
// same cells, without a string per cell.
type CSV struct {
	b    []byte
	open bool // a cell is on the current line
}

// Grow makes room for n more bytes.
func (w *CSV) Grow(n int) { w.b = slices.Grow(w.b, n) }

// sep starts a cell.
func (w *CSV) sep() {
	if w.open {
		w.b = append(w.b, ',')
	}
	w.open = true
}

// Text writes a cell of text, quoted only when it holds a separator,
// quote or line break (quotes doubled).
func (w *CSV) Text(c string) {
	w.sep()
	if needsQuotes(c) {
		w.b = append(w.b, '"')
		w.b = append(w.b, strings.ReplaceAll(c, `"`, `""`)...)
		w.b = append(w.b, '"')
		return
	}
	w.b = append(w.b, c...)
}

// needsQuotes says whether c holds a separator, quote or line break. A
// loop over the bytes rather than strings.ContainsAny, which builds its
// set of four bytes at every call: uniqueness.csv writes five text cells a
// row, and the set took 70 % of its formatting (BenchmarkCSVText).
func needsQuotes(c string) bool {
	for i := 0; i < len(c); i++ {
		switch c[i] {
		case ',', '"', '\n', '\r':
			return true
		}
	}
	return false
}

// Float writes the cell Float(v).
func (w *CSV) Float(v float64) {
	w.sep()
	w.b = AppendFloat(w.b, v)
}

// Raw writes a cell already formatted as a number (no quoting needed).
func (w *CSV) Raw(c []byte) {
	w.sep()
	w.b = append(w.b, c...)
}

// Int writes the cell strconv.Itoa(i).
func (w *CSV) Int(i int) {
	w.sep()
	w.b = strconv.AppendInt(w.b, int64(i), 10)
}

// Row writes a line of text cells (a header, say).
func (w *CSV) Row(cells []string) {
	for _, c := range cells {
		w.Text(c)
	}
	w.End()
}

// End ends the line.
func (w *CSV) End() {
	w.b = append(w.b, '\n')
	w.open = false
}

// Bytes is the file written so far.
func (w *CSV) Bytes() []byte { return w.b }

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
