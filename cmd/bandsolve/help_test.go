package main

import (
	"strings"
	"testing"
	"unicode/utf8"
)

// Every command's --help fits a 100-column terminal (width in runes: '…'
// and 'σ' are one column each, common practice for terminals), lists its
// flags in one layout (description from column descColumn+1), shows switches
// bare and values by a placeholder, and "bandsolve help X" prints the same.
func TestHelpLayout(t *testing.T) {
	texts := map[string]string{"bandsolve help": run("help").stdout}
	for _, c := range commands {
		r := run(c.name, "--help")
		if r.code != exitOK {
			t.Fatalf("%s --help: exit %d: %s", c.name, r.code, r.stderr)
		}
		texts[c.name] = r.stdout
		if h := run("help", c.name); h.stdout != r.stdout {
			t.Errorf("'bandsolve help %s' differs from '%s --help'", c.name, c.name)
		}
		if !strings.Contains(r.stdout, "Flags:\n") || !strings.Contains(r.stdout, "bandsolve "+c.name) {
			t.Errorf("%s --help has no usage line or flag list", c.name)
		}
	}
	for name, text := range texts {
		flags := false
		for i, l := range strings.Split(text, "\n") {
			if n := utf8.RuneCountInString(l); n > helpWidth {
				t.Errorf("%s, line %d: %d columns > %d: %q", name, i+1, n, helpWidth, l)
			}
			for _, bad := range []string{"[=true|false]", "[=on]", " string ", "Sigma", "PreRows", "MaxRank"} {
				if strings.Contains(l, bad) {
					t.Errorf("%s, line %d: %q shows %q", name, i+1, l, bad)
				}
			}
			if l == "Flags:" {
				flags = true
				continue
			}
			if !flags || l == "" {
				continue
			}
			// A flag line: the flag from column 3 or 7, then either nothing
			// (description on the next line) or the description at descColumn.
			// A continuation line is blank up to descColumn.
			r := []rune(l)
			switch {
			case strings.HasPrefix(l, "      --") || strings.HasPrefix(l, "  -"):
				if len(r) > descColumn && (r[descColumn-1] != ' ' || r[descColumn] == ' ') && r[descColumn-2] != ' ' {
					continue // a long flag alone on its line
				}
				if len(r) > descColumn && (r[descColumn-1] != ' ' || r[descColumn] == ' ') {
					t.Errorf("%s, line %d: description not at column %d: %q", name, i+1, descColumn+1, l)
				}
			case strings.TrimSpace(string(r[:min(len(r), descColumn)])) != "" || len(r) <= descColumn || r[descColumn] == ' ':
				t.Errorf("%s, line %d: not a flag line nor a continuation at column %d: %q", name, i+1, descColumn+1, l)
			}
		}
	}
}

// --time-unit converts the table's times, not the warnings, advice and
// notes: they are summary.json's text, written once in seconds with the
// unit beside each number, and their spectrum times are what --drop takes
// (seconds). The behaviour is defined by TestTimeUnitOnTheTerminal
// (io/pipeline); the help must say it, as the README does.
func TestTimeUnitHelpSaysTextStaysInSeconds(t *testing.T) {
	for _, cmd := range []string{"resolve", "run"} {
		help := strings.Join(strings.Fields(run(cmd, "--help").stdout), " ")
		i := strings.Index(help, "Flags:")
		if j := strings.Index(help[max(i, 0):], "--time-unit"); i < 0 || j < 0 {
			i = -1
		} else {
			i += j
		}
		if i < 0 {
			t.Fatalf("%s --help has no --time-unit", cmd)
		}
		entry := help[i:min(len(help), i+400)]
		if !strings.Contains(entry, "warnings, advice and notes stay in seconds") {
			t.Errorf("%s --help: --time-unit does not say the warnings, advice and notes stay in seconds: %q", cmd, entry)
		}
	}
}
