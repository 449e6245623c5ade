package pipeline

import (
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"

	"github.com/bandsolve/bandsolve/io/cmdfile"
)

// ErrOtherAnalysis marks an output folder that holds something other than
// a complete earlier result of the analysis asked for (Done).
var ErrOtherAnalysis = errors.New("not this analysis's result")

// ErrKineticsNotDone marks an output folder that holds a complete result
// of the analysis asked for whose kinetics were not done (summary.json's
// kinetics_not_done): the run that wrote it failed, and so would a rerun,
// so it is not a result to skip.
var ErrKineticsNotDone = errors.New("its kinetics were not done")

// Done says whether out already holds a complete result of the analysis s
// describes, so that a campaign rerun after adding a command file can skip
// it (run --skip-done). Complete: the manifest, summary.json and the as-run
// record are there (a run moves its folder into place only when every file
// is written). Same analysis: every recorded setting of the record equals
// s's, paths compared as the files they name (sameSettings), and every input
// the manifest lists still has its SHA-256. A folder that does not exist
// (or is empty) gives false and no error; any other folder is an error wrapping
// ErrOtherAnalysis that names the first difference. Nothing is written.
func Done(out string, s *Settings) (bool, error) {
	st, err := os.Stat(out)
	if errors.Is(err, fs.ErrNotExist) {
		return false, nil
	}
	if err != nil {
		return false, fmt.Errorf("%s: cannot read: %w", out, unwrapPath(err))
	}
	if !st.IsDir() {
		return false, fmt.Errorf("%s: %w: a file, not an output folder", out, ErrOtherAnalysis)
	}
	if ents, err := os.ReadDir(out); err == nil && len(ents) == 0 {
		return false, nil // an empty folder is written into as a new one
	}
	abs, err := filepath.Abs(out)
	if err != nil {
		return false, err
	}
	root, err := os.OpenRoot(abs)
	if err != nil {
		return false, fmt.Errorf("%s: %w", out, unwrapPath(err))
	}
	defer root.Close()
	for _, name := range []string{ManifestName, "summary.json", RecordName} {
		if fi, err := root.Lstat(name); err != nil || !fi.Mode().IsRegular() {
			return false, fmt.Errorf("%s: %w: it holds no %s (not a complete bandsolve result)", out, ErrOtherAnalysis, name)
		}
	}
	m, err := readManifest(root, out)
	if err != nil {
		return false, fmt.Errorf("%s: %w: %v", out, ErrOtherAnalysis, err)
	}
	src, err := readInside(root, RecordName, cmdfile.MaxBytes)
	if err != nil {
		return false, fmt.Errorf("%s: %w: as-run record: %v", out, ErrOtherAnalysis, err)
	}
	was := NewSettings()
	if err := loadRecord(filepath.Join(abs, RecordName), src, was); err != nil {
		return false, fmt.Errorf("%s: %w: as-run record: %v", out, ErrOtherAnalysis, err)
	}
	if d := sameSettings(was, s); d != "" {
		return false, fmt.Errorf("%s: %w: %s", out, ErrOtherAnalysis, d)
	}
	v := &Verification{}
	checkInputs(v, root, abs, m, was)
	if !v.OK() {
		return false, fmt.Errorf("%s: %w: %s", out, ErrOtherAnalysis, v.Differences[0])
	}
	if why, err := kineticsNotDoneIn(root); err != nil {
		return false, fmt.Errorf("%s: %w: %v", out, ErrOtherAnalysis, err)
	} else if why != "" {
		return false, fmt.Errorf("%s: %w (%s)", out, ErrKineticsNotDone, why)
	}
	return true, nil
}

// kineticsNotDoneIn is the folder's summary.json's kinetics_not_done: why
// the model asked for was not fitted, "" when it was or none was asked for.
func kineticsNotDoneIn(root *os.Root) (string, error) {
	b, err := readInside(root, "summary.json", maxSummaryBytes)
	if err != nil {
		return "", fmt.Errorf("summary.json: %v", err)
	}
	var s struct {
		Why string `json:"kinetics_not_done"`
	}
	if err := json.Unmarshal(b, &s); err != nil {
		return "", fmt.Errorf("summary.json: %v", err)
	}
	return s.Why, nil
}

// maxSummaryBytes bounds what is read of a summary.json, as collect does
// (a real one is tens of kB).
const maxSummaryBytes = 16 << 20

// sameSettings names the first recorded setting in which the record (was)
// and the settings asked for (now) differ, "" when none does. Paths are
// compared resolved, each against its own folder, so a command file and
// the record beside its results name the same file alike. A kind left to
// the data matches the kind the record settled on: the inputs are checked
// to be the same files, from which the same kind follows.
func sameSettings(was, now *Settings) string {
	for _, o := range Options() {
		if !o.Record {
			continue
		}
		a, b := settingText(was, o.Name), settingText(now, o.Name)
		if o.Name == "kind" && b == "" {
			continue
		}
		if a != b {
			return fmt.Sprintf("%s is %q there and %q here", o.Name, cmdfile.Clip(a), cmdfile.Clip(b))
		}
	}
	return ""
}

// settingText is a setting's values as one text, paths resolved and clean.
func settingText(s *Settings, name string) string {
	var vals []string
	for _, v := range s.Get(name) {
		if IsPath(name, v) {
			v = filepath.Clean(s.Path(v))
			if abs, err := filepath.Abs(v); err == nil {
				v = abs
			}
		}
		vals = append(vals, v)
	}
	return strings.Join(vals, "\n")
}
