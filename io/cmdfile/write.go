package cmdfile

import (
	"bytes"
	"fmt"
	"strings"
	"unicode"
)

// Quote returns v as Parse reads it back exactly: bare when it can be, in
// single quotes when it must be quoted and holds no single quote, else in
// double quotes with \" and \\ escaped. Line breaks and other control
// characters cannot be written in a command file.
func Quote(v string) (string, error) {
	for _, r := range v {
		if r != '\t' && (unicode.IsControl(r) || r == '\u2028' || r == '\u2029') {
			return "", fmt.Errorf("value %q holds a control character (%U), which a command file cannot hold", v, r)
		}
	}
	if !needsQuotes(v) {
		return v, nil
	}
	if !strings.Contains(v, "'") {
		return "'" + v + "'", nil
	}
	r := strings.NewReplacer(`\`, `\\`, `"`, `\"`)
	return `"` + r.Replace(v) + `"`, nil
}

func needsQuotes(v string) bool {
	if v == "" || v != strings.Trim(v, " \t") {
		return true
	}
	switch v[0] {
	case '"', '\'', '#':
		return true
	}
	return strings.Contains(v, " #") || strings.Contains(v, "\t#")
}

// Writer builds a command file with aligned keywords.
type Writer struct {
	buf bytes.Buffer
	// Width is the column values start in (keywords are padded to it).
	Width int
}

// Comment writes each line as a "# " comment.
func (w *Writer) Comment(lines ...string) {
	for _, l := range lines {
		for _, part := range strings.Split(l, "\n") {
			if part == "" {
				w.buf.WriteString("#\n")
				continue
			}
			w.buf.WriteString("# ")
			w.buf.WriteString(strings.TrimRight(part, " \t"))
			w.buf.WriteByte('\n')
		}
	}
}

// Blank writes an empty line.
func (w *Writer) Blank() { w.buf.WriteByte('\n') }

// Set writes one setting, with an optional trailing note (a comment).
func (w *Writer) Set(key, value, note string) error {
	q, err := Quote(value)
	if err != nil {
		return fmt.Errorf("%s: %w", key, err)
	}
	line := key
	if pad := w.Width - len([]rune(key)); pad > 0 {
		line += strings.Repeat(" ", pad)
	} else {
		line += " "
	}
	line += q
	if note != "" {
		line += "  # " + strings.ReplaceAll(note, "\n", " ")
	}
	w.buf.WriteString(strings.TrimRight(line, " "))
	w.buf.WriteByte('\n')
	return nil
}

// Bytes returns the text written so far.
func (w *Writer) Bytes() []byte { return append([]byte(nil), w.buf.Bytes()...) }

// Format writes f back as text that Parse reads to the same settings.
func Format(f *File) ([]byte, error) {
	w := &Writer{Width: 16}
	if f.PathsFrom != "" {
		if err := w.Set(PathsFrom, f.PathsFrom, ""); err != nil {
			return nil, err
		}
	}
	for _, e := range f.Entries {
		if err := w.Set(e.Key, e.Value, ""); err != nil {
			return nil, err
		}
	}
	return w.Bytes(), nil
}
