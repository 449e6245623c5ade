package spectra

import (
	"errors"
	"fmt"
	"path/filepath"
	"slices"
	"strings"

	"github.com/bandsolve/bandsolve/internal/regular"
)

// Files in a folder of spectra that are not spectra of the series: notes,
// a peak list, a README saved beside the exports (common practice). Their
// names give no time like the others', so the names' fault would otherwise
// be the one reported, with a fix (rename it) that does not apply.

// folderFiles lists the folder's spectrum files without those --drop names
// that cannot be rows of the series (strayReason): they are left before
// any time is read, each with a note saying why.
func folderFiles(dir string, opt FolderOptions) (files, left, notes []string, err error) {
	all, err := spectrumFiles(dir, opt.Exclude)
	if err != nil || len(opt.Drop) == 0 {
		return all, nil, nil, err
	}
	named := map[string]bool{}
	for _, d := range opt.Drop {
		named[filepath.Base(d)] = true
	}
	var others []string
	for _, f := range all {
		if !named[filepath.Base(f)] {
			others = append(others, f)
		}
	}
	for _, f := range all {
		if !named[filepath.Base(f)] {
			files = append(files, f)
			continue
		}
		if why := strayReason(others, f, opt); why != "" {
			left = append(left, filepath.Base(f))
			notes = append(notes, fmt.Sprintf("%s left out of the folder (--drop %s): %s", filepath.Base(f), filepath.Base(f), why))
			continue
		}
		files = append(files, f)
	}
	return files, left, notes, nil
}

// strayReason says why f cannot be a row of the series beside others, ""
// when it can: then --drop sets it aside later, kept at its time.
func strayReason(others []string, f string, opt FolderOptions) string {
	sp, err := readSpectrum(f)
	if err != nil {
		return "it does not read as a spectrum"
	}
	if ref, at := firstSpectrum(others); ref != nil && len(sp.Axis) < len(ref.Axis)/2 {
		return fmt.Sprintf("it has %d points where %s has %d, a peak list or a cut", len(sp.Axis), filepath.Base(at), len(ref.Axis))
	}
	switch {
	case opt.TimesFile != "":
		if table, err := ReadTimes(opt.TimesFile); err == nil {
			if _, ok := table[filepath.Base(f)]; !ok {
				return "the times table has no time for it"
			}
		}
	case opt.TimesFromName:
		if _, err := timesFromNames(others, opt.TimeUnit); err == nil {
			if _, err := timesFromNames(append(slices.Clip(others), f), opt.TimeUnit); err != nil {
				return "its name gives no time like the other files'"
			}
		}
	case !isJCAMP(f):
		return "it is not JCAMP-DX, and the other files' times come from their headers"
	}
	return ""
}

// strayError explains a fault in the names' times found in one file of
// several (err names it) when that file is no spectrum of the series: it
// does not read as one, or holds far fewer points than another file (a
// peak list). Otherwise err is returned as it is.
func strayError(files []string, err error) error {
	var ie *InputError
	if len(files) < 2 || !errors.As(err, &ie) || !slices.Contains(files, ie.File) {
		return err
	}
	name := filepath.Base(ie.File)
	hint := "move it out of the folder or give --drop " + name
	sp, rerr := readSpectrum(ie.File)
	if rerr != nil {
		return inputErr(ie.File, 0, hint, "is not a spectrum (%v), and its name gives no time like the other files'", errMsg(rerr))
	}
	others := slices.DeleteFunc(slices.Clone(files), func(f string) bool { return f == ie.File })
	if ref, at := firstSpectrum(others); ref != nil && len(sp.Axis) < len(ref.Axis)/2 {
		return inputErr(ie.File, 0, hint, "%s", describeAxisMismatch(sp.Axis, ref.Axis, at))
	}
	return err
}

// errMsg is an error's message without the file it names, when it is an
// InputError: the caller names the file once.
func errMsg(err error) string {
	var ie *InputError
	if errors.As(err, &ie) {
		if ie.Line > 0 {
			return fmt.Sprintf("line %d: %s", ie.Line, ie.Msg)
		}
		return ie.Msg
	}
	return err.Error()
}

// loneFault is file i's read error, with the advice to leave the file out
// when it is the only one of three or more that does not read as a
// spectrum: the others show what the folder holds, and a stray file
// (notes, a peak list) is more likely than one broken export. A file that
// cannot be opened (permissions, a dangling link) keeps its own advice.
func loneFault(files []string, errs []error, i int) error {
	var ie *InputError
	if len(files) < 3 || !errors.As(errs[i], &ie) || ie.File != files[i] {
		return errs[i]
	}
	for j, err := range errs {
		if err != nil && j != i {
			return errs[i]
		}
	}
	// A FIFO or a device is never opened (regular.Open checks first); the
	// advice to move it out of the folder fits it as well.
	f, _, err := regular.Open(files[i])
	if err != nil && !errors.As(err, new(*regular.NotRegularError)) {
		return errs[i]
	}
	if f != nil {
		f.Close()
	}
	out := *ie
	out.Hint = strings.TrimPrefix(out.Hint+"; ", "; ") + fmt.Sprintf("the other %d files read as spectra: if it is none, move it out of the folder or give --drop %s", len(files)-1, filepath.Base(files[i]))
	return &out
}

// firstSpectrum is the first of files that reads as a spectrum, and its
// path; nil if none does.
func firstSpectrum(files []string) (*Spectrum, string) {
	for _, f := range files {
		if sp, err := readSpectrum(f); err == nil {
			return sp, f
		}
	}
	return nil, ""
}
