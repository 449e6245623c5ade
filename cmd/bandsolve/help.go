package main

import (
	"fmt"
	"io"
	"strings"
	"unicode/utf8"

	"github.com/spf13/pflag"
)

// Help layout, one for every command: the flag and its value from column 3,
// the description from descColumn, every line at most helpWidth runes (a
// terminal of 100 columns; runes, not bytes, so '…' and 'σ' count as one).
const (
	helpWidth  = 100
	descColumn = 34
)

// printFlags lists fs's visible flags. A switch is shown bare (--force); a
// flag with a value shows its placeholder (--out DIR) and, when the
// description does not say it already, its default.
func printFlags(w io.Writer, fs *pflag.FlagSet) {
	fs.VisitAll(func(f *pflag.Flag) {
		if f.Hidden {
			return
		}
		value, usage := pflag.UnquoteUsage(f)
		left := "      --" + f.Name
		if f.Shorthand != "" {
			left = "  -" + f.Shorthand + ", --" + f.Name
		}
		if value != "" {
			left += " " + value
		}
		if d := f.DefValue; value != "" && d != "" && !strings.Contains(usage, "(default") {
			usage += " (default " + d + ")"
		}
		writeWrapped(w, left, usage)
	})
}

// writeWrapped writes left, then text from descColumn, wrapped at word
// boundaries to helpWidth; continuation lines start at descColumn too.
func writeWrapped(w io.Writer, left, text string) {
	pad := strings.Repeat(" ", descColumn)
	line := left
	if utf8.RuneCountInString(left) > descColumn-2 {
		fmt.Fprintln(w, left)
		line = pad
	} else {
		line += strings.Repeat(" ", descColumn-utf8.RuneCountInString(left))
	}
	empty := true
	for _, word := range strings.Fields(text) {
		if !empty && utf8.RuneCountInString(line)+1+utf8.RuneCountInString(word) > helpWidth {
			fmt.Fprintln(w, line)
			line, empty = pad, true
		}
		if !empty {
			line += " "
		}
		line += word
		empty = false
	}
	fmt.Fprintln(w, line)
}
