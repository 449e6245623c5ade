package report

import (
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
)

// TestVapourFigure: vapour.csv (as the pipeline writes it; its columns in
// docs/measurement.md section 9) drawn one line per experiment, named in
// the legend; one experiment gets one line; a table without the columns
// is refused with the reason.
func TestVapourFigure(t *testing.T) {
	two, err := ParseTable("vapour.csv", []byte("experiment,time,line_height\n1,0,0\n1,60,0.001\n2,0,0\n2,60,0.02\n2,120,0.027\n"))
	if err != nil {
		t.Fatal(err)
	}
	fig, err := vapourFigure(&Folder{Vapour: two})
	if err != nil || fig == nil {
		t.Fatalf("figure %v, error %v", fig, err)
	}
	if len(fig.Legend) != 2 || fig.Legend[0].Label != "experiment 1" || fig.Legend[1].Label != "experiment 2" || !strings.Contains(string(fig.SVG), "<svg") {
		t.Errorf("legend %+v", fig.Legend)
	}
	one, _ := ParseTable("vapour.csv", []byte("time,line_height\n0,0\n60,0.01\n"))
	if fig, err := vapourFigure(&Folder{Vapour: one}); err != nil || len(fig.Legend) != 1 || fig.Legend[0].Label != "largest line" {
		t.Errorf("one experiment: %v, %v", fig, err)
	}
	bad, _ := ParseTable("vapour.csv", []byte("time,height\n0,0\n"))
	if _, err := vapourFigure(&Folder{Vapour: bad}); err == nil || !strings.Contains(err.Error(), "line_height") {
		t.Errorf("a table without line_height: %v", err)
	}
}

// TestVapourCountFinding: the finding states summary.json's
// counted_component and counted_reaction, and what the chemistry then has.
func TestVapourCountFinding(t *testing.T) {
	got := vapourCountFinding(&output.VapourJSON{CountedComponent: 3, CountedReaction: 2})
	if !strings.Contains(got, "Component 3 of the count is the water vapour's change") || !strings.Contains(got, "has 2 component(s) and 1 independent reaction(s)") {
		t.Errorf("%q", got)
	}
	if got := vapourCountFinding(&output.VapourJSON{CountedComponent: 2}); strings.Contains(got, "reaction") || !strings.Contains(got, "has 1 component(s).") {
		t.Errorf("without the differences: %q", got)
	}
}
