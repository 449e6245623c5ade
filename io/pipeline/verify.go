package pipeline

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"github.com/bandsolve/bandsolve/io/cmdfile"
	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/spectra"
)

// Difference is the first place a rerun's file departs from the folder's.
type Difference struct {
	File       string // slash path inside the output folder
	Line       int    // 1-based; 0 when a file is missing
	Want, Got  string // the line in the folder and in the rerun
	Missing    bool   // the folder lacks a file the rerun wrote
	Extra      bool   // the rerun did not write a result file of the folder
	InputError string // set for an input whose SHA-256 no longer matches
}

func (d *Difference) String() string {
	switch {
	case d.InputError != "":
		return d.InputError
	case d.Missing:
		return fmt.Sprintf("%s: the rerun writes this file, the folder does not hold it", d.File)
	case d.Extra:
		return fmt.Sprintf("%s: the folder holds this result file, the rerun does not write it", d.File)
	}
	return fmt.Sprintf("%s:%d: differs\n  folder: %s\n  rerun:  %s", d.File, d.Line, clip(d.Want), clip(d.Got))
}

func clip(s string) string {
	if r := []rune(s); len(r) > 160 {
		return string(r[:160]) + "…"
	}
	return s
}

// Verification is what Verify found.
type Verification struct {
	Compared    []string // files compared byte for byte, in writing order
	Inputs      int      // inputs whose SHA-256 matched
	Differences []*Difference
	Notes       []string
	// Builds says what may explain a difference on the programs' side (the
	// folder's and this one's version and commit); worth saying only when
	// something differs.
	Builds []string
}

// OK says whether the rerun reproduced every file.
func (v *Verification) OK() bool { return len(v.Differences) == 0 }

// Verify reruns the analysis recorded in the output folder dir into a
// temporary folder and compares every file byte for byte. The inputs'
// SHA-256 are checked first: a changed input is reported and nothing is rerun.
//
// Nothing in dir is trusted (docs/security.md): its files are read through
// an os.Root, so no name, ".." or link leads outside it; only regular files
// are read; a manifest may list as inputs only files its as-run record
// names, and as supplied files only plain paths inside dir; the rerun is
// written into a private temporary folder and nowhere else.
func Verify(dir string, log io.Writer) (*Verification, error) {
	if log == nil {
		log = io.Discard
	}
	v := &Verification{}
	st, err := os.Stat(dir)
	if err != nil {
		// A folder that cannot be read is a run error (exit 1), as a
		// missing --data file or command file is (docs/errors.md).
		return nil, fmt.Errorf("%s: cannot read: %w; check the output folder's path", dir, unwrapPath(err))
	}
	if !st.IsDir() {
		return nil, usage("%s: not a folder; give an output folder of bandsolve (it holds %s and %s)", dir, RecordName, ManifestName)
	}
	abs, err := filepath.Abs(dir)
	if err != nil {
		return nil, err
	}
	root, err := os.OpenRoot(abs)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", dir, unwrapPath(err))
	}
	defer root.Close()
	m, err := readManifest(root, dir)
	if err != nil {
		return nil, err
	}
	v.Builds = buildNotes(m.Version, m.Host.Commit, Version, Commit())
	record := filepath.Join(dir, RecordName)
	src, err := readInside(root, RecordName, cmdfile.MaxBytes)
	if err != nil {
		return nil, fmt.Errorf("as-run record: %w", err)
	}
	s := NewSettings()
	if err := loadRecord(record, src, s); err != nil {
		return nil, fmt.Errorf("as-run record: %w", err)
	}
	inputs, supplied := checkInputs(v, root, abs, m, s)
	if !v.OK() {
		return v, nil
	}
	s.Out, s.Force, s.Quiet, s.JSON = abs, false, true, false
	if n := absoluteInputs(s); n != "" {
		v.Notes = append(v.Notes, fmt.Sprintf("the record names inputs by absolute path (%s): this folder reproduces only where those paths exist; give relative paths to keep a folder movable", n))
	}
	fmt.Fprintf(log, "rerunning %s\n", record)
	r, err := runForFolder(s, log)
	if err != nil {
		return nil, fmt.Errorf("rerun: %w", err)
	}
	// The rerun is staged in a private temporary folder; with Final naming
	// the folder being verified, the record's relative paths come out as in
	// the original. It is never committed.
	stage, err := output.NewPrivateStage("bandsolve-verify", abs)
	if err != nil {
		return nil, fmt.Errorf("rerun: %w", err)
	}
	defer stage.Abort()
	for _, f := range m.Supplied {
		// Each path passed filepath.IsLocal in checkInputs: it stays inside the stage.
		p := filepath.FromSlash(f.Path)
		if d := filepath.Dir(p); d != "." {
			if err := os.MkdirAll(stage.Path(d), 0o755); err != nil {
				return nil, err
			}
		}
		if err := stage.Write(p, supplied[f.Path]); err != nil {
			return nil, err
		}
	}
	if err := finish(r, stage, nil, Streams{Out: io.Discard, Err: io.Discard}); err != nil {
		return nil, fmt.Errorf("rerun: %w", err)
	}
	if err := compareRerun(v, root, m, stage, inputs); err != nil {
		return nil, err
	}
	return v, nil
}

// absoluteInputs lists the record's input paths that are absolute.
func absoluteInputs(s *Settings) string {
	var absolute []string
	for _, o := range Options() {
		for _, val := range s.Get(o.Name) {
			if o.Name != "out" && IsPath(o.Name, val) && filepath.IsAbs(val) {
				absolute = append(absolute, val)
			}
		}
	}
	return strings.Join(absolute, ", ")
}

// compareRerun compares the rerun's files in stage with the folder's.
func compareRerun(v *Verification, root *os.Root, m *Manifest, stage *output.Stage, inputs map[string]bool) error {
	// The rerun must have read exactly the files the manifest lists (a file
	// added to a data folder, or a record edited to name other inputs,
	// shows here with its name).
	if rm, err := ReadManifest(stage.Dir); err == nil {
		if d := inputsDiffer(m.Inputs, rm.Inputs); d != "" {
			v.Differences = append(v.Differences, &Difference{File: ManifestName, InputError: d})
		}
	}
	written := stage.Files()[len(m.Supplied):]
	all, err := listFiles(stage.Dir)
	if err != nil {
		return err
	}
	seen := map[string]bool{}
	order := []string{}
	for _, f := range written {
		seen[filepath.ToSlash(f)] = true
		order = append(order, filepath.ToSlash(f))
	}
	for _, f := range all {
		if !seen[f] && !inputs[f] {
			order = append(order, f)
			seen[f] = true
		}
	}
	for _, name := range order {
		if name == ManifestName {
			continue
		}
		want, err := readInside(root, name, maxResultBytes)
		if errors.Is(err, os.ErrNotExist) {
			v.Differences = append(v.Differences, &Difference{File: name, Missing: true})
			continue
		}
		if err != nil {
			v.Differences = append(v.Differences, &Difference{File: name, InputError: fmt.Sprintf("%s: refused: %v", name, err)})
			continue
		}
		got, err := os.ReadFile(filepath.Join(stage.Dir, filepath.FromSlash(name)))
		if err != nil {
			return err
		}
		v.Compared = append(v.Compared, name)
		if d := firstDifference(name, want, got); d != nil {
			v.Differences = append(v.Differences, d)
		}
	}
	have, err := listFiles(root.Name())
	if err != nil {
		return err
	}
	var extra []string
	for _, f := range have {
		if !seen[f] && !inputs[f] && f != ManifestName {
			extra = append(extra, f)
		}
	}
	if len(extra) > 0 {
		v.Notes = append(v.Notes, fmt.Sprintf("not compared, as no analysis writes them (the command that made the folder did): %s", strings.Join(extra, ", ")))
	}
	return nil
}

// checkInputs checks the SHA-256 of the manifest's inputs and supplied
// files, adding a Difference for each that changed or is refused. It
// returns the set of their names and the supplied files' contents. An
// input must be a file the record names (or a file inside a folder it
// names), so that a tampered manifest cannot make verify read, or print
// anything about, any other file; a supplied file must lie inside the
// folder, where it is read through root.
func checkInputs(v *Verification, root *os.Root, abs string, m *Manifest, s *Settings) (map[string]bool, map[string][]byte) {
	named := recordPaths(s)
	inputs := map[string]bool{}
	supplied := map[string][]byte{}
	refuse := func(in InputFile, why string) {
		v.Differences = append(v.Differences, &Difference{File: in.Path, InputError: fmt.Sprintf("manifest entry %q: refused: %s; nothing was read", clip(in.Path), why)})
	}
	for _, in := range m.Inputs {
		if inputs[in.Path] {
			continue
		}
		inputs[in.Path] = true
		p := filepath.FromSlash(in.Path)
		if !filepath.IsAbs(p) {
			p = filepath.Join(abs, p)
		}
		if !named.covers(filepath.Clean(p)) {
			refuse(in, "the as-run record names no such input")
			continue
		}
		// Hashed as it is read: an input may be as large as the data.
		var n int64
		var sum string
		var err error
		if rel := filepath.FromSlash(in.Path); filepath.IsLocal(rel) {
			var f *os.File
			if f, err = openInside(root, in.Path); err == nil {
				n, sum, err = hashStream(f, in.Path)
				f.Close()
			}
		} else {
			n, sum, err = HashFile(p)
		}
		if err != nil {
			v.Differences = append(v.Differences, &Difference{File: in.Path, InputError: fmt.Sprintf("input %s: cannot be read (%v); put it back where the record says (relative to %s)", in.Path, unwrapPath(err), root.Name())})
			continue
		}
		checkSum(v, in, n, sum)
	}
	for _, in := range m.Supplied {
		if !filepath.IsLocal(filepath.FromSlash(in.Path)) {
			refuse(in, "a supplied file must be a plain path inside the folder (not absolute, no ..)")
			continue
		}
		b, err := readInside(root, in.Path, spectra.MaxFileBytes)
		if err != nil {
			v.Differences = append(v.Differences, &Difference{File: in.Path, InputError: fmt.Sprintf("supplied file %s: cannot be read (%v)", in.Path, unwrapPath(err))})
			continue
		}
		if !inputs[in.Path] {
			inputs[in.Path] = true
			sum := sha256.Sum256(b)
			checkSum(v, in, int64(len(b)), hex.EncodeToString(sum[:]))
		}
		supplied[in.Path] = b
	}
	return inputs, supplied
}

// checkSum compares a file's SHA-256 with the manifest's. The message
// gives sizes, never the file's own digest: the manifest is not trusted to
// name a file whose fingerprint may be shown.
func checkSum(v *Verification, in InputFile, n int64, sum string) {
	if sum != in.SHA256 {
		v.Differences = append(v.Differences, &Difference{File: in.Path, InputError: fmt.Sprintf("input %s: SHA-256 mismatch with the manifest (%d bytes now, %d recorded); the input changed since the run", in.Path, n, in.Bytes)})
		return
	}
	v.Inputs++
}

// pathSet is the files and folders a record names, absolute and clean.
type pathSet struct{ files, folders []string }

func recordPaths(s *Settings) pathSet {
	var ps pathSet
	for _, o := range Options() {
		if keyword(o).Path != cmdfile.ReadPath {
			continue
		}
		for _, val := range s.Get(o.Name) {
			if !IsPath(o.Name, val) {
				continue
			}
			p, err := filepath.Abs(s.Path(val))
			if err != nil {
				continue
			}
			ps.files = append(ps.files, p)
			if o.Name == "data" {
				ps.folders = append(ps.folders, p)
			}
		}
	}
	for _, f := range knownSpectrumFiles(s) {
		if p, err := filepath.Abs(s.Path(f)); err == nil {
			ps.files = append(ps.files, p)
		}
	}
	return ps
}

// covers says whether p is a named file or lies inside a named data folder.
func (ps pathSet) covers(p string) bool {
	for _, f := range ps.files {
		if p == f {
			return true
		}
	}
	for _, d := range ps.folders {
		if rel, err := filepath.Rel(d, p); err == nil && filepath.IsLocal(rel) {
			return true
		}
	}
	return false
}

// maxResultBytes bounds a result file verify compares: far above any
// result a bandsolve run writes (maps.csv is downsampled).
const maxResultBytes = 1 << 30

// readInside reads the regular file name (a slash path) from the folder
// root. os.Root refuses a name or link leading outside the folder; a
// device, FIFO or socket is refused before it is opened, and more than
// limit bytes are refused while reading.
func readInside(root *os.Root, name string, limit int64) ([]byte, error) {
	f, err := openInside(root, name)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return spectra.ReadAllLimited(f, name, limit)
}

// openInside opens the regular file name (a slash path) of the folder root;
// see readInside.
func openInside(root *os.Root, name string) (*os.File, error) {
	p := filepath.FromSlash(name)
	if !filepath.IsLocal(p) {
		return nil, fmt.Errorf("%s is not a plain path inside %s (absolute, or climbing out with ..)", clip(name), root.Name())
	}
	st, err := root.Stat(p)
	if err != nil {
		return nil, outside(err, name, root)
	}
	if !st.Mode().IsRegular() {
		return nil, fmt.Errorf("%s is not a regular file (%s)", name, spectra.KindOf(st.Mode()))
	}
	f, err := root.Open(p)
	if err != nil {
		return nil, outside(err, name, root)
	}
	if st, err := f.Stat(); err != nil || !st.Mode().IsRegular() {
		f.Close()
		return nil, fmt.Errorf("%s is not a regular file", name)
	}
	return f, nil
}

// outside words os.Root's refusal of a path leading out of the folder.
func outside(err error, name string, root *os.Root) error {
	if errors.Is(err, os.ErrNotExist) {
		return err
	}
	if strings.Contains(err.Error(), "escapes") {
		return fmt.Errorf("%s leads outside %s (through a link or ..)", name, root.Name())
	}
	return unwrapPath(err)
}

// inputsDiffer describes the first difference between the inputs a run
// read and those its rerun read, "" when they are the same.
func inputsDiffer(was, now []InputFile) string {
	wasSum, nowSum := map[string]string{}, map[string]string{}
	for _, f := range was {
		wasSum[f.Path] = f.SHA256
	}
	for _, f := range now {
		nowSum[f.Path] = f.SHA256
	}
	for _, f := range now {
		if _, ok := wasSum[f.Path]; !ok {
			return fmt.Sprintf("the rerun also read %s, which the manifest does not list (a file added to a data folder, or a record naming other inputs?)", f.Path)
		}
	}
	for _, f := range was {
		sum, ok := nowSum[f.Path]
		switch {
		case !ok:
			return fmt.Sprintf("the rerun did not read %s, which the manifest lists (a file removed from a data folder, or a record naming other inputs?)", f.Path)
		case sum != f.SHA256:
			return fmt.Sprintf("input %s changed during the rerun", f.Path)
		}
	}
	return ""
}

func unwrapPath(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// listFiles lists the regular files below dir as sorted slash paths.
func listFiles(dir string) ([]string, error) {
	var out []string
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.Type().IsRegular() {
			rel, err := filepath.Rel(dir, p)
			if err != nil {
				return err
			}
			out = append(out, filepath.ToSlash(rel))
		}
		return nil
	})
	sort.Strings(out)
	return out, err
}

// firstDifference finds the first line where two files differ.
func firstDifference(name string, want, got []byte) *Difference {
	if bytes.Equal(want, got) {
		return nil
	}
	wl := strings.SplitAfter(string(want), "\n")
	gl := strings.SplitAfter(string(got), "\n")
	for i := 0; i < max(len(wl), len(gl)); i++ {
		var a, b string
		if i < len(wl) {
			a = wl[i]
		}
		if i < len(gl) {
			b = gl[i]
		}
		if a != b {
			return &Difference{File: name, Line: i + 1, Want: show(a), Got: show(b)}
		}
	}
	return &Difference{File: name, Line: 1, Want: "(bytes differ)", Got: "(bytes differ)"}
}

func show(l string) string {
	if l == "" {
		return "(end of file)"
	}
	if !strings.HasSuffix(l, "\n") {
		return fmt.Sprintf("%q (no line end)", l)
	}
	return strings.TrimSuffix(strings.TrimSuffix(l, "\n"), "\r")
}

// buildNotes says what verify can tell of the two programs: the folder's
// (version and commit from its manifest) and this one. A different version
// or commit may explain a difference; so may any change when neither build
// recorded its commit (`go run`, or a build without version control
// information), where the two cannot be told apart.
func buildNotes(version, commit, thisVersion, thisCommit string) []string {
	const unknown = "unknown"
	switch {
	case version != thisVersion || commit != thisCommit:
		return []string{fmt.Sprintf("the folder was written by bandsolve %s (commit %s), this is %s (commit %s): a difference may come from the change of version", version, commit, thisVersion, thisCommit)}
	case commit == unknown:
		return []string{fmt.Sprintf("neither the program that wrote the folder nor this one recorded its commit (built without version control information, e.g. by go run): both say version %s, but a difference may come from a change of the program between them", version)}
	}
	return nil
}
