package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The worked examples of the docs run as written: every `bandsolve resolve`
// command that reads the demo's files (series.csv, blank.csv) is taken from
// README.md and docs/*.md, run on the demo data, and must exit 0; where the
// docs show what it prints (a fenced block right after "prints"), every
// line shown must be a line of the real output, so quoted numbers cannot
// drift from the program.
func TestDocsExamplesRun(t *testing.T) {
	files, _ := filepath.Glob(filepath.Join("..", "..", "docs", "*.md"))
	files = append(files, filepath.Join("..", "..", "README.md"))
	for i, f := range files {
		if a, err := filepath.Abs(f); err == nil {
			files[i] = a // the examples run in folders of their own
		}
	}
	data := t.TempDir()
	writeDemoInputs(t, data)
	ran := 0
	for _, f := range files {
		b, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		for _, ex := range docExamples(string(b)) {
			if !strings.Contains(ex.command, "series.csv") || !strings.HasPrefix(ex.command, "bandsolve resolve ") {
				continue
			}
			args := shellWords(strings.TrimPrefix(ex.command, "bandsolve "))
			dir := t.TempDir()
			for _, n := range []string{"series.csv", "blank.csv"} {
				src, _ := os.ReadFile(filepath.Join(data, n))
				os.WriteFile(filepath.Join(dir, n), src, 0o644)
			}
			t.Chdir(dir)
			r := run(append(args, "--report", "off")...)
			ran++
			if r.code != 0 {
				t.Errorf("%s: %q: exit %d: %s", filepath.Base(f), ex.command, r.code, r.stderr)
				continue
			}
			got := map[string]bool{}
			for _, l := range strings.Split(r.stdout, "\n") {
				got[l] = true
			}
			for _, want := range ex.prints {
				if !got[want] {
					t.Errorf("%s: %q prints no line\n%s\nit printed:\n%s", filepath.Base(f), ex.command, want, r.stdout)
				}
			}
		}
	}
	if ran < 2 {
		t.Errorf("%d worked examples found, want the README's and docs/kinetics.md's at least", ran)
	}
}

type docExample struct {
	command string   // continuation lines joined
	prints  []string // the output the docs show, if any
}

// docExamples finds commands in fenced (```) or indented code blocks; a
// fenced block that follows a line ending in "prints" (or "prints, after
// the resolution,") is the previous command's output.
func docExamples(md string) []docExample {
	var out []docExample
	lines := strings.Split(md, "\n")
	for i := 0; i < len(lines); i++ {
		l := strings.TrimSpace(lines[i])
		if !strings.HasPrefix(l, "bandsolve ") {
			continue
		}
		cmd := l
		for strings.HasSuffix(cmd, "\\") && i+1 < len(lines) {
			i++
			cmd = strings.TrimSpace(strings.TrimSuffix(cmd, "\\")) + " " + strings.TrimSpace(lines[i])
		}
		ex := docExample{command: cmd}
		// Output: the next fenced block, if the prose between says "prints".
		says := false
		for j := i + 1; j < len(lines) && j < i+8; j++ {
			says = says || strings.Contains(lines[j], "prints")
			if strings.HasPrefix(lines[j], "```") && says {
				for k := j + 1; k < len(lines) && !strings.HasPrefix(lines[k], "```"); k++ {
					ex.prints = append(ex.prints, lines[k])
				}
				break
			}
		}
		out = append(out, ex)
	}
	return out
}
