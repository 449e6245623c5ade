package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/demo"
)

// The worked examples of the docs run as written: every `bandsolve`
// command in a code block of README.md and docs/*.md, and in the examples
// of every command's --help, runs in a temporary
// folder holding the files the examples name (exampleInputs), and must exit
// 0. The command files a document shows (a block starting "# NAME.bsr") are
// written there as shown. A block of commands runs in order in one folder;
// a block that only reads results (verify, report, collect) continues in
// the folder of the block before it. Where a document shows what a command
// prints (a fenced block after "prints"), every line shown must be a line
// of the real output, so quoted numbers cannot drift from the program.
func TestDocsExamplesRun(t *testing.T) {
	files, _ := filepath.Glob(filepath.Join("..", "..", "docs", "*.md"))
	files = append(files, filepath.Join("..", "..", "README.md"))
	type source struct{ name, text string }
	var sources []source
	for _, f := range files {
		b, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		sources = append(sources, source{filepath.Base(f), string(b)})
	}
	// Every command's --help teaches with examples too (indented by two).
	for _, c := range commands {
		sources = append(sources, source{c.name + " --help", helpAsMarkdown(run(c.name, "--help").stdout)})
	}
	// The Slurm example of docs/campaigns.md reads its share from the
	// environment, as a job array's task does (TestSlurmArrayExample runs
	// all four).
	t.Setenv("SLURM_ARRAY_TASK_ID", "1")
	inputs := t.TempDir()
	exampleInputs(t, inputs)
	ran, checked := map[string]int{}, 0
	done := map[string]bool{} // a block shown twice (docs and help) runs once
	demos := map[string]string{}
	for _, src := range sources {
		doc := docBlocks(src.text)
		dir, lastRun, prev := "", "", ""
		for _, blk := range doc.blocks {
			key := prev + blk.key(doc)
			if !blk.continues() {
				key = blk.key(doc)
			}
			prev = key
			for _, ex := range blk.cmds {
				ran[strings.Fields(ex.command)[1]]++
			}
			if done[key] {
				dir = ""
				continue
			}
			done[key] = true
			fresh := dir == "" || !blk.continues()
			for i, ex := range blk.cmds {
				if i > 0 || !fresh {
					checked += runExample(t, src.name, dir, ex)
					lastRun = dir
					continue
				}
				// A fresh folder: the inputs, then the document's command
				// files. The demo reads no input and writes the same bytes
				// every time (its folder passes verify: docs/reproducibility.md's
				// example), so a demo command met before is replaced by a
				// copy of the folder it left, taken before any command file.
				dir = t.TempDir()
				cmd := trailingComment.ReplaceAllString(ex.command, "")
				isDemo := strings.HasPrefix(cmd, "bandsolve demo")
				switch {
				case isDemo && demos[cmd] != "":
					copyTree(t, demos[cmd], dir)
				case isDemo:
					copyTree(t, inputs, dir)
					checked += runExample(t, src.name, dir, ex)
					demos[cmd] = t.TempDir()
					copyTree(t, dir, demos[cmd])
				}
				if !isDemo {
					copyTree(t, inputs, dir)
				}
				for n, text := range doc.files {
					writeText(t, filepath.Join(dir, n), text)
				}
				if !isDemo {
					checked += runExample(t, src.name, dir, ex)
				}
				lastRun = dir
			}
		}
		checked += checkQuotedSummary(t, src.name, src.text, lastRun)
	}
	if checked < 5 {
		t.Errorf("%d printed lines checked, want docs/kinetics.md's 5 at least", checked)
	}
	// The docs show each command at least once; fewer found means the
	// parser lost them, not that they all pass.
	for _, c := range []string{"resolve", "run", "verify", "collect", "report", "demo"} {
		if ran[c] == 0 {
			t.Errorf("no worked example of 'bandsolve %s' found in the docs (ran %v)", c, ran)
		}
	}
}

// helpAsMarkdown indents a help text's examples (two spaces in help) as a
// Markdown code block (four), so docBlocks reads both alike.
func helpAsMarkdown(help string) string {
	lines := strings.Split(help, "\n")
	for i, l := range lines {
		if strings.HasPrefix(l, "  ") && !strings.HasPrefix(l, "   ") {
			lines[i] = "  " + l
		}
	}
	return strings.Join(lines, "\n")
}

// runExample runs one documented command in dir and checks what the docs
// say it prints.
func runExample(t *testing.T, doc, dir string, ex docExample) (checked int) {
	t.Helper()
	t.Chdir(dir)
	args, stdout, err := shellLine(ex.command)
	if err != nil {
		t.Errorf("%s: %q: %v", doc, ex.command, err)
		return 0
	}
	r := run(args[1:]...)
	if r.code != 0 || r.panicked != nil {
		t.Errorf("%s: %q: exit %d: %s%v", doc, ex.command, r.code, r.stderr, r.panicked)
		return 0
	}
	if stdout != "" {
		writeText(t, filepath.Join(dir, stdout), r.stdout)
	}
	got := map[string]bool{}
	for _, l := range strings.Split(r.stdout, "\n") {
		got[l] = true
	}
	for _, want := range ex.prints {
		if !got[want] {
			t.Errorf("%s: %q prints no line\n%s\nit printed:\n%s", doc, ex.command, want, r.stdout)
		}
	}
	return len(ex.prints)
}

// A fenced block of summary.json keys (its first line starts with a quoted
// key, after prose naming summary.json) quotes numbers of the documented
// run: each decimal number in it must be one a summary.json of that run's
// folder holds, written the same way. It returns how many were checked.
func checkQuotedSummary(t *testing.T, doc, md, dir string) int {
	t.Helper()
	lines := strings.Split(md, "\n")
	number := regexp.MustCompile(`-?\d+\.\d+(e-?\d+)?`)
	checked := 0
	for i := 1; i < len(lines); i++ {
		if !strings.HasPrefix(lines[i-1], "```") || !strings.HasPrefix(lines[i], `"`) || !strings.Contains(strings.Join(lines[max(0, i-4):i], " "), "summary.json") {
			continue
		}
		sums, _ := filepath.Glob(filepath.Join(dir, "*", "summary.json"))
		if dir == "" || len(sums) == 0 {
			t.Errorf("%s: a summary.json example at line %d, but no documented run wrote one", doc, i+1)
			return checked
		}
		var all strings.Builder
		for _, f := range sums {
			b, _ := os.ReadFile(f)
			all.Write(b)
		}
		for k := i; k < len(lines) && !strings.HasPrefix(lines[k], "```"); k++ {
			for _, n := range number.FindAllString(lines[k], -1) {
				checked++
				if !regexp.MustCompile(`[^\d.]` + regexp.QuoteMeta(n) + `[^\d.e]`).MatchString(all.String()) {
					t.Errorf("%s:%d quotes %s, which no summary.json of the documented run holds", doc, k+1, n)
				}
			}
		}
	}
	return checked
}

// exampleInputs writes the files the docs' examples read, all made from
// the demo's invented series (101 single beams, 1000–1900 cm⁻¹, one every
// 30 s): series.csv and blank.csv as the demo writes them, the blank again
// as "blank beam.csv"; the spectra as a folder scans/ of one file each
// named by its time in minutes (scan_0.5.csv) with times.csv giving the
// same times in seconds; and runs/r0.bsr … r3.bsr, a small campaign on
// small.csv (every other spectrum: quick; the first two precede t0 = 60 s).
func exampleInputs(t *testing.T, dir string) {
	t.Helper()
	truth := demo.Make(1)
	for name, b := range truth.Files() {
		writeText(t, filepath.Join(dir, name), string(b))
	}
	writeText(t, filepath.Join(dir, "blank beam.csv"), string(truth.Files()["blank.csv"]))
	rows := csvRows(t, truth.Files()["series.csv"])
	times := "file,time_s\n"
	var small strings.Builder
	for _, r := range rows {
		var keep []string
		for j, v := range r {
			if j == 0 || j%2 == 1 {
				keep = append(keep, v)
			}
		}
		small.WriteString(strings.Join(keep, ",") + "\n")
	}
	writeText(t, filepath.Join(dir, "small.csv"), small.String())
	for j := 1; j < len(rows[0]); j++ {
		sec, err := strconv.ParseFloat(rows[0][j], 64)
		if err != nil {
			t.Fatalf("demo series.csv header %q: %v", rows[0][j], err)
		}
		name := "scan_" + strconv.FormatFloat(sec/60, 'g', -1, 64) + ".csv"
		var b strings.Builder
		b.WriteString(rows[0][0] + ",single beam\n")
		for _, r := range rows[1:] {
			b.WriteString(r[0] + "," + r[j] + "\n")
		}
		writeText(t, filepath.Join(dir, "scans", name), b.String())
		times += name + "," + rows[0][j] + "\n"
	}
	writeText(t, filepath.Join(dir, "times.csv"), times)
	// A vapour spectrum for --vapour: invented narrow lines on the demo's
	// axis (5 cm⁻¹ wide at half height), a stand-in, not water's.
	var vap strings.Builder
	for _, r := range rows[1:] {
		x, err := strconv.ParseFloat(r[0], 64)
		if err != nil {
			t.Fatal(err)
		}
		v := 0.0
		for l := 0; l < 30; l++ {
			c := 1400 + 13.7*float64(l)
			v += 0.01 * float64(1+l%3) * math.Exp(-4*math.Ln2*(x-c)*(x-c)/25)
		}
		vap.WriteString(r[0] + "," + strconv.FormatFloat(v, 'g', 8, 64) + "\n")
	}
	writeText(t, filepath.Join(dir, "vapour.csv"), vap.String())
	for i := 0; i < 4; i++ {
		writeText(t, filepath.Join(dir, "runs", fmt.Sprintf("r%d.bsr", i)),
			"paths-from ..\ndata small.csv\nblank blank.csv\nkind single-beam\npre 2\nreport off\nuniqueness off\nchecks off\ncomponents "+strconv.Itoa(2+i%2)+"\n")
	}
}

// csvRows splits a comma-separated file, leaving out # comment lines.
func csvRows(t *testing.T, b []byte) [][]string {
	t.Helper()
	var rows [][]string
	for _, l := range strings.Split(strings.TrimSpace(string(b)), "\n") {
		if l = strings.TrimSpace(l); l != "" && !strings.HasPrefix(l, "#") {
			rows = append(rows, strings.Split(l, ","))
		}
	}
	if len(rows) < 2 {
		t.Fatal("demo series.csv: no data")
	}
	return rows
}

func copyTree(t *testing.T, from, to string) {
	t.Helper()
	if err := os.CopyFS(to, os.DirFS(from)); err != nil {
		t.Fatal(err)
	}
}

type docExample struct {
	command string   // continuation lines joined
	prints  []string // the output the docs show, if any
}

// docBlock is one code block's commands, run in order in one folder.
type docBlock struct{ cmds []docExample }

var trailingComment = regexp.MustCompile(`\s+#[^'"]*$`)

// key identifies what the block runs: the command files of its document
// that it names and its commands.
func (b docBlock) key(doc document) string {
	var k []string
	for _, ex := range b.cmds {
		k = append(k, trailingComment.ReplaceAllString(ex.command, ""))
		for n, text := range doc.files {
			if strings.Contains(ex.command, strings.TrimSuffix(n, ".bsr")) {
				k = append(k, text)
			}
		}
	}
	return strings.Join(k, "\n")
}

// continues says whether the block only reads results the block before it
// made (verify, report or collect), so it runs in that block's folder.
func (b docBlock) continues() bool {
	c := strings.Fields(b.cmds[0].command)[1]
	return c == "verify" || c == "report" || c == "collect"
}

// document is what a Markdown file shows: its command blocks in order and
// the command files it defines.
type document struct {
	blocks []docBlock
	files  map[string]string
}

var (
	// A command is "bandsolve" and a command name; "bandsolve verify:"
	// starts a message the docs quote, not a command.
	commandLine = regexp.MustCompile(`^bandsolve [a-z]+( |$)`)
	// A command file shown in the docs starts with "# NAME.bsr".
	commandFile = regexp.MustCompile(`^# ([\w.-]+\.bsr)\b`)
)

// docBlocks finds the code blocks of md, fenced (```) or indented by four
// spaces after a blank line. In a block, a paragraph starting with a
// "# NAME.bsr" line is that command file, and lines starting with
// "bandsolve COMMAND" are commands (a trailing \ joins the next line). A
// fenced block after a line saying "prints" is the previous command's
// output.
func docBlocks(md string) document {
	doc := document{files: map[string]string{}}
	lines := strings.Split(md, "\n")
	for i := 0; i < len(lines); {
		var body []string
		switch {
		case strings.HasPrefix(lines[i], "```"):
			j := i + 1
			for j < len(lines) && !strings.HasPrefix(lines[j], "```") {
				body = append(body, lines[j])
				j++
			}
			i = j + 1
		case strings.HasPrefix(lines[i], "    ") && (i == 0 || strings.TrimSpace(lines[i-1]) == ""):
			j := i
			for j < len(lines) && (strings.HasPrefix(lines[j], "    ") || strings.TrimSpace(lines[j]) == "" && j+1 < len(lines) && strings.HasPrefix(lines[j+1], "    ")) {
				body = append(body, strings.TrimPrefix(lines[j], "    "))
				j++
			}
			i = j
		default:
			i++
			continue
		}
		var blk docBlock
		for k := 0; k < len(body); k++ {
			l := strings.TrimSpace(body[k])
			if m := commandFile.FindStringSubmatch(l); m != nil && (k == 0 || strings.TrimSpace(body[k-1]) == "") {
				var text strings.Builder
				for ; k < len(body) && strings.TrimSpace(body[k]) != ""; k++ {
					text.WriteString(body[k] + "\n")
				}
				doc.files[m[1]] = text.String()
				continue
			}
			if !commandLine.MatchString(l) {
				continue
			}
			cmd := l
			for strings.HasSuffix(cmd, "\\") && k+1 < len(body) {
				k++
				cmd = strings.TrimSpace(strings.TrimSuffix(cmd, "\\")) + " " + strings.TrimSpace(body[k])
			}
			blk.cmds = append(blk.cmds, docExample{command: cmd})
		}
		if len(blk.cmds) == 0 {
			continue
		}
		// Output: the next fenced block, if the prose before it says "prints".
		says := false
		for j := i; j < len(lines) && j < i+8; j++ {
			says = says || strings.Contains(lines[j], "prints")
			if strings.HasPrefix(lines[j], "```") && says {
				last := &blk.cmds[len(blk.cmds)-1]
				for k := j + 1; k < len(lines) && !strings.HasPrefix(lines[k], "```"); k++ {
					last.prints = append(last.prints, lines[k])
				}
				break
			}
		}
		doc.blocks = append(doc.blocks, blk)
	}
	return doc
}

// shellLine splits one command line as a POSIX shell would for what the
// docs use (POSIX Shell Command Language: §2.2 quoting, single quotes
// literal, double quotes with $VAR expanded; §2.3 a word starting with #
// begins a comment; §2.6.6 unquoted words with * ? [ expanded to the
// sorted matching paths, left as written when none matches; §2.7.2 "> FILE"
// sends stdout to FILE).
func shellLine(line string) (args []string, stdout string, err error) {
	var w strings.Builder
	in := byte(0)
	inWord, glob := false, false
	end := func() {
		if !inWord {
			return
		}
		word := w.String()
		w.Reset()
		inWord = false
		if glob {
			// A pattern ending in / matches folders only.
			dirs := strings.HasSuffix(word, "/")
			var m []string
			found, _ := filepath.Glob(strings.TrimSuffix(word, "/"))
			for _, p := range found {
				if st, err := os.Stat(p); !dirs || err == nil && st.IsDir() {
					if dirs {
						p += "/"
					}
					m = append(m, p)
				}
			}
			if len(m) > 0 {
				slices.Sort(m)
				args = append(args, m...)
				glob = false
				return
			}
		}
		args = append(args, word)
		glob = false
	}
	for i := 0; i < len(line); i++ {
		c := line[i]
		switch {
		case in == '\'' && c == '\'', in == '"' && c == '"':
			in = 0
		case in == '\'':
			w.WriteByte(c)
		case in == '"' && c == '$':
			j := i + 1
			for j < len(line) && (line[j] == '_' || line[j] >= 'A' && line[j] <= 'Z' || line[j] >= '0' && line[j] <= '9') {
				j++
			}
			w.WriteString(os.Getenv(line[i+1 : j]))
			i = j - 1
		case in == '"':
			w.WriteByte(c)
		case c == '\'' || c == '"':
			in, inWord = c, true
		case c == ' ' || c == '\t':
			end()
		case c == '#' && !inWord:
			i = len(line)
		default:
			glob = glob || strings.IndexByte("*?[", c) >= 0
			w.WriteByte(c)
			inWord = true
		}
	}
	if in != 0 {
		return nil, "", fmt.Errorf("unclosed quote")
	}
	end()
	if n := slices.Index(args, ">"); n >= 0 {
		if n != len(args)-2 {
			return nil, "", fmt.Errorf("'>' must be followed by one file, at the end")
		}
		stdout, args = args[n+1], args[:n]
	}
	return args, stdout, nil
}

// shellLine is checked on the forms the docs use, against what a POSIX
// shell gives for them (sh -c 'printf "[%s]" …', worked out by hand here).
func TestShellLine(t *testing.T) {
	dir := t.TempDir()
	for _, d := range []string{"b-results", "a-results"} {
		os.MkdirAll(filepath.Join(dir, d), 0o755)
	}
	t.Chdir(dir)
	t.Setenv("TASK", "3")
	for _, c := range []struct {
		line, want, stdout string
	}{
		{`bandsolve run 'runs/*.bsr' --out batch/ -j 2`, "bandsolve|run|runs/*.bsr|--out|batch/|-j|2", ""},
		{`bandsolve verify results/          # reruns it`, "bandsolve|verify|results/", ""},
		{`bandsolve collect *-results/ --out c.csv`, "bandsolve|collect|a-results/|b-results/|--out|c.csv", ""},
		{`bandsolve collect none-*/`, "bandsolve|collect|none-*/", ""},
		{`bandsolve run x --shard "$TASK/4"`, "bandsolve|run|x|--shard|3/4", ""},
		{`bandsolve collect a b > t.csv`, "bandsolve|collect|a|b", "t.csv"},
		{`bandsolve run "blank beam.csv"`, "bandsolve|run|blank beam.csv", ""},
	} {
		args, out, err := shellLine(c.line)
		if got := strings.Join(args, "|"); err != nil || got != c.want || out != c.stdout {
			t.Errorf("%s: %q > %q (%v), want %q > %q", c.line, got, out, err, c.want, c.stdout)
		}
	}
}
