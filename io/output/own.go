package output

import (
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path"
	"path/filepath"
	"slices"
	"strings"
)

// What --force may delete. A folder bandsolve made lists, in its
// manifest's "files", every file it held when bandsolve wrote it (FilesKey;
// the writer of the manifest fills it, see ListFiles). --force replaces
// such a folder only while it holds nothing else: a file a user put into
// it (notes, a plot, an edited copy under another name) makes --force
// refuse, naming the file, as bandsolve never deletes what it did not
// make. The earlier results are then removed file by file from that list,
// never as a tree (dropEarlier), so that a file added in the instant
// between the check and the swap is kept too.

// FilesKey is the manifest's key listing the folder's files.
const FilesKey = "files"

// rebuiltReport says whether name (relative, slash-separated) is the
// report `bandsolve report` writes into a folder after the run: the
// report itself, or the temporary file it writes first.
func rebuiltReport(name string) bool {
	if name == "report.html" {
		return true
	}
	ok, _ := path.Match(".report-*.html", name)
	return ok
}

// manifestHead is what the output package reads of a manifest.
type manifestHead struct {
	Tool  string    `json:"tool"`
	Files *[]string `json:"files"`
}

// readHead reads root's manifest; ok is false when there is none, or it
// is not bandsolve's.
func readHead(root *os.Root) (m manifestHead, ok bool) {
	st, err := root.Lstat(ManifestName)
	if err != nil || !st.Mode().IsRegular() || st.Size() > 64<<20 {
		return m, false
	}
	b, err := root.ReadFile(ManifestName)
	if err != nil || json.Unmarshal(b, &m) != nil || m.Tool != "bandsolve" {
		return m, false
	}
	return m, true
}

// ownFiles is the set of files root's manifest lists; listed is false for
// a folder without the list (made by a bandsolve before the list existed,
// or a staging folder not yet complete).
func ownFiles(root *os.Root) (own map[string]bool, listed bool) {
	m, ok := readHead(root)
	if !ok || m.Files == nil {
		return nil, false
	}
	own = map[string]bool{}
	for _, f := range *m.Files {
		if filepath.IsLocal(filepath.FromSlash(f)) {
			own[path.Clean(f)] = true
		}
	}
	own[ManifestName] = true
	return own, true
}

// folders is every folder above a file of own.
func folders(own map[string]bool) map[string]bool {
	dirs := map[string]bool{}
	for f := range own {
		for d := path.Dir(f); d != "."; d = path.Dir(d) {
			dirs[d] = true
		}
	}
	return dirs
}

// unlisted lists the entries below root that are neither own files, nor
// folders holding them, nor the rebuilt report: what --force must not
// delete. A folder not listed is named once, not its contents.
func unlisted(root *os.Root, own map[string]bool) ([]string, error) {
	dirs := folders(own)
	var extra []string
	err := fs.WalkDir(root.FS(), ".", func(p string, d fs.DirEntry, err error) error {
		switch {
		case err != nil:
			return err
		case p == ".":
			return nil
		case d.IsDir() && dirs[p]:
			return nil
		case d.IsDir():
			extra = append(extra, p+"/")
			return fs.SkipDir
		case own[p] || rebuiltReport(p):
			return nil
		}
		extra = append(extra, p)
		return nil
	})
	slices.Sort(extra)
	return extra, err
}

// othersFiles refuses, for --force, a folder bandsolve made that does
// not list its files or holds files it did not write.
func othersFiles(out, clean string) error {
	root, err := os.OpenRoot(clean)
	if err != nil {
		return fmt.Errorf("%s: cannot open: %w", out, unwrap(err))
	}
	defer root.Close()
	own, listed := ownFiles(root)
	if !listed {
		return fmt.Errorf("%s: was written by an earlier bandsolve, whose %s does not list the files it wrote, so --force cannot tell them from files added since; check the folder and remove it yourself, or choose another --out", out, ManifestName)
	}
	extra, err := unlisted(root, own)
	if err != nil {
		return fmt.Errorf("%s: cannot list: %w", out, unwrap(err))
	}
	if len(extra) > 0 {
		return fmt.Errorf("%s: holds %s, which bandsolve did not write; --force replaces only its own results and never deletes other files: move them out of the folder, or choose another --out", out, nameSome(extra, 3))
	}
	return nil
}

// nameSome names the first few of names and counts the rest.
func nameSome(names []string, few int) string {
	if len(names) <= few {
		return strings.Join(names, ", ")
	}
	return fmt.Sprintf("%s and %d more", strings.Join(names[:few], ", "), len(names)-few)
}

// dropEarlier removes the earlier results that a commit moved to dir:
// the files its manifest lists (and the rebuilt report), on several
// goroutines as removeFiles does, then the folders left empty, the
// manifest last, so that a kill midway leaves the list for the next run's
// tidy to finish with. Whatever else dir holds (a file put into the
// output folder after --force checked it) is kept: dir is renamed beside
// final as FINAL.kept (or .kept-2, …). A dir without the list is kept
// whole the same way, unless it is empty.
func dropEarlier(dir, final string) {
	root := openTree(dir)
	if root == nil {
		return
	}
	own, listed := ownFiles(root)
	if !listed {
		root.Close()
		// An empty folder is what a removal killed between the
		// manifest and the folder leaves: nothing to keep (os.Remove
		// removes a folder only while it is empty).
		if os.Remove(dir) != nil {
			keepAside(dir, final)
		}
		return
	}
	var files []string
	for _, f := range treeFiles(root) {
		if f != ManifestName && (own[f] || rebuiltReport(f)) {
			files = append(files, f)
		}
	}
	removeFiles(root, files)
	removeEmptyFolders(root, folders(own))
	left, err := unlisted(root, map[string]bool{ManifestName: true})
	root.Close()
	if err != nil || len(left) > 0 {
		keepAside(dir, final)
		return
	}
	os.Remove(filepath.Join(dir, ManifestName))
	os.Remove(dir)
}

// removeEmptyFolders removes the folders of dirs that are empty, deepest
// first (os.Remove never removes a folder that is not).
func removeEmptyFolders(root *os.Root, dirs map[string]bool) {
	list := make([]string, 0, len(dirs))
	for d := range dirs {
		list = append(list, d)
	}
	slices.SortFunc(list, func(a, b string) int { return strings.Count(b, "/") - strings.Count(a, "/") })
	for _, d := range list {
		root.Remove(d)
	}
}

// keepAside renames dir to the first free name FINAL.kept, FINAL.kept-2, …
// beside final, where the user sees it.
func keepAside(dir, final string) {
	for i := 1; i < 1000; i++ {
		name := final + ".kept"
		if i > 1 {
			name = fmt.Sprintf("%s.kept-%d", final, i)
		}
		if _, err := os.Lstat(name); !errors.Is(err, os.ErrNotExist) {
			continue
		}
		if os.Rename(dir, name) == nil {
			return
		}
	}
}

// Listing lists every file of the stage (links included, folders implied),
// slash-separated and sorted: what the manifest's FilesKey holds, for the
// writer of the manifest to call once nothing else is written.
func (s *Stage) Listing() ([]string, error) {
	var files []string
	err := filepath.WalkDir(s.Dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		rel, err := filepath.Rel(s.Dir, p)
		files = append(files, filepath.ToSlash(rel))
		return err
	})
	if err != nil {
		return nil, fmt.Errorf("listing the results: %w", err)
	}
	slices.Sort(files)
	return files, nil
}
