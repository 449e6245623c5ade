package output

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io/fs"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"syscall"
	"testing"
	"time"
)

var committedFiles = []string{"a.csv", "b.csv", "c.csv", "d.csv"}

// TestCommitLoopProcess is the child of TestKillDuringCommit: it commits
// generation after generation into $BANDSOLVE_COMMIT_LOOP until killed.
func TestCommitLoopProcess(t *testing.T) {
	out := os.Getenv("BANDSOLVE_COMMIT_LOOP")
	if out == "" {
		t.Skip("run by TestKillDuringCommit")
	}
	if os.Getenv("BANDSOLVE_COMMIT_TWO_STEP") != "" {
		exchange = func(a, b string) error { return errNoExchange }
	}
	for gen := 1; ; gen++ {
		st, err := NewStage(out, true)
		if err != nil {
			fmt.Fprintln(os.Stderr, err)
			os.Exit(3)
		}
		body := []byte(fmt.Sprintf("generation %d\n", gen))
		for _, n := range committedFiles {
			st.Write(n, body)
		}
		st.Write(ManifestName, ownManifest(committedFiles...))
		if err := st.Commit(); err != nil {
			fmt.Fprintln(os.Stderr, err)
			os.Exit(3)
		}
	}
}

// complete says whether out holds one whole generation: every file, all
// of the same generation, and nothing else.
func complete(out string) error {
	ents, err := os.ReadDir(out)
	if err != nil {
		return err
	}
	if len(ents) != len(committedFiles)+1 {
		return fmt.Errorf("%d entries", len(ents))
	}
	first, _ := os.ReadFile(filepath.Join(out, committedFiles[0]))
	for _, n := range committedFiles {
		b, err := os.ReadFile(filepath.Join(out, n))
		if err != nil || !bytes.Equal(b, first) || len(b) == 0 {
			return fmt.Errorf("%s: %q (%v), %s has %q", n, b, err, committedFiles[0], first)
		}
	}
	return nil
}

// kill -9 at random moments of two concurrent loops of commits into the
// same folder: the output folder always
// holds either the earlier or the new results, complete. With the atomic
// exchange it does so at every instant; with the recorded two-step swap it
// may be missing only until the next run finishes the swap (tidy). Either
// way the next run leaves nothing else beside it.
func TestKillDuringCommit(t *testing.T) {
	if runtime.GOOS != "linux" {
		t.Skip("flock and renameat2 are tested on Linux")
	}
	for _, mode := range []string{"exchange", "two-step"} {
		t.Run(mode, func(t *testing.T) {
			dir := t.TempDir()
			out := filepath.Join(dir, "out")
			rng := rand.New(rand.NewPCG(13, uint64(len(mode))))
			seen := false
			for kill := 0; kill < 12; kill++ {
				// Two runs at once, both replacing out: the second run
				// of the audit, at every instant of the other's commit.
				var cmds []*exec.Cmd
				var errs []*bytes.Buffer
				for range 2 {
					cmd := exec.Command(os.Args[0], "-test.run=^TestCommitLoopProcess$")
					cmd.Env = append(os.Environ(), "BANDSOLVE_COMMIT_LOOP="+out)
					if mode == "two-step" {
						cmd.Env = append(cmd.Env, "BANDSOLVE_COMMIT_TWO_STEP=1")
					}
					errs = append(errs, &bytes.Buffer{})
					cmd.Stderr = errs[len(errs)-1]
					if err := cmd.Start(); err != nil {
						t.Fatal(err)
					}
					cmds = append(cmds, cmd)
				}
				// Until a first commit is seen, wait for one (a loaded
				// machine can take longer than the random delay to start
				// the children); then kill at random moments.
				for wait := 0; !seen && wait < 500; wait++ {
					if _, err := os.Lstat(out); err == nil {
						break
					}
					time.Sleep(10 * time.Millisecond)
				}
				time.Sleep(time.Duration(20+rng.IntN(60)) * time.Millisecond)
				for i, cmd := range cmds {
					cmd.Process.Signal(syscall.SIGKILL)
					cmd.Wait()
					if e := errs[i].String(); strings.Contains(e, "\n") && !strings.Contains(e, "PASS") {
						t.Fatalf("child failed: %s", e)
					}
				}
				_, err := os.Lstat(out)
				switch {
				case err == nil:
					if e := complete(out); e != nil {
						t.Fatalf("kill %d: incomplete results right after kill -9: %v", kill, e)
					}
					seen = true
				case seen && mode == "exchange":
					t.Fatalf("kill %d: output folder missing after kill -9 with the atomic exchange", kill)
				}
				// The next run: finishes any swap, removes dead stages.
				started = time.Now()
				if err := tidy(out); err != nil {
					t.Fatal(err)
				}
				if seen {
					if e := complete(out); e != nil {
						t.Fatalf("kill %d: after the next run's tidy: %v", kill, e)
					}
				}
				if ents, _ := os.ReadDir(dir); len(ents) > 1 {
					var names []string
					for _, e := range ents {
						names = append(names, e.Name()+" "+treeSummary(filepath.Join(dir, e.Name())))
					}
					t.Fatalf("kill %d: left beside the output: %v", kill, names)
				}
			}
			if !seen {
				t.Fatal("no commit completed before a kill: the test tested nothing")
			}
		})
	}
}

// Each state a kill can leave a recorded two-step swap in is completed or
// rolled back by the next run, to whole results and nothing beside them.
func TestRecoverSwap(t *testing.T) {
	for _, c := range []struct {
		name              string
		final, stage, old bool   // which folders the kill left
		want              string // generation in out afterwards
		oldEmptied        bool   // the earlier results' files and manifest gone, not their folder
	}{
		{"killed before the first rename", true, true, false, "earlier", false},
		{"killed between the renames", false, true, true, "new", false},
		{"killed before removing the earlier results", true, false, true, "new", false},
		// A folder without a manifest is kept aside as FINAL.kept, as
		// one a user may have filled; an empty one holds nothing to keep.
		{"killed between the earlier manifest and its folder", true, false, true, "new", true},
	} {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			out := filepath.Join(dir, "out")
			stage := filepath.Join(dir, stagePrefix(out)+"123")
			old := stage + ".old"
			put := func(p, gen string) {
				for _, n := range committedFiles {
					mustWrite(t, filepath.Join(p, n), gen)
				}
				mustWrite(t, filepath.Join(p, ManifestName), string(ownManifest(committedFiles...)))
			}
			switch {
			case c.final && c.old && c.oldEmptied:
				put(out, "new")
				if err := os.Mkdir(old, 0o755); err != nil {
					t.Fatal(err)
				}
			case c.final && c.old:
				put(out, "new")
				put(old, "earlier")
			case c.final:
				put(out, "earlier")
			default:
				put(old, "earlier")
			}
			if c.stage {
				put(stage, "new")
			}
			mustWrite(t, swapPath(out), filepath.Base(stage)+"\n"+filepath.Base(old)+"\n")
			if err := recoverSwap(out); err != nil {
				t.Fatal(err)
			}
			if err := complete(out); err != nil {
				t.Fatal(err)
			}
			if b, _ := os.ReadFile(filepath.Join(out, "a.csv")); string(b) != c.want {
				t.Errorf("out holds %q, want %q", b, c.want)
			}
			if ents, _ := os.ReadDir(dir); len(ents) != 1 {
				t.Errorf("left beside the output: %d entries", len(ents))
			}
		})
	}
	// A swap record naming anything but out's staging folders is refused.
	dir := t.TempDir()
	out := filepath.Join(dir, "out")
	mustWrite(t, swapPath(out), "../../etc\n../../etc.old\n")
	if err := recoverSwap(out); err == nil || !strings.Contains(err.Error(), "is not a swap record of bandsolve") {
		t.Errorf("hostile swap record: %v", err)
	}
}

// tidy removes the staging folder of a dead run and leaves a live run's
// (locked, as NewStage locks it) alone.
func TestTidyRemovesOnlyDeadStages(t *testing.T) {
	if runtime.GOOS != "linux" {
		t.Skip("flock is tested on Linux")
	}
	dir := t.TempDir()
	out := filepath.Join(dir, "out")
	live, err := NewStage(out, false)
	if err != nil {
		t.Fatal(err)
	}
	defer live.Abort()
	dead := filepath.Join(dir, stagePrefix(out)+"dead")
	mustWrite(t, filepath.Join(dead, "a.csv"), "x")
	other := filepath.Join(dir, "notes")
	mustWrite(t, filepath.Join(other, "keep.txt"), "x")
	past := time.Now().Add(-time.Hour)
	os.Chtimes(dead, past, past)
	os.Chtimes(live.Dir, past, past)
	started = time.Now()
	if err := tidy(out); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(dead); err == nil {
		t.Error("a dead run's staging folder was kept")
	}
	if _, err := os.Stat(live.Dir); err != nil {
		t.Error("a live run's staging folder was removed")
	}
	if _, err := os.Stat(filepath.Join(other, "keep.txt")); err != nil {
		t.Error("tidy removed a folder bandsolve did not make")
	}
}

// ownManifest is a manifest of bandsolve listing files (and itself), as
// the pipeline writes it last.
func ownManifest(files ...string) []byte {
	b, _ := json.Marshal(map[string]any{"tool": "bandsolve", FilesKey: append(slices.Clone(files), ManifestName)})
	return b
}

// dropEarlier removes the files the earlier results' manifest lists, a
// link among them without following it (package os, RemoveAll: "removes
// path and any children it contains"; a link is removed, not followed),
// and the folders they leave empty. A file it does not list — one a user
// put into the folder after --force checked it — is kept, with the folder,
// under a name beside the output where the user sees it.
func TestDropEarlierRemovesOnlyWhatItListed(t *testing.T) {
	for _, stray := range []string{"", "figures/mine.png", "notes/today.txt"} {
		base := t.TempDir()
		tree, outside, final := filepath.Join(base, "tree"), filepath.Join(base, "kept.csv"), filepath.Join(base, "out")
		listed := []string{"x.csv", "figures/f.png", "a/b/c/z.txt", "figures/link", "report.html"}
		for _, f := range listed[:3] {
			mustWrite(t, filepath.Join(tree, filepath.FromSlash(f)), f)
		}
		mustWrite(t, outside, "outside")
		if err := os.Symlink(outside, filepath.Join(tree, "figures", "link")); err != nil {
			t.Skip("no symbolic links:", err)
		}
		mustWrite(t, filepath.Join(tree, "report.html"), "rebuilt by bandsolve report")
		mustWrite(t, filepath.Join(tree, ManifestName), string(ownManifest(listed[:4]...)))
		if stray != "" {
			mustWrite(t, filepath.Join(tree, filepath.FromSlash(stray)), "the user's")
		}
		dropEarlier(tree, final)
		if _, err := os.Lstat(tree); !os.IsNotExist(err) {
			t.Errorf("stray %q: the tree is still there (%v)", stray, err)
		}
		if b, err := os.ReadFile(outside); err != nil || string(b) != "outside" {
			t.Errorf("stray %q: the link's target holds %q (%v)", stray, b, err)
		}
		ents, _ := os.ReadDir(base)
		if stray == "" {
			if len(ents) != 1 {
				t.Errorf("left beside: %d entries, want only the link's target", len(ents))
			}
			continue
		}
		if b, err := os.ReadFile(filepath.Join(final+".kept", filepath.FromSlash(stray))); err != nil || string(b) != "the user's" {
			t.Errorf("stray %q: not kept in out.kept: %q (%v)", stray, b, err)
		}
		for _, f := range listed {
			if _, err := os.Lstat(filepath.Join(final+".kept", filepath.FromSlash(f))); err == nil {
				t.Errorf("stray %q: the listed %s was kept too", stray, f)
			}
		}
	}
}

// A folder of the tree swapped for a link to a folder outside, between
// the listing and the removals, leads no removal outside the tree: the
// file of the same name out there is kept. os.Root resolves each name
// inside the folder it was opened on and refuses a link leading out
// (package os: "methods on Root ... will not access files outside the
// tree"); a removal by path would have followed the link.
func TestRemovalFollowsNoLinkSwappedIn(t *testing.T) {
	base := t.TempDir()
	tree, outside := filepath.Join(base, "tree"), filepath.Join(base, "outside")
	for _, d := range []string{filepath.Join(tree, "figures"), outside} {
		if err := os.MkdirAll(d, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	for _, p := range []string{filepath.Join(tree, "figures", "f.png"), filepath.Join(outside, "f.png")} {
		if err := os.WriteFile(p, []byte("kept"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	root := openTree(tree)
	if root == nil {
		t.Fatal("openTree refused a plain folder")
	}
	defer root.Close()
	files := treeFiles(root)
	if len(files) != 1 || files[0] != "figures/f.png" {
		t.Fatalf("files listed %q, want [figures/f.png]", files)
	}
	if err := os.Rename(filepath.Join(tree, "figures"), filepath.Join(base, "moved")); err != nil {
		t.Fatal(err)
	}
	if err := os.Symlink(outside, filepath.Join(tree, "figures")); err != nil {
		t.Fatal(err)
	}
	removeFiles(root, files)
	if b, err := os.ReadFile(filepath.Join(outside, "f.png")); err != nil || string(b) != "kept" {
		t.Errorf("the file outside the tree holds %q (%v)", b, err)
	}
}

// A link where the earlier results should be is not followed: the folder
// it points to keeps its files.
func TestDropEarlierOfALinkKeepsItsTarget(t *testing.T) {
	base := t.TempDir()
	target, link := filepath.Join(base, "target"), filepath.Join(base, "link")
	mustWrite(t, filepath.Join(target, "x.csv"), "kept")
	mustWrite(t, filepath.Join(target, ManifestName), string(ownManifest("x.csv")))
	if err := os.Symlink(target, link); err != nil {
		t.Skip("no symbolic links:", err)
	}
	dropEarlier(link, filepath.Join(base, "out"))
	if b, err := os.ReadFile(filepath.Join(target, "x.csv")); err != nil || string(b) != "kept" {
		t.Errorf("the link's target holds %q (%v)", b, err)
	}
}

// treeSummary lists what a folder left beside the output holds, with the
// first line of each file, for the message of a failed check.
func treeSummary(dir string) string {
	var parts []string
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return nil
		}
		b, _ := os.ReadFile(p)
		line, _, _ := bytes.Cut(b, []byte("\n"))
		rel, _ := filepath.Rel(dir, p)
		parts = append(parts, fmt.Sprintf("%s=%q", rel, line))
		return nil
	})
	return "[" + strings.Join(parts, " ") + "]"
}

// waitForCommit waits while another holder has the parent's lock (flock(2):
// a shared lock is not granted while an exclusive one is held) and makes no
// file of its own: with no lock file it returns at once and leaves none, so
// that a signal during Check leaves nothing beside the output folder.
func TestWaitForCommitMakesNoFile(t *testing.T) {
	if runtime.GOOS != "linux" {
		t.Skip("flock is tested on Linux")
	}
	dir := t.TempDir()
	out := filepath.Join(dir, "out")
	waitForCommit(out)()
	if _, err := os.Lstat(lockPath(out)); !os.IsNotExist(err) {
		t.Fatalf("waitForCommit left %s (%v)", lockPath(out), err)
	}
	unlock, err := lockParent(out)
	if err != nil {
		t.Fatal(err)
	}
	returned := make(chan struct{})
	go func() {
		waitForCommit(out)()
		close(returned)
	}()
	select {
	case <-returned:
		t.Fatal("waitForCommit returned while a commit held the lock")
	case <-time.After(100 * time.Millisecond):
	}
	unlock()
	select {
	case <-returned:
	case <-time.After(10 * time.Second):
		t.Fatal("waitForCommit still waiting after the lock was released")
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 0 {
		t.Errorf("left beside the output: %d entries", len(ents))
	}
}
