package pipeline

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"maps"
	"os"
	"path/filepath"
	"runtime"
	"runtime/metrics"
	"slices"
	"strings"
	"sync/atomic"
	"time"
	"unicode"

	"github.com/bandsolve/bandsolve/internal/fanout"
	"github.com/bandsolve/bandsolve/io/cmdfile"
	"github.com/bandsolve/bandsolve/io/output"

	"github.com/bandsolve/bandsolve/internal/regular"
)

// Names of the reproducibility files in an output folder.
const (
	// CommandExt is the ending of bandsolve command files.
	CommandExt = ".bsr"
	// RecordName is the as-run record: a complete command file.
	RecordName = "as-run" + CommandExt
	// ManifestName holds what the record cannot: tool and platform, start
	// time and the inputs' SHA-256. It is the one file verify does not
	// compare, because its start time differs on every run.
	ManifestName = output.ManifestName
)

// pathOptions are the settings whose values name files, with the words
// that name a choice instead (more come from the option's placeholder, as
// "auto|purest|efa|FILE" gives auto, purest and efa).
var pathOptions = map[string]cmdfile.Keyword{
	"data":      {Path: cmdfile.ReadPath},
	"blank":     {Path: cmdfile.ReadPath},
	"vapour":    {Path: cmdfile.ReadPath},
	"times":     {Path: cmdfile.ReadPath},
	"reference": {Path: cmdfile.ReadPath, Words: []string{"first", "mean:"}},
	"init":      {Path: cmdfile.ReadPath, Words: []string{"auto", "purest", "efa"}},
	"out":       {Path: cmdfile.WritePath},
}

func keyword(o Option) cmdfile.Keyword {
	k := pathOptions[o.Name]
	k.Name, k.Multi, k.Switch = o.Name, o.Multi, o.IsSwitch()
	k.Words = append([]string(nil), k.Words...)
	if k.Path != cmdfile.NotPath && strings.Contains(o.Value, "|") {
		for _, w := range strings.Split(o.Value, "|") {
			if w != "" && w != strings.ToUpper(w) {
				k.Words = append(k.Words, w)
			}
		}
	}
	return k
}

// Keywords is the command-file vocabulary: every option of Options().
func Keywords() []cmdfile.Keyword {
	var ks []cmdfile.Keyword
	for _, o := range Options() {
		ks = append(ks, keyword(o))
	}
	for _, old := range slices.Sorted(maps.Keys(Renamed)) {
		o, _ := Lookup(old)
		k := keyword(o)
		k.Name = old
		ks = append(ks, k)
	}
	return ks
}

// IsPath says whether value, given to option name, names a file or folder
// (and so is taken relative to a folder).
func IsPath(name, value string) bool {
	o, ok := Lookup(name)
	if !ok || value == "" {
		return false
	}
	k := keyword(o)
	if k.Path == cmdfile.NotPath {
		return false
	}
	for _, w := range k.Words {
		if value == w || (strings.HasSuffix(w, ":") && strings.HasPrefix(value, w)) {
			return false
		}
	}
	return true
}

// LoadCommandFile applies the command file at path to s: s.Dir becomes the
// folder its relative paths are taken from. Settings named in skip are left
// alone (the command line gives them). An empty value of a repeatable
// setting stands for none.
func LoadCommandFile(path string, s *Settings, skip map[string]bool) (*cmdfile.File, error) {
	keys := Keywords()
	if skip["out"] {
		// --out on the command line replaces the file's out line, and the
		// command line is not bound by the output rule
		// (docs/command-files.md): the line is not used, so not checked.
		for i := range keys {
			if keys[i].Path == cmdfile.WritePath {
				keys[i].Path = cmdfile.NotPath
			}
		}
	}
	f, err := cmdfile.ReadFile(path, keys)
	if err != nil {
		return nil, err
	}
	return applyCommandFile(f, path, s, skip)
}

// loadRecord applies an as-run record already read (verify reads it from
// inside its folder only); path names it in messages and gives the folder.
func loadRecord(path string, src []byte, s *Settings) error {
	f, err := cmdfile.Parse(path, src, Keywords())
	if err != nil {
		return err
	}
	_, err = applyCommandFile(f, path, s, nil)
	return err
}

func applyCommandFile(f *cmdfile.File, path string, s *Settings, skip map[string]bool) (*cmdfile.File, error) {
	s.Dir = f.Dir(filepath.Dir(path))
	err := f.Apply(func(e cmdfile.Entry) error {
		if skip[e.Key] {
			return nil
		}
		if o, _ := Lookup(e.Key); o.Multi && e.Value == "" {
			return nil
		}
		if err := s.Set(e.Key, e.Value); err != nil {
			// Set names the option; the place is enough here.
			return errors.New(strings.TrimPrefix(err.Error(), e.Key+": "))
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	return f, nil
}

// folders works out, for a run being written into stage, the output folder
// and the folder relative paths were taken from, both absolute. A settings
// folder that is the staging folder itself (the demo reads its inputs from
// the stage) stands for the output folder, which the stage becomes.
func folders(s *Settings, stage *output.Stage) (out, base string, err error) {
	if out, err = filepath.Abs(stage.Final); err != nil {
		return "", "", err
	}
	dir := s.Dir
	if dir == "" {
		dir = "."
	}
	if base, err = filepath.Abs(dir); err != nil {
		return "", "", err
	}
	if sd, err := filepath.Abs(stage.Dir); err == nil {
		if rel, err := filepath.Rel(sd, base); err == nil && !escapes(rel) {
			base = filepath.Join(out, rel)
		}
	}
	return out, base, nil
}

func escapes(rel string) bool {
	return rel == ".." || strings.HasPrefix(rel, ".."+string(filepath.Separator)) || filepath.IsAbs(rel)
}

// renameAdvice is what to do when a path setting cannot be written in
// the as-run record: a file or folder whose name holds a line break or
// another control character, which no command file can hold (cmdfile.Quote)
// and a rerun must name. "" when no path holds one.
func renameAdvice(s *Settings) string {
	for _, name := range []string{"data", "blank", "vapour", "times", "reference", "init", "out"} {
		for _, v := range s.Get(name) {
			if strings.ContainsFunc(v, func(r rune) bool { return r != '\t' && (unicode.IsControl(r) || r == '\u2028' || r == '\u2029') }) {
				return fmt.Sprintf("; rename the file or folder --%s names so that its name holds no line break or other control character: the as-run record must name it for a rerun", name)
			}
		}
	}
	return ""
}

// relSlash is target relative to from, with forward slashes so that a
// record reads the same on every system; absolute when no relative path
// exists (another drive).
func relSlash(from, target string) string {
	rel, err := filepath.Rel(from, target)
	if err != nil {
		return filepath.ToSlash(target)
	}
	return filepath.ToSlash(rel)
}

// writeRecord writes the as-run record and the manifest.
func writeRecord(r *Result, stage *output.Stage) error {
	s := r.Settings
	out, base, err := folders(s, stage)
	if err != nil {
		return fmt.Errorf("as-run record: %w", err)
	}
	rec, err := Record(r, relSlash(out, base))
	if err != nil {
		return fmt.Errorf("as-run record: %w%s", err, renameAdvice(s))
	}
	if err := stage.Write(RecordName, rec); err != nil {
		return err
	}
	m, err := makeManifest(r, stage, out, base)
	if err != nil {
		return err
	}
	r.manifest = m
	return writeManifest(m, stage)
}

func writeManifest(m *Manifest, stage *output.Stage) error {
	b, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		return fmt.Errorf("manifest: %w", err)
	}
	return stage.Write(ManifestName, append(b, '\n'))
}

// writeFileList writes the manifest again with the list of every file of the
// stage, once nothing else is written into it.
func writeFileList(r *Result, stage *output.Stage) error {
	if r.manifest == nil {
		return nil
	}
	files, err := stage.Listing()
	if err != nil {
		return err
	}
	r.manifest.Files = files
	return writeManifest(r.manifest, stage)
}

// Record renders the settings of r as a complete command file, every
// default written out, with relative paths taken from pathsFrom (relative
// to the folder the record is stored in). Only deterministic content goes
// in: the record is compared byte for byte by verify.
func Record(r *Result, pathsFrom string) ([]byte, error) {
	s := r.Settings
	w := &cmdfile.Writer{Width: 17}
	w.Comment("bandsolve as-run record: every setting of the run, defaults included.",
		"Rerun it:   bandsolve run "+RecordName+" --out NEW_FOLDER",
		"Check it:   bandsolve verify THIS_FOLDER   (inputs' SHA-256 are in "+ManifestName+")",
		"Syntax: one 'keyword value' per line; see docs/command-files.md.",
		"Not recorded, as they do not change results: out, force, quiet, json.")
	w.Blank()
	if pathsFrom != "" && pathsFrom != "." {
		w.Comment("Relative paths below are taken from this folder (relative to this file's folder).")
		if err := w.Set(cmdfile.PathsFrom, pathsFrom, ""); err != nil {
			return nil, err
		}
		w.Blank()
	}
	for _, o := range Options() {
		if !o.Record {
			continue
		}
		vals := s.Get(o.Name)
		if o.onlyWhenOn && slices.Equal(vals, []string{"off"}) {
			continue // and collect's settings_id stays too
		}
		note := ""
		switch o.Name {
		case "kind":
			// The kind Run settled on, so that a rerun needs no guess; no
			// note, so that the record of a rerun is this record again.
			if len(vals) == 1 && vals[0] == "" {
				vals = []string{effectiveKind(r)}
			}
		case "components":
			if len(vals) == 1 && vals[0] == "auto" {
				note = fmt.Sprintf("the rank estimate gave %d", r.Components)
			}
		case "t0":
			if len(vals) == 1 && vals[0] == "" {
				note = "empty: the time of the reference spectrum"
			}
		case "blank":
			// Repeatable since blanks go one per experiment; none is
			// written as before, so records of earlier runs still verify.
			if len(vals) == 0 {
				vals = []string{""}
			}
		}
		if len(vals) == 0 {
			vals, note = []string{""}, "none"
		} else if len(vals) == 1 && vals[0] == "" && note == "" {
			note = "not given"
		}
		for _, v := range vals {
			if err := w.Set(o.Name, v, note); err != nil {
				return nil, err
			}
		}
	}
	return w.Bytes(), nil
}

// effectiveKind is the kind Run used when none was given.
func effectiveKind(r *Result) string {
	if len(r.Experiments) > 0 && r.Experiments[0].Series != nil && r.Experiments[0].Series.Kind != "" {
		return r.Experiments[0].Series.Kind
	}
	return "single-beam"
}

// Manifest is manifest.json. What differs legitimately from one machine or
// one run to the next (start time, platform, build) sits in Started and
// Host, which a report leaves out; verify compares no part of this file.
type Manifest struct {
	Tool    string `json:"tool"`
	Version string `json:"version"`
	Record  string `json:"record"`
	Seed    uint64 `json:"seed"`
	Started string `json:"started"`
	Host    Host   `json:"host"`
	// Inputs are every file the analysis read, relative to the output folder.
	Inputs []InputFile `json:"inputs"`
	// Supplied are files the command put into the folder before the
	// results (the demo's data and its check against the truth); verify
	// checks them and puts them into its rerun, as a report may read them.
	Supplied []InputFile `json:"supplied"`
	Note     string      `json:"note"`
	// Files are every file the folder held when bandsolve wrote it,
	// this manifest included: --force replaces the folder only while it
	// holds nothing else (output.FilesKey). Written last (writeFileList), so
	// the report, made before, never shows it.
	Files []string `json:"files,omitempty"`
}

// Host is what ran the analysis: the bandsolve build and the platform.
type Host struct {
	Commit    string `json:"commit"`
	GoVersion string `json:"go_version"`
	OS        string `json:"os"`
	Arch      string `json:"arch"`
}

// InputFile is one input's fingerprint.
type InputFile struct {
	Path   string `json:"path"`
	Bytes  int64  `json:"bytes"`
	SHA256 string `json:"sha256"`
}

// makeManifest forms the manifest of a run: who ran it, when and where,
// then the SHA-256 of every input it read (the data files, each file of a
// data folder, the files other settings name, the known spectra) and of
// the files the command supplied.
func makeManifest(r *Result, stage *output.Stage, out, base string) (*Manifest, error) {
	m := newManifest(r)
	sd, _ := filepath.Abs(stage.Dir)
	inputs := &manifestFiles{r: r, stageDir: sd, out: out, seen: map[string]bool{}, list: &m.Inputs}
	if err := inputs.addData(r); err != nil {
		return nil, err
	}
	if err := inputs.addSettingFiles(r.Settings); err != nil {
		return nil, err
	}
	// Supplied files are listed whether or not the analysis read them.
	supplied := &manifestFiles{r: r, stageDir: sd, out: out, seen: map[string]bool{}, list: &m.Supplied}
	for _, f := range r.Supplied {
		if err := supplied.add(filepath.Join(stage.Dir, f), false); err != nil {
			return nil, err
		}
	}
	if m.Inputs == nil {
		m.Inputs = []InputFile{}
	}
	if m.Supplied == nil {
		m.Supplied = []InputFile{}
	}
	return m, nil
}

// newManifest is the manifest's head: the tool, the record's name, the
// seed, the start and the host.
func newManifest(r *Result) *Manifest {
	started := r.Started
	if started.IsZero() {
		started = time.Now()
	}
	return &Manifest{Tool: "bandsolve", Version: Version, Record: RecordName, Seed: r.Settings.Seed,
		Started: started.UTC().Format(time.RFC3339),
		Host:    Host{Commit: Commit(), GoVersion: runtime.Version(), OS: runtime.GOOS, Arch: runtime.GOARCH},
		Note: "bandsolve verify compares every file of this folder byte for byte except this manifest and the " +
			"inputs and supplied files listed here, whose SHA-256 it checks instead"}
}

// manifestFiles is one list of the manifest's files being filled: each
// file once, named relative to the output folder out, hashed by the run's
// inputSums. stageDir is the stage's absolute path.
type manifestFiles struct {
	r             *Result
	stageDir, out string
	seen          map[string]bool
	list          *[]InputFile
}

// add lists the file at p, unless listed already. An input named by an
// absolute path is listed by it, as the record names it: such a folder
// verifies only where that path exists.
func (l *manifestFiles) add(p string, absolute bool) error {
	abs, err := filepath.Abs(p)
	if err != nil {
		return err
	}
	// Inputs inside the stage (the demo's) are read from where they will be.
	if rel, err := filepath.Rel(l.stageDir, abs); err == nil && !escapes(rel) {
		abs = filepath.Join(l.out, rel)
		p = filepath.Join(l.stageDir, rel)
	}
	name := relSlash(l.out, abs)
	if absolute {
		name = filepath.ToSlash(abs)
	}
	if l.seen[name] {
		return nil
	}
	l.seen[name] = true
	n, sum, err := l.r.inputSums.hash(p)
	if err != nil {
		return fmt.Errorf("manifest: %w", err)
	}
	*l.list = append(*l.list, InputFile{Path: name, Bytes: n, SHA256: sum})
	return nil
}

// addData lists each --data input: a file itself, a folder by the
// spectrum files its experiment read.
func (l *manifestFiles) addData(r *Result) error {
	s := r.Settings
	for i, d := range s.Data {
		p := s.Path(d)
		st, err := os.Stat(p)
		if err != nil {
			return fmt.Errorf("manifest: %w", err)
		}
		if st.IsDir() && i < len(r.Experiments) && r.Experiments[i].Series != nil {
			for _, f := range r.Experiments[i].Series.Names {
				if err := l.add(f, filepath.IsAbs(d)); err != nil {
					return err
				}
			}
			continue
		}
		if err := l.add(p, filepath.IsAbs(d)); err != nil {
			return err
		}
	}
	return nil
}

// addSettingFiles lists the files the other settings read (those whose
// keyword reads a path: blank, times, reference, init) and the known
// spectra.
func (l *manifestFiles) addSettingFiles(s *Settings) error {
	for _, o := range Options() {
		if o.Name == "data" || keyword(o).Path != cmdfile.ReadPath {
			continue
		}
		for _, v := range s.Get(o.Name) {
			if IsPath(o.Name, v) {
				if err := l.add(s.Path(v), filepath.IsAbs(v)); err != nil {
					return err
				}
			}
		}
	}
	for _, f := range knownSpectrumFiles(s) {
		if err := l.add(s.Path(f), filepath.IsAbs(f)); err != nil {
			return err
		}
	}
	return nil
}

// knownSpectrumFiles are the files --known-spectrum COMPONENT=FILE[:WEIGHT]
// names, as written (relative to the settings' folder).
func knownSpectrumFiles(s *Settings) []string {
	var files []string
	for _, v := range s.KnownSpectra {
		if _, rest, ok := strings.Cut(v, "="); ok {
			if f, _, err := splitWeight(rest); err == nil && f != "" {
				files = append(files, f)
			}
		}
	}
	return files
}

// HashFile returns a regular file's size and SHA-256 (hex). A device,
// FIFO or socket is refused by name: /dev/zero would never end.
func HashFile(path string) (int64, string, error) {
	f, err := openRegular(path)
	if err != nil {
		return 0, "", err
	}
	defer f.Close()
	return hashUnchanged(f, path, func(r io.Reader) (int64, string, error) { return hashStream(r, path) })
}

// hashFileYielding is HashFile, reading and hashing a piece at a time
// at a low priority while no one waits for the sum (hashYielding), ended
// early with errHashStopped once told to stop.
func hashFileYielding(path string, turn *hashTurn) (int64, string, error) {
	f, err := openRegular(path)
	if err != nil {
		return 0, "", err
	}
	defer f.Close()
	return hashUnchanged(f, path, func(r io.Reader) (int64, string, error) { return hashYielding(r, path, turn) })
}

// statReader is an open file: read to hash it, stated around the reading.
type statReader interface {
	io.Reader
	Stat() (os.FileInfo, error)
}

// hashUnchanged is hash(f), refused when f changed while it was read: its
// size or modification time differs between before and after, or the bytes
// hashed are not its size when opened. The hashing runs beside the parse (a
// matrix file) or just after it (a folder's files), so a file still being
// written, an instrument's export that grows while the run reads it, would
// otherwise be recorded in the manifest with a sum of contents other than
// those analysed, and verify would later fail for no reason it could name.
// A rewrite of the same length within one tick of the file system's clock
// is not seen; a growing file is.
func hashUnchanged(f statReader, path string, hash func(io.Reader) (int64, string, error)) (int64, string, error) {
	before, err := f.Stat()
	if err != nil {
		return 0, "", fmt.Errorf("%s: %w", path, err)
	}
	n, sum, err := hash(f)
	if err != nil {
		return 0, "", err
	}
	after, err := f.Stat()
	if err != nil {
		return 0, "", fmt.Errorf("%s: %w", path, err)
	}
	if n != before.Size() || after.Size() != before.Size() || !after.ModTime().Equal(before.ModTime()) {
		return 0, "", fmt.Errorf("%s: changed while it was read (%d bytes when opened, %d read, %d at the end; "+
			"modified %s): the results and the SHA-256 recorded for it could describe different contents; "+
			"run again once the file is no longer being written", path, before.Size(), n, after.Size(),
			after.ModTime().UTC().Format(time.RFC3339Nano))
	}
	return n, sum, nil
}

// errHashStopped is hashYielding's answer when it was told to stop.
var errHashStopped = errors.New("hashing stopped")

// hashTurn is what the hashing is told while it runs: stop (abandon: end
// at the next piece), and needed (the run waits for the sums: hash on
// without stepping aside, since the goroutines it would step aside for may
// be the run's own figures, which the run's next step waits for too).
type hashTurn struct {
	stop, needed atomic.Bool
}

// openRegular opens path for reading when it is a regular file, checked
// before and after the opening.
func openRegular(path string) (*os.File, error) {
	f, _, err := regular.Open(path)
	var nr *regular.NotRegularError
	if errors.As(err, &nr) {
		return nil, fmt.Errorf("%w; refused", err)
	}
	return f, err
}

// inputSums are the size and SHA-256 of data files, hashed on one goroutine
// from startInputSums on: makeManifest lists the same files later, after
// other writers, and takes their sums from here (waiting for them) rather
// than reading the files again then.
type inputSums struct {
	done  chan struct{}
	paths []string           // the files begun, in order
	sums  map[string]fileSum // by absolute path; read only once done is closed
	// turn, shared with the sums begun before, ends the hashing early
	// (abandon: a file not finished gets no sum) or raises its priority
	// (wait).
	turn *hashTurn
}

type fileSum struct {
	n   int64
	sum string
	err error
}

// startInputSums begins hashing paths (absolute), one after another, at a
// low priority (hashYielding): the run needs the sums only for the manifest,
// at its end, and the hashing is begun with the parse, whose serial scans
// and last pieces, and the assembly's ordered sums after it, leave one core
// idle for a while; a goroutine of the same standing would instead take a
// third of both cores from the parse while it runs in parallel.
func startInputSums(paths []string) *inputSums {
	return startInputSumsAfter(nil, paths)
}

// startInputSumsAfter is startInputSums for the paths prev has not begun,
// taking prev's sums once it is done (nil when prev began every path).
func startInputSumsAfter(prev *inputSums, paths []string) *inputSums {
	var todo []string
	for _, p := range paths {
		if prev == nil || !slices.Contains(prev.paths, p) {
			todo = append(todo, p)
		}
	}
	if prev != nil && len(todo) == 0 {
		return prev
	}
	h := &inputSums{done: make(chan struct{}), paths: append(slices.Clone(prev.begun()), todo...), sums: make(map[string]fileSum, len(paths)), turn: new(hashTurn)}
	if prev != nil {
		h.turn = prev.turn
	}
	go func() {
		defer close(h.done)
		if prev != nil {
			<-prev.done // at prev's priority: no one waits yet
			maps.Copy(h.sums, prev.sums)
		}
		for _, p := range todo {
			if _, ok := h.sums[p]; !ok {
				n, sum, err := hashRecovered(p, h.turn)
				if errors.Is(err, errHashStopped) {
					return
				}
				h.sums[p] = fileSum{n, sum, err}
			}
		}
	}()
	return h
}

// hashRecovered is hashInput(p, turn) on the hashing goroutine. A panic
// there, unrecovered, would end the program past a batch's recovery per
// run (cmd/bandsolve runOne). It is a bug of this program (a file that
// cannot be read gets an error), and becomes p's error rather than a panic
// raised again where the sums are waited for: the manifest already returns
// its files' errors, naming the file, and the run fails with it; waiters
// (wait, abandon, the next startInputSumsAfter) are told by done being
// closed whatever happened, and the files after p are hashed on.
func hashRecovered(p string, turn *hashTurn) (n int64, sum string, err error) {
	defer func() {
		if v := recover(); v != nil {
			n, sum, err = 0, "", fmt.Errorf("%s: internal error while hashing it: %w (please report it)", p, fanout.Error(v))
		}
	}()
	return hashInput(p, turn)
}

// hashInput is hashFileYielding; a variable so that a test can make the
// hashing panic.
var hashInput = hashFileYielding

// begun are the paths h hashes (none for nil).
func (h *inputSums) begun() []string {
	if h == nil {
		return nil
	}
	return h.paths
}

// wait returns once every file begun is hashed (at once for nil); the
// hashing left is done at an ordinary goroutine's priority.
func (h *inputSums) wait() {
	if h != nil {
		h.turn.needed.Store(true)
		<-h.done
	}
}

// abandon ends the hashing at its next piece and waits for it: a run
// that fails writes no manifest, and should not wait for a large file to
// be read to the end first.
func (h *inputSums) abandon() {
	if h != nil {
		h.turn.stop.Store(true)
		<-h.done
	}
}

// hash is HashFile(p), taken from the sums begun when p is among them.
func (h *inputSums) hash(p string) (int64, string, error) {
	if h != nil {
		if abs, err := filepath.Abs(p); err == nil {
			h.wait()
			if s, ok := h.sums[abs]; ok {
				return s.n, s.sum, s.err
			}
		}
	}
	return HashFile(p)
}

// dataFiles are the files makeManifest hashes for --data, as absolute
// paths: a file as given, a folder's spectrum files (the series' names).
func dataFiles(r *Result) []string {
	var out []string
	add := func(p string) {
		if abs, err := filepath.Abs(p); err == nil {
			out = append(out, abs)
		}
	}
	s := r.Settings
	for i, d := range s.Data {
		p := s.Path(d)
		st, err := os.Stat(p)
		if err != nil {
			continue
		}
		if st.IsDir() && i < len(r.Experiments) && r.Experiments[i].Series != nil {
			for _, f := range r.Experiments[i].Series.Names {
				add(f)
			}
			continue
		}
		add(p)
	}
	return out
}

// fileData are the --data paths that name files rather than folders, as
// absolute paths: the files dataFiles gives that are known before the
// series are read.
func fileData(s *Settings) []string {
	var out []string
	for _, d := range s.Data {
		p := s.Path(d)
		if st, err := os.Stat(p); err == nil && !st.IsDir() {
			if abs, err := filepath.Abs(p); err == nil {
				out = append(out, abs)
			}
		}
	}
	return out
}

// hashStream returns the size and SHA-256 (hex) of what f holds.
func hashStream(f io.Reader, name string) (int64, string, error) {
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return 0, "", fmt.Errorf("%s: %w", name, err)
	}
	return n, hex.EncodeToString(h.Sum(nil)), nil
}

// hashPiece is how much hashYielding reads and hashes between yields:
// about 0.2 ms of SHA-256 on the benchmark machine.
const hashPiece = 256 << 10

// hashPause is how long hashYielding steps aside when other goroutines
// wait for a processor: about a piece's time, so that a core left idle
// takes the hashing up again within a fraction of a millisecond.
const hashPause = 200 * time.Microsecond

// hashYielding is hashStream of f, a piece at a time, at a low priority:
// after each piece, while any goroutine waits for a processor (the
// runtime's count of runnable goroutines, runtime/metrics), it sleeps
// rather than take a processor from them. runtime.Gosched would not do:
// it puts the goroutine on the scheduler's global queue, which a processor
// with nothing of its own serves before it steals from another's queue
// (findRunnable), so a parse worker queued behind its parent on the other
// processor waited until the whole file was hashed (the traces of the
// 2000 × 3001 series: the second worker began 14 ms late, and the two
// ended 20 ms apart). A sleeping goroutine holds no queue: the processor
// takes the waiting work. Once the sums are waited for (turn.needed) it
// hashes on as any goroutine. The same bytes in the same order: the same
// sum.
func hashYielding(f io.Reader, name string, turn *hashTurn) (int64, string, error) {
	h := sha256.New()
	buf := make([]byte, hashPiece)
	waiting := runnableSample()
	var n int64
	for {
		k, err := io.ReadFull(f, buf)
		h.Write(buf[:k])
		n += int64(k)
		if err == io.EOF || err == io.ErrUnexpectedEOF {
			break
		}
		if err != nil {
			return 0, "", fmt.Errorf("%s: %w", name, err)
		}
		sleepWhileBusy(waiting, func() bool { return !turn.stop.Load() && !turn.needed.Load() })
		if turn.stop.Load() {
			return 0, "", errHashStopped
		}
	}
	return n, hex.EncodeToString(h.Sum(nil)), nil
}

// sleepWhileBusy is a low-priority goroutine's wait: while stillLow holds
// and any goroutine waits for a processor (stepAside, into sample), it
// sleeps hashPause rather than take a processor from them. Sleeping, it
// holds no run queue, unlike runtime.Gosched (see hashYielding).
func sleepWhileBusy(sample []metrics.Sample, stillLow func() bool) {
	for stillLow() && stepAside(sample) {
		time.Sleep(hashPause)
	}
}

// runnableSample is stepAside's sample: the runtime's count of goroutines
// waiting for a processor.
func runnableSample() []metrics.Sample {
	return []metrics.Sample{{Name: "/sched/goroutines/runnable:goroutines"}}
}

// stepAside says a goroutine waits for a processor, read into sample (the
// runnable count; a runtime without it says no, and the hashing goes on
// as an ordinary goroutine's would).
func stepAside(sample []metrics.Sample) bool {
	metrics.Read(sample)
	return sample[0].Value.Kind() == metrics.KindUint64 && sample[0].Value.Uint64() > 0
}

// maxManifestBytes bounds manifest.json: it lists one line per input, and
// a folder of 10⁵ spectrum files gives a few MB.
const maxManifestBytes = 64 << 20

// ReadManifest reads an output folder's manifest.json (never through a
// link leading outside the folder; see readManifest).
func ReadManifest(dir string) (*Manifest, error) {
	root, err := os.OpenRoot(dir)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", dir, unwrapPath(err))
	}
	defer root.Close()
	return readManifest(root, dir)
}

// readManifest reads manifest.json from the folder root (named dir in
// messages). It is untrusted: it must be a regular file inside the folder,
// of bounded size, and valid JSON of the Manifest type.
func readManifest(root *os.Root, dir string) (*Manifest, error) {
	b, err := readInside(root, ManifestName, maxManifestBytes)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, fmt.Errorf("%s: has no %s; it is not a complete bandsolve output folder", dir, ManifestName)
		}
		return nil, fmt.Errorf("%s: %w", dir, err)
	}
	return parseManifest(filepath.Join(dir, ManifestName), b)
}

// parseManifest decodes a manifest; name is used in messages.
func parseManifest(name string, b []byte) (*Manifest, error) {
	var m Manifest
	if err := json.Unmarshal(b, &m); err != nil {
		return nil, fmt.Errorf("%s: not a valid manifest: %s; it was changed since bandsolve wrote it, or is none of bandsolve's: run the analysis again into a new --out", name, output.JSONFault(err))
	}
	if m.Tool != "bandsolve" {
		return nil, fmt.Errorf("%s: not a bandsolve manifest (its tool is %q)", name, clip(m.Tool))
	}
	return &m, nil
}

// RerunNeedsOut refuses a command file that lies in an output folder of
// bandsolve (its as-run record, most often) run without --out: its results
// would go inside the results it came from (NAME-results beside the file,
// or the file's out line), two runs in one folder that a later --force will
// not replace. docs/reproducibility.md reruns a record with --out.
func RerunNeedsOut(file string) error {
	dir := filepath.Dir(file)
	if !output.Made(dir) {
		return nil
	}
	return usage("%s lies in the output folder %s, and its results would be written inside those results; give --out for the rerun, e.g. bandsolve run %s --out %s",
		file, dir, file, filepath.Clean(dir)+"-rerun")
}
