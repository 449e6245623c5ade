package pipeline

import (
	"bytes"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/mcr"
)

// A range whose search left the constraints bounds nothing (definition of a
// bound): the terminal and summary.json must say so, never print it as a
// range of the signal.
func TestNotDeterminedRangeOnTerminalAndSummary(t *testing.T) {
	r := &Result{Components: 2, Names: []string{"species_1", "species_2"},
		Constraints: &ConstraintReport{Bands: &mcr.BandsResult{Bands: []mcr.Band{
			{Min: 0.138, Max: 0.138, Value: 0.138, Feasible: false},
			{Min: 0.4, Max: 0.45, Value: 0.42, Feasible: true},
		}}}}
	var buf bytes.Buffer
	printConstraints(r, &buf)
	out := buf.String()
	if !strings.Contains(out, "species_1    uniqueness range not determined") || strings.Contains(out, "species_1    uniqueness range 0.1380") {
		t.Errorf("terminal:\n%s", out)
	}
	if !strings.Contains(out, "species_2    uniqueness range 0.4000 – 0.4500") {
		t.Errorf("terminal lacks the determined range:\n%s", out)
	}
	var s Summary
	constraintSummary(r, &s)
	if len(s.UniquenessRanges) != 2 || !s.UniquenessRanges[0].NotDetermined || s.UniquenessRanges[1].NotDetermined {
		t.Errorf("summary ranges %+v", s.UniquenessRanges)
	}
}
