// Package cmdfile reads and writes bandsolve command files: plain text, one
// setting per line, that describe an analysis so it can be read, edited,
// rerun and compared.
//
// # Syntax
//
//	# comment to the end of the line
//	keyword value
//	keyword "value with  leading or trailing spaces, or a # sign"
//	keyword 'literal value, no escapes'
//	switch-keyword            (alone: on; or switch-keyword on|off)
//
// A keyword is a setting's name (the flag without its dashes). The value is
// the rest of the line, trimmed, up to a "#" that follows a space or tab.
// A value may instead be one quoted string: in "double quotes" the only
// escapes are \" and \\ (any other backslash is kept, so Windows paths read
// as written); in 'single quotes' nothing is escaped. Settings that may
// repeat (data, region, exclude) are given once per line; an empty quoted
// value ("") of such a setting stands for none. Every other setting may
// appear once.
//
// The directive "paths-from DIR", before the first setting, names the folder
// relative paths are taken from (itself relative to the file's folder); the
// default is the file's own folder.
//
// # Safety
//
// A command file only describes settings: nothing in it names a program to
// run. Input paths that are URLs (scheme://…) or network shares (\\host or
// //host) are refused, and the output folder must be a relative path that
// stays inside the command file's folder (checked on the text by Parse, and
// with symbolic links resolved by Inside before anything is written).
package cmdfile

import (
	"bytes"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/bandsolve/bandsolve/internal/regular"
)

// PathRule says whether a keyword's value is a path and which way it goes.
type PathRule int

const (
	NotPath   PathRule = iota
	ReadPath           // an input: read, never written
	WritePath          // the output folder: must stay inside the file's folder
)

// Keyword is one setting a command file may hold.
type Keyword struct {
	Name   string
	Multi  bool // may be given on several lines
	Switch bool // may stand alone (meaning on)
	Path   PathRule
	// Words are values of a path keyword that name a choice rather than a
	// file ("first", "purest"); a word ending in ":" matches as a prefix
	// ("mean:" matches "mean:4").
	Words []string
}

// PathsFrom is the directive naming the folder relative paths start from.
const PathsFrom = "paths-from"

// Entry is one setting line.
type Entry struct {
	Key, Value string
	Quoted     bool // the value was written in quotes
	Line, Col  int  // where the keyword starts (1-based, in characters)
	ValueCol   int  // where the value starts; 0 for a switch standing alone
}

// File is a parsed command file.
type File struct {
	Name          string // as given to Parse, for messages
	PathsFrom     string // "" when not given
	PathsFromLine int
	Entries       []Entry
}

// Error is a problem at a place in a command file.
type Error struct {
	File      string
	Line, Col int
	Msg       string
}

// MaxShown is how many characters of a value a message quotes: a
// hostile 1 MB value must not make a 1 MB error line.
const MaxShown = 80

// Clip shortens v to MaxShown characters, marking the cut with "…".
func Clip(v string) string {
	if r := []rune(v); len(r) > MaxShown {
		return string(r[:MaxShown]) + "…"
	}
	return v
}

// Show quotes v for a message, clipped.
func Show(v string) string { return strconv.Quote(Clip(v)) }

// Escape shows s safely on a terminal: every character that is not
// printable (control characters such as ESC and the line end, the line and
// paragraph separators, direction overrides) and every byte that is not
// UTF-8 is written as a Go quoted string writes it (\x1b, \n, \u202e,
// strconv.Quote), the way a data file's cells are quoted in messages. A
// file name can then neither clear the screen nor break a message in two
// and pass off its second half as bandsolve's own line.
func Escape(s string) string { return escape(s, false) }

// EscapeText is Escape for text of several lines, such as a summary table:
// line ends and tabs are kept.
func EscapeText(s string) string { return escape(s, true) }

func escape(s string, lines bool) string {
	shown := func(r rune) bool { return strconv.IsPrint(r) || lines && (r == '\n' || r == '\t') }
	clean := true
	for _, r := range s {
		if r == utf8.RuneError || !shown(r) {
			clean = false
			break
		}
	}
	if clean {
		return s
	}
	var b strings.Builder
	for len(s) > 0 {
		r, n := utf8.DecodeRuneInString(s)
		switch {
		case r == utf8.RuneError && n == 1:
			fmt.Fprintf(&b, "\\x%02x", s[0])
		case !shown(r):
			q := strconv.QuoteRune(r)
			b.WriteString(q[1 : len(q)-1])
		default:
			b.WriteString(s[:n])
		}
		s = s[n:]
	}
	return b.String()
}

// ShortenIn replaces a value longer than MaxShown characters, quoted or
// written as it is in msg, by its clipped form.
func ShortenIn(msg, v string) string { return clipValue(msg, v) }

// clipValue replaces a long value quoted or written in msg by its clipped form.
func clipValue(msg, v string) string {
	if len([]rune(v)) <= MaxShown {
		return msg
	}
	msg = strings.ReplaceAll(msg, strconv.Quote(v), Show(v))
	return strings.ReplaceAll(msg, v, Clip(v))
}

func (e *Error) Error() string {
	switch {
	case e.Line > 0 && e.Col > 0:
		return fmt.Sprintf("%s:%d:%d: %s", e.File, e.Line, e.Col, e.Msg)
	case e.Line > 0:
		return fmt.Sprintf("%s:%d: %s", e.File, e.Line, e.Msg)
	}
	return fmt.Sprintf("%s: %s", e.File, e.Msg)
}

// MaxBytes bounds a command file; real ones are a few hundred bytes.
const MaxBytes = 1 << 20

// ReadFile reads and parses the command file at path.
func ReadFile(path string, keys []Keyword) (*File, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, cannotRead(path, err)
	}
	if !st.Mode().IsRegular() {
		return nil, &Error{File: path, Msg: "is not a regular file; give a command file (plain text, one setting per line)"}
	}
	if st.Size() > MaxBytes {
		return nil, &Error{File: path, Msg: fmt.Sprintf("is %d bytes; a command file is small plain text (at most %d bytes)", st.Size(), MaxBytes)}
	}
	src, err := regular.ReadFile(path, MaxBytes)
	var big *regular.TooLargeError
	switch {
	case errors.As(err, &big):
		return nil, &Error{File: path, Msg: fmt.Sprintf("is at least %d bytes; a command file is small plain text (at most %d bytes)", big.Size, MaxBytes)}
	case errors.As(err, new(*regular.NotRegularError)):
		return nil, &Error{File: path, Msg: "is not a regular file; give a command file (plain text, one setting per line)"}
	case err != nil:
		return nil, cannotRead(path, err)
	}
	return Parse(path, src, keys)
}

// cannotRead says in one line that the command file at path could not be
// read and why, without the system call's name (stat, open) that os puts in.
// It is not an *Error: the fault is the disk's or the path's, not a setting's,
// so the exit status stays that of a file that cannot be read, as for --data.
func cannotRead(path string, err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		err = pe.Err
	}
	return fmt.Errorf("%s: cannot read: %v; check the command file's path", path, err)
}

// Parse reads a command file's text. name is used in messages.
func Parse(name string, src []byte, keys []Keyword) (*File, error) {
	if err := checkPlainText(name, src); err != nil {
		return nil, err
	}
	src = bytes.TrimPrefix(src, []byte("\ufeff"))
	p := newParser(name, keys)
	for i, raw := range strings.Split(string(src), "\n") {
		if err := p.line(i+1, strings.TrimSuffix(raw, "\r")); err != nil {
			return nil, err
		}
	}
	return p.f, nil
}

// checkPlainText refuses a file too large or not UTF-8 before any line is
// read: such a file is not a command file, whatever its lines say.
func checkPlainText(name string, src []byte) error {
	if len(src) > MaxBytes {
		return &Error{File: name, Msg: fmt.Sprintf("is %d bytes; a command file is small plain text (at most %d bytes)", len(src), MaxBytes)}
	}
	if !utf8.Valid(src) {
		line := 1 + bytes.Count(src[:firstInvalid(src)], []byte{'\n'})
		return &Error{File: name, Line: line, Msg: "is not UTF-8 text; save the command file as UTF-8 plain text"}
	}
	return nil
}

// parser reads a command file a line at a time into f; seen holds the
// line each setting was first given on, for the message about a repeat.
type parser struct {
	name   string
	keys   []Keyword
	byName map[string]Keyword
	f      *File
	seen   map[string]int
}

func newParser(name string, keys []Keyword) *parser {
	byName := make(map[string]Keyword, len(keys))
	for _, k := range keys {
		byName[k.Name] = k
	}
	return &parser{name: name, keys: keys, byName: byName, f: &File{Name: name}, seen: map[string]int{}}
}

// statement is one line's keyword and value with their 1-based columns
// (vcol 0 for a switch given without a value) and the line's number.
type statement struct {
	key    string
	kcol   int
	value  string
	quoted bool
	vcol   int
	ln     int
}

// line reads line ln: blank lines and comments are skipped, paths-from is
// the directive, anything else a setting.
func (p *parser) line(ln int, text string) error {
	if c, col := badChar(text); c >= 0 {
		return &Error{File: p.name, Line: ln, Col: col, Msg: fmt.Sprintf("control character %U; a command file holds plain text only", c)}
	}
	l := []rune(text)
	start := skipSpace(l, 0)
	if start == len(l) || l[start] == '#' {
		return nil
	}
	st, err := p.statement(ln, l, start)
	if err != nil {
		return err
	}
	if st.key == PathsFrom {
		return p.pathsFrom(st)
	}
	return p.setting(st)
}

// statement reads the keyword that starts at column start+1 of l, checks
// it is one the file may hold, and reads its value.
func (p *parser) statement(ln int, l []rune, start int) (statement, error) {
	end := start
	for end < len(l) && !isSpace(l[end]) && !(l[end] == '#' && end > start && isSpace(l[end-1])) {
		end++
	}
	st := statement{key: string(l[start:end]), kcol: start + 1, ln: ln}
	if err := checkKeyword(p.name, ln, st.kcol, st.key, p.byName, p.keys); err != nil {
		return st, err
	}
	vstart := skipSpace(l, end)
	var err error
	if st.value, st.quoted, err = parseValue(p.name, ln, l, vstart); err != nil {
		return st, err
	}
	st.vcol = vstart + 1
	return st, nil
}

// hasValue tells whether the line gives a value: a quoted ” is one.
func (st statement) hasValue() bool { return st.quoted || st.value != "" }

// pathsFrom takes the directive: once, before the first setting so that
// every path reads the same way, and naming a local folder.
func (p *parser) pathsFrom(st statement) error {
	if p.f.PathsFromLine > 0 {
		return &Error{File: p.name, Line: st.ln, Col: st.kcol, Msg: fmt.Sprintf("%s given twice (first on line %d)", PathsFrom, p.f.PathsFromLine)}
	}
	if len(p.f.Entries) > 0 {
		return &Error{File: p.name, Line: st.ln, Col: st.kcol, Msg: fmt.Sprintf("%s must come before the first setting (line %d), so every path reads the same way", PathsFrom, p.f.Entries[0].Line)}
	}
	if !st.hasValue() || st.value == "" {
		return &Error{File: p.name, Line: st.ln, Col: st.kcol, Msg: PathsFrom + " needs a folder, e.g. paths-from ../data"}
	}
	if err := checkRead(p.name, st.ln, st.vcol, st.value); err != nil {
		return err
	}
	p.f.PathsFrom, p.f.PathsFromLine = st.value, st.ln
	return nil
}

// setting takes one setting: a bare switch means on, only keywords that
// may repeat are given twice, and a path is checked where it is given.
func (p *parser) setting(st statement) error {
	k := p.byName[st.key]
	if !st.hasValue() {
		if !k.Switch {
			return &Error{File: p.name, Line: st.ln, Col: st.kcol, Msg: fmt.Sprintf("%s needs a value, e.g. %s", st.key, example(k))}
		}
		st.value, st.vcol = "on", 0
	}
	if prev, dup := p.seen[st.key]; dup && !k.Multi {
		return &Error{File: p.name, Line: st.ln, Col: st.kcol, Msg: fmt.Sprintf("%s is set twice (first on line %d); only %s may repeat", st.key, prev, p.repeatable())}
	}
	p.seen[st.key] = st.ln
	if err := p.checkPath(k, st); err != nil {
		return err
	}
	p.f.Entries = append(p.f.Entries, Entry{Key: st.key, Value: st.value, Quoted: st.quoted, Line: st.ln, Col: st.kcol, ValueCol: st.vcol})
	return nil
}

// repeatable names the keywords that may be given on several lines, from
// the vocabulary itself, so the message stays true as options are added.
func (p *parser) repeatable() string {
	var names []string
	for _, k := range p.keys {
		if k.Multi {
			names = append(names, k.Name)
		}
	}
	switch len(names) {
	case 0:
		return "no keyword"
	case 1:
		return names[0]
	}
	return strings.Join(names[:len(names)-1], ", ") + " and " + names[len(names)-1]
}

// checkPath checks a path setting's value, unless it is one of the
// keyword's words: inputs must be local, the output folder inside the
// file's folder.
func (p *parser) checkPath(k Keyword, st statement) error {
	if st.value == "" || k.Path == NotPath || isWord(k, st.value) {
		return nil
	}
	switch k.Path {
	case ReadPath:
		return checkRead(p.name, st.ln, st.vcol, st.value)
	case WritePath:
		return checkWrite(p.name, st.ln, st.vcol, p.f.PathsFrom, p.f.PathsFromLine, st.value)
	}
	return nil
}

func firstInvalid(b []byte) int {
	for i := 0; i < len(b); {
		r, n := utf8.DecodeRune(b[i:])
		if r == utf8.RuneError && n <= 1 {
			return i
		}
		i += n
	}
	return len(b)
}

// badChar finds a control character other than tab (1-based column).
func badChar(s string) (rune, int) {
	col := 0
	for _, r := range s {
		col++
		if r != '\t' && (unicode.IsControl(r) || r == '\u2028' || r == '\u2029') {
			return r, col
		}
	}
	return -1, 0
}

func isSpace(r rune) bool { return r == ' ' || r == '\t' }

func skipSpace(l []rune, p int) int {
	for p < len(l) && isSpace(l[p]) {
		p++
	}
	return p
}

func checkKeyword(name string, ln, col int, key string, byName map[string]Keyword, keys []Keyword) error {
	if key == PathsFrom {
		return nil
	}
	if _, ok := byName[key]; ok {
		return nil
	}
	msg := fmt.Sprintf("unknown keyword %s", Show(key))
	switch {
	case strings.HasPrefix(key, "-"):
		bare := strings.TrimLeft(key, "-")
		if k, v, ok := strings.Cut(bare, "="); ok {
			bare = k + " " + v
		}
		return &Error{File: name, Line: ln, Col: col, Msg: msg + fmt.Sprintf("; write keywords without dashes, e.g. %s", Show(bare))}
	case strings.Contains(key, "="):
		k, v, _ := strings.Cut(key, "=")
		if _, ok := byName[k]; ok {
			return &Error{File: name, Line: ln, Col: col, Msg: msg + fmt.Sprintf("; separate keyword and value by a space: %s", Show(k+" "+v))}
		}
		key = k
	}
	if s := Nearest(key, keys); s != "" {
		msg += fmt.Sprintf(" (did you mean %q?)", s)
	} else {
		msg += "; see docs/command-files.md for the keywords"
	}
	return &Error{File: name, Line: ln, Col: col, Msg: msg}
}

// parseValue reads the value starting at p: one quoted string, or the rest
// of the line up to a comment.
func parseValue(name string, ln int, l []rune, p int) (string, bool, error) {
	if p >= len(l) {
		return "", false, nil
	}
	switch q := l[p]; q {
	case '"', '\'':
		var b strings.Builder
		i := p + 1
		for ; i < len(l); i++ {
			r := l[i]
			if r == q {
				break
			}
			if q == '"' && r == '\\' && i+1 < len(l) && (l[i+1] == '"' || l[i+1] == '\\') {
				i++
				r = l[i]
			}
			b.WriteRune(r)
		}
		if i >= len(l) {
			return "", false, &Error{File: name, Line: ln, Col: p + 1, Msg: fmt.Sprintf("quote %c is not closed on this line", q)}
		}
		rest := skipSpace(l, i+1)
		if rest < len(l) && l[rest] != '#' {
			return "", false, &Error{File: name, Line: ln, Col: rest + 1, Msg: "text after the quoted value; quote the whole value, or start a comment with #"}
		}
		if rest < len(l) && rest == i+1 {
			return "", false, &Error{File: name, Line: ln, Col: rest + 1, Msg: "put a space before the # of a comment"}
		}
		return b.String(), true, nil
	}
	end := len(l)
	for i := p; i < len(l); i++ {
		if l[i] == '#' && isSpace(l[i-1]) {
			end = i
			break
		}
	}
	for end > p && isSpace(l[end-1]) {
		end--
	}
	return string(l[p:end]), false, nil
}

func example(k Keyword) string {
	switch {
	case k.Path == WritePath:
		return k.Name + " results"
	case k.Path == ReadPath:
		return k.Name + " spectra.csv"
	case len(k.Words) > 0:
		return k.Name + " " + k.Words[0]
	}
	return k.Name + " VALUE"
}

func isWord(k Keyword, v string) bool {
	for _, w := range k.Words {
		if v == w || (strings.HasSuffix(w, ":") && strings.HasPrefix(v, w)) {
			return true
		}
	}
	return false
}

// remote says whether a path names something on a network.
func remote(v string) bool {
	if strings.HasPrefix(v, `\\`) || strings.HasPrefix(v, "//") {
		return true
	}
	if i := strings.Index(v, "://"); i > 0 {
		return true
	}
	// A scheme followed by ":" alone (mailto:, ftp:host) is not a path on
	// any system this runs on, except a Windows drive letter ("C:").
	if i := strings.IndexByte(v, ':'); i > 1 {
		scheme := v[:i]
		ok := true
		for j, r := range scheme {
			if !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || j > 0 && (r >= '0' && r <= '9' || r == '+' || r == '.' || r == '-')) {
				ok = false
				break
			}
		}
		if ok && (strings.EqualFold(scheme, "http") || strings.EqualFold(scheme, "https") || strings.EqualFold(scheme, "ftp") || strings.EqualFold(scheme, "file") || strings.EqualFold(scheme, "smb")) {
			return true
		}
	}
	return false
}

func checkRead(name string, ln, col int, v string) error {
	if remote(v) {
		return &Error{File: name, Line: ln, Col: col, Msg: fmt.Sprintf("%s is a network address; a command file reads local files only: copy the file next to the command file", Show(v))}
	}
	return nil
}

func checkWrite(name string, ln, col int, pathsFrom string, pathsFromLine int, v string) error {
	if remote(v) {
		return &Error{File: name, Line: ln, Col: col, Msg: fmt.Sprintf("%s is a network address; results go to a folder inside the command file's folder", Show(v))}
	}
	if filepath.IsAbs(v) || filepath.VolumeName(v) != "" || strings.HasPrefix(v, "/") || strings.HasPrefix(v, `\`) {
		return &Error{File: name, Line: ln, Col: col, Msg: fmt.Sprintf("out %s is absolute; in a command file the output folder is relative and inside the file's folder (give --out on the command line to write elsewhere)", Show(v))}
	}
	rel := filepath.Clean(filepath.Join(filepath.FromSlash(pathsFrom), filepath.FromSlash(v)))
	if pathsFrom != "" && filepath.IsAbs(filepath.FromSlash(pathsFrom)) {
		return &Error{File: name, Line: ln, Col: col, Msg: fmt.Sprintf("out %s would be taken from the absolute %s %s, outside the file's folder; give --out on the command line instead", Show(v), PathsFrom, Show(pathsFrom))}
	}
	if rel == "." || rel == ".." || strings.HasPrefix(rel, ".."+string(filepath.Separator)) {
		if pathsFrom != "" {
			// The path checked is not the one written: say which it is
			// and where it comes from.
			return &Error{File: name, Line: ln, Col: col, Msg: fmt.Sprintf("out %s, read from %s %s (line %d) as %s, leaves the command file's folder; name a folder inside it as seen from there, e.g. out %s (or give --out on the command line)",
				Show(v), PathsFrom, Show(pathsFrom), pathsFromLine, Show(filepath.ToSlash(rel)), backTo(name, pathsFrom)+"results")}
		}
		return &Error{File: name, Line: ln, Col: col, Msg: fmt.Sprintf("out %s leaves the command file's folder; name a folder inside it, e.g. out results (or give --out on the command line)", Show(v))}
	}
	return nil
}

// backTo is the command file's folder as seen from its paths-from folder,
// with a trailing slash ("../runs/" for paths-from ../data in runs/);
// "" when there is no such relative path.
func backTo(name, pathsFrom string) string {
	dir, err := filepath.Abs(filepath.Dir(name))
	if err != nil {
		return ""
	}
	rel, err := filepath.Rel(filepath.Join(dir, filepath.FromSlash(pathsFrom)), dir)
	if err != nil || rel == "." {
		return ""
	}
	return filepath.ToSlash(rel) + "/"
}

// Dir is the folder the file's relative paths are taken from, given the
// folder the file itself lies in.
func (f *File) Dir(fileDir string) string {
	if f.PathsFrom == "" {
		return fileDir
	}
	p := filepath.FromSlash(f.PathsFrom)
	if filepath.IsAbs(p) {
		return p
	}
	return filepath.Join(fileDir, p)
}

// Apply hands every setting to set in file order, and puts the line and
// column of its value on any error set returns.
func (f *File) Apply(set func(e Entry) error) error {
	for _, e := range f.Entries {
		if err := set(e); err != nil {
			col := e.ValueCol
			if col == 0 {
				col = e.Col
			}
			return &Error{File: f.Name, Line: e.Line, Col: col, Msg: clipValue(err.Error(), e.Value)}
		}
	}
	return nil
}

// Inside checks, with symbolic links resolved, that target lies inside dir
// (strictly: not dir itself). Parts of target that do not exist yet are
// taken as written.
func Inside(dir, target string) error {
	d, err := resolve(dir)
	if err != nil {
		return err
	}
	t, err := resolve(target)
	if err != nil {
		return err
	}
	rel, err := filepath.Rel(d, t)
	if err != nil || rel == "." || rel == ".." || strings.HasPrefix(rel, ".."+string(filepath.Separator)) || filepath.IsAbs(rel) {
		return fmt.Errorf("output folder %s is not inside the command file's folder %s (a link may point outside it); give --out on the command line to write elsewhere", target, dir)
	}
	return nil
}

// resolve makes p absolute and resolves the links of its longest existing
// prefix.
func resolve(p string) (string, error) {
	abs, err := filepath.Abs(p)
	if err != nil {
		return "", err
	}
	rest := ""
	cur := abs
	for {
		if r, err := filepath.EvalSymlinks(cur); err == nil {
			return filepath.Join(r, rest), nil
		}
		parent := filepath.Dir(cur)
		if parent == cur {
			return abs, nil
		}
		rest = filepath.Join(filepath.Base(cur), rest)
		cur = parent
	}
}

// Nearest returns the keyword closest to a misspelt one, "" if none is close.
func Nearest(word string, keys []Keyword) string {
	if len(word) > MaxShown {
		// No keyword is near a word this long, and the edit distance
		// costs its length times each keyword's.
		return ""
	}
	w := strings.ToLower(strings.ReplaceAll(word, "_", "-"))
	best, bestD := "", 1<<30
	cands := append([]string{PathsFrom}, names(keys)...)
	for _, c := range cands {
		d := Distance(w, c)
		if strings.HasPrefix(c, w) && len(w) >= 3 {
			d = min(d, 1)
		}
		if d < bestD {
			best, bestD = c, d
		}
	}
	limit := max(2, len([]rune(w))/3)
	if bestD > limit {
		return ""
	}
	return best
}

func names(keys []Keyword) []string {
	out := make([]string, len(keys))
	for i, k := range keys {
		out[i] = k.Name
	}
	return out
}

// Distance is the Levenshtein edit distance (Levenshtein 1966) with
// transpositions of adjacent letters counted as one edit (Damerau 1964),
// since swapped letters are the commonest typing slip.
func Distance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	d := make([][]int, len(ra)+1)
	for i := range d {
		d[i] = make([]int, len(rb)+1)
		d[i][0] = i
	}
	for j := range d[0] {
		d[0][j] = j
	}
	for i := 1; i <= len(ra); i++ {
		for j := 1; j <= len(rb); j++ {
			c := 1
			if ra[i-1] == rb[j-1] {
				c = 0
			}
			d[i][j] = min(d[i-1][j]+1, d[i][j-1]+1, d[i-1][j-1]+c)
			if i > 1 && j > 1 && ra[i-1] == rb[j-2] && ra[i-2] == rb[j-1] {
				d[i][j] = min(d[i][j], d[i-2][j-2]+1)
			}
		}
	}
	return d[len(ra)][len(rb)]
}
