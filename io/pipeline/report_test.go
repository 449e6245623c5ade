package pipeline

import (
	"bytes"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/report"
	"golang.org/x/net/html"
)

// The demo's folder carries report.html; rebuilding it from the folder's
// files alone gives the same bytes, and it holds a figure for every result
// the run wrote.
func TestDemoReportRebuildsFromFiles(t *testing.T) {
	out := filepath.Join(t.TempDir(), "demo")
	if _, err := Demo(out, false, true, false, Streams{Out: io.Discard, Err: io.Discard}); err != nil {
		t.Fatal(err)
	}
	written, err := os.ReadFile(filepath.Join(out, "report.html"))
	if err != nil {
		t.Fatalf("the demo wrote no report: %v", err)
	}
	rebuilt, err := report.BuildDir(out)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(written, rebuilt) {
		t.Fatalf("report rebuilt from the files differs from the one the run wrote (%d vs %d bytes)", len(rebuilt), len(written))
	}
	doc, err := html.Parse(bytes.NewReader(written))
	if err != nil {
		t.Fatalf("report.html does not parse: %v", err)
	}
	ids := map[string]bool{}
	var walk func(n *html.Node)
	walk = func(n *html.Node) {
		if n.Type == html.ElementNode && n.Data == "figure" {
			for _, a := range n.Attr {
				if a.Key == "id" {
					ids[a.Val] = true
				}
			}
		}
		for c := n.FirstChild; c != nil; c = c.NextSibling {
			walk(c)
		}
	}
	walk(doc)
	// Species mode with a blank: absorbance and difference spectra, the
	// map, singular values, resolved spectra and profiles, the iterations
	// and the residuals are all computed by the demo.
	for _, id := range []string{"fig-absorbance", "fig-input", "fig-map", "fig-singular", "fig-spectra", "fig-profiles", "fig-iterations", "fig-residual-map", "fig-residual-spectrum"} {
		if !ids[id] {
			t.Errorf("report has no %s (has %v)", id, ids)
		}
	}
	if _, err := os.Stat(filepath.Join(out, report.MapsFile)); err != nil {
		t.Errorf("no %s: %v", report.MapsFile, err)
	}
	// --report off: neither the report nor the file that only feeds it.
	s := NewSettings()
	s.Data, s.Kind, s.Blanks, s.Pre = []string{filepath.Join(out, "input", "series.csv")}, "single-beam", []string{filepath.Join(out, "input", "blank.csv")}, 3
	s.Report, s.Quiet, s.Out = "off", true, filepath.Join(t.TempDir(), "off")
	if _, err := Execute(s, Streams{Out: io.Discard, Err: io.Discard}); err != nil {
		t.Fatal(err)
	}
	for _, name := range []string{"report.html", report.MapsFile} {
		if _, err := os.Stat(filepath.Join(s.Out, name)); err == nil {
			t.Errorf("--report off still wrote %s", name)
		}
	}
}

// Progress is for a person at a terminal: anything else gets nothing.
func TestProgressOnlyOnATerminal(t *testing.T) {
	var buf bytes.Buffer
	if w := newProgress(&buf); w != io.Discard {
		t.Errorf("a buffer got a progress display")
	}
	f, err := os.CreateTemp(t.TempDir(), "log")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if w := newProgress(f); w != io.Discard {
		t.Errorf("a regular file got a progress display")
	}
	if w := (Streams{Err: os.Stderr}).progress(&Settings{Quiet: true}); w != io.Discard {
		t.Errorf("--quiet still shows progress")
	}
	if alsProgress(io.Discard, 10) != nil {
		t.Errorf("an ALS observer without a display")
	}
	stepCounter(io.Discard, "bands", 3)(1) // must be a harmless no-op
	// /dev/null is a character special file (POSIX), the mode bit the
	// terminal test looks at.
	if dn, err := os.Open(os.DevNull); err == nil {
		if !isTerminal(dn) {
			t.Errorf("%s is not seen as a character device", os.DevNull)
		}
		dn.Close()
	}
	if isTerminal(f) {
		t.Errorf("a regular file is seen as a terminal")
	}
}

func TestProgressDisplay(t *testing.T) {
	var buf bytes.Buffer
	p := startProgress(&buf)
	io.WriteString(p, "resolving 3 component(s)\n")
	obs := alsProgress(p, 10)
	obs(5, 0.25)
	next := stepCounter(p, "feasible bands", 4)
	next(4)
	p.finish()
	s := buf.String()
	for _, want := range []string{"resolving 3 component(s)\n", "[############············] 5/10", "lack of fit 0.25 %", "feasible bands", "4/4", "done\n", "\r\x1b[K"} {
		if !strings.Contains(s, want) {
			t.Errorf("display lacks %q:\n%q", want, s)
		}
	}
}
