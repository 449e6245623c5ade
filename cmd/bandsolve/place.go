package main

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strings"

	"github.com/bandsolve/bandsolve/io/cmdfile"
	"github.com/bandsolve/bandsolve/io/pipeline"
)

// placedError is a fault of a run put at the command-file line whose
// setting caused it; it unwraps to the fault, whose kind sets the exit code.
type placedError struct {
	msg string
	err error
}

func (e *placedError) Error() string { return e.msg }
func (e *placedError) Unwrap() error { return e.err }

// flagInMessage finds the options a run's messages name, as flags.
var flagInMessage = regexp.MustCompile(`--([a-z][a-z0-9]*(?:-[a-z0-9]+)*)`)

// placeFault puts a run's fault at the line of the command file that set
// the option it names (docs/command-files.md: every fault names file, line
// and column), with the keyword as the file writes it in place of the
// flag. Faults of options the command line set, or that name none, are
// left as they are: the file is not at fault.
func placeFault(p *prepared, err error) error {
	if p.cf == nil || err == nil {
		return err
	}
	var ce *cmdfile.Error
	if errors.As(err, &ce) {
		return err // placed already
	}
	msg := err.Error()
	for _, m := range flagInMessage.FindAllStringSubmatchIndex(msg, -1) {
		name := msg[m[2]:m[3]]
		o, ok := pipeline.Lookup(name)
		if !ok || o.Name != name || p.changed[name] {
			continue
		}
		e, ok := entryFor(p.cf, name, msg, p.s)
		if !ok {
			continue
		}
		col := e.ValueCol
		if col == 0 {
			col = e.Col
		}
		text := fileWords(p, replaceFlag(msg, name, e.Key)) + relativePathHint(p.s, name, e.Key, e.Value)
		return &placedError{msg: fmt.Sprintf("%s:%d:%d: %s", p.cf.Name, e.Line, col, text), err: err}
	}
	return err
}

// shownOnly are the options that choose where and how results are shown:
// advice to give one ("give --force to replace them") is advice for the
// command line, unless the file itself sets it.
var shownOnly = map[string]bool{"out": true, "force": true, "quiet": true, "json": true}

// fileWords writes every other option a placed fault names as the file
// writes it, so one message does not mix keywords and flags ("times and
// times-from-name both give the times"): as its keyword when the file sets
// it, as the plain keyword when neither file nor command line does; a flag
// the command line set stays a flag.
func fileWords(p *prepared, msg string) string {
	seen := map[string]bool{}
	for _, m := range flagInMessage.FindAllStringSubmatch(msg, -1) {
		name := m[1]
		o, ok := pipeline.Lookup(name)
		if seen[name] || !ok || o.Name != name || p.changed[name] {
			continue
		}
		seen[name] = true
		keyword := name
		if e, set := entryFor(p.cf, name, msg, p.s); set {
			keyword = e.Key
		} else if shownOnly[name] {
			continue
		}
		msg = replaceFlag(msg, name, keyword)
	}
	return msg
}

// entryFor is the file's line for option name: of a repeated keyword, the
// one whose value (or the path it reads) the message quotes, else the first.
func entryFor(f *cmdfile.File, name, msg string, s *pipeline.Settings) (cmdfile.Entry, bool) {
	var found []cmdfile.Entry
	for _, e := range f.Entries {
		if o, ok := pipeline.Lookup(e.Key); ok && o.Name == name {
			found = append(found, e)
		}
	}
	if len(found) == 0 {
		return cmdfile.Entry{}, false
	}
	for _, e := range found {
		for _, v := range pathsIn(strings.TrimSpace(e.Value)) {
			if strings.Contains(msg, v) || strings.Contains(msg, filepath.Clean(v)) || strings.Contains(msg, filepath.Clean(s.Path(v))) {
				return e, true
			}
		}
	}
	return found[0], true
}

// pathsIn is a value and the file it may name after its components and
// before its weight (known-spectrum 1=pure.csv:100), whichever the message
// quotes; none for an empty value.
func pathsIn(v string) []string {
	if v == "" {
		return nil
	}
	out := []string{v}
	if _, file, ok := strings.Cut(v, "="); ok && file != "" {
		out = append(out, file)
		if i := strings.LastIndex(file, ":"); i > 0 {
			out = append(out, file[:i])
		}
	}
	return out
}

// replaceFlag writes --name as the file's keyword wherever it stands as a
// whole flag (not the start of a longer one, --times in --times-from-name).
func replaceFlag(msg, name, keyword string) string {
	flag := "--" + name
	var b strings.Builder
	for {
		i := strings.Index(msg, flag)
		if i < 0 {
			b.WriteString(msg)
			return b.String()
		}
		end := i + len(flag)
		whole := end == len(msg) || !(msg[end] == '-' || msg[end] >= 'a' && msg[end] <= 'z' || msg[end] >= '0' && msg[end] <= '9')
		b.WriteString(msg[:i])
		if whole {
			b.WriteString(keyword)
		} else {
			b.WriteString(flag)
		}
		msg = msg[end:]
	}
}

// relativePathHint says, for a path the file gives that does not exist
// where the file's paths start but does from the working folder, that
// paths in a command file are read from its own folder, and how to write
// this one: the usual slip of a path copied from a shell.
func relativePathHint(s *pipeline.Settings, name, keyword, value string) string {
	v := strings.TrimSpace(value)
	if !pipeline.IsPath(name, v) || filepath.IsAbs(v) || s.Dir == "" {
		return ""
	}
	if _, err := os.Stat(s.Path(v)); err == nil {
		return ""
	}
	abs, err := filepath.Abs(v)
	if err != nil {
		return ""
	}
	if _, err := os.Stat(abs); err != nil {
		return ""
	}
	base, err := filepath.Abs(s.Dir)
	if err != nil {
		return ""
	}
	rel, err := filepath.Rel(base, abs)
	if err != nil {
		return ""
	}
	return fmt.Sprintf(" (relative paths in a command file start at the folder its paths are read from, %s, not the working folder: write %s %s)", s.Dir, keyword, filepath.ToSlash(rel))
}
