package pipeline

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"github.com/bandsolve/bandsolve/io/output"
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
}

// OK says whether the rerun reproduced every file.
func (v *Verification) OK() bool { return len(v.Differences) == 0 }

// Verify reruns the analysis recorded in the output folder dir into a
// temporary folder and compares every file byte for byte. The inputs'
// SHA-256 are checked first: a changed input is reported and nothing is rerun.
func Verify(dir string, log io.Writer) (*Verification, error) {
	if log == nil {
		log = io.Discard
	}
	v := &Verification{}
	if st, err := os.Stat(dir); err != nil || !st.IsDir() {
		return nil, usage("%s: not a folder; give an output folder of bandsolve (it holds %s and %s)", dir, RecordName, ManifestName)
	}
	m, err := ReadManifest(dir)
	if err != nil {
		return nil, err
	}
	if m.Version != Version || m.Host.Commit != Commit() {
		v.Notes = append(v.Notes, fmt.Sprintf("the folder was written by bandsolve %s (commit %s), this is %s (commit %s): a difference may come from the change of version", m.Version, m.Host.Commit, Version, Commit()))
	}
	inputs := map[string]bool{}
	for _, in := range append(append([]InputFile(nil), m.Inputs...), m.Supplied...) {
		if inputs[in.Path] {
			continue
		}
		inputs[in.Path] = true
		p := filepath.FromSlash(in.Path)
		if !filepath.IsAbs(p) {
			p = filepath.Join(dir, p)
		}
		n, sum, err := HashFile(p)
		if err != nil {
			v.Differences = append(v.Differences, &Difference{File: in.Path, InputError: fmt.Sprintf("input %s: cannot be read (%v); put it back where the record says (relative to %s)", in.Path, unwrapPath(err), dir)})
			continue
		}
		if sum != in.SHA256 {
			v.Differences = append(v.Differences, &Difference{File: in.Path, InputError: fmt.Sprintf("input %s: SHA-256 mismatch: it is %s (%d bytes), the run read %s (%d bytes); the input changed since the run", in.Path, sum, n, in.SHA256, in.Bytes)})
			continue
		}
		v.Inputs++
	}
	if !v.OK() {
		return v, nil
	}
	record := filepath.Join(dir, RecordName)
	s := NewSettings()
	if _, err := LoadCommandFile(record, s, nil); err != nil {
		return nil, fmt.Errorf("as-run record: %w", err)
	}
	abs, err := filepath.Abs(dir)
	if err != nil {
		return nil, err
	}
	s.Out, s.Force, s.Quiet, s.JSON = abs, false, true, false
	var absolute []string
	for _, o := range Options() {
		for _, val := range s.Get(o.Name) {
			if o.Name != "out" && IsPath(o.Name, val) && filepath.IsAbs(val) {
				absolute = append(absolute, val)
			}
		}
	}
	if len(absolute) > 0 {
		v.Notes = append(v.Notes, fmt.Sprintf("the record names inputs by absolute path (%s): this folder reproduces only where those paths exist; give relative paths to keep a folder movable", strings.Join(absolute, ", ")))
	}
	fmt.Fprintf(log, "rerunning %s\n", record)
	r, err := Run(s, log)
	if err != nil {
		return nil, fmt.Errorf("rerun: %w", err)
	}
	// The rerun is staged in the temporary folder; with Final naming the
	// folder being verified, the record's relative paths come out as in the
	// original. It is never committed.
	stage, err := output.NewStage(filepath.Join(os.TempDir(), "bandsolve-verify"), true)
	if err != nil {
		return nil, err
	}
	defer stage.Abort()
	stage.Final = abs
	for _, f := range m.Supplied {
		b, err := os.ReadFile(filepath.Join(dir, filepath.FromSlash(f.Path)))
		if err != nil {
			return nil, err
		}
		if d := filepath.Dir(filepath.FromSlash(f.Path)); d != "." {
			if err := os.MkdirAll(stage.Path(d), 0o755); err != nil {
				return nil, err
			}
		}
		if err := stage.Write(filepath.FromSlash(f.Path), b); err != nil {
			return nil, err
		}
	}
	if err := finish(r, stage, nil, Streams{Out: io.Discard, Err: io.Discard}); err != nil {
		return nil, fmt.Errorf("rerun: %w", err)
	}
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
		return nil, err
	}
	seen := map[string]bool{}
	for _, f := range written {
		seen[filepath.ToSlash(f)] = true
	}
	order := []string{}
	for _, f := range written {
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
		want, err := os.ReadFile(filepath.Join(dir, filepath.FromSlash(name)))
		if os.IsNotExist(err) {
			v.Differences = append(v.Differences, &Difference{File: name, Missing: true})
			continue
		}
		if err != nil {
			return nil, err
		}
		got, err := os.ReadFile(filepath.Join(stage.Dir, filepath.FromSlash(name)))
		if err != nil {
			return nil, err
		}
		v.Compared = append(v.Compared, name)
		if d := firstDifference(name, want, got); d != nil {
			v.Differences = append(v.Differences, d)
		}
	}
	have, err := listFiles(dir)
	if err != nil {
		return nil, err
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
	return v, nil
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
