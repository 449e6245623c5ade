package report

import (
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
)

// A range whose search left the constraints bounds nothing, so the report
// must say "not determined" and never call a degenerate range unique
// (definition of a bound: an infeasible end point is not one).
func TestNotDeterminedRangeIsNeverUnique(t *testing.T) {
	f := &Folder{Summary: &output.Summary{Components: 2, Spectra: 10, Points: 20,
		UniquenessRanges: []output.BandJSON{
			{Component: "species_1", Min: 0.138, Max: 0.138, NotDetermined: true},
			{Component: "species_2", Min: 0.5, Max: 0.501},
		}}}
	find, checks := findings(f)
	all := strings.Join(append(find, checks...), "\n")
	if strings.Contains(all, "species_1 is essentially unique") {
		t.Errorf("an undetermined range is called unique:\n%s", all)
	}
	if !strings.Contains(all, "uniqueness range of species_1 was not determined") {
		t.Errorf("the report does not say the range of species_1 was not determined:\n%s", all)
	}
	if !strings.Contains(all, "species_2 is essentially unique") {
		t.Errorf("a determined narrow range is not called unique:\n%s", all)
	}
}

// An end whose search stopped on its budget (summary.json's min_converged
// or max_converged false) gets one sentence in the checks, and only then:
// a converged end, a summary written before the record (no key), or an
// unbounded range (whose "no bound" says more) gets none (the project's
// rule: a warning fires only when checked).
func TestUnconvergedRangeEndIsSaid(t *testing.T) {
	yes, no := true, false
	f := &Folder{Summary: &output.Summary{Components: 4, Spectra: 10, Points: 20,
		UniquenessRanges: []output.BandJSON{
			{Component: "species_1", Min: 0.2, Max: 0.4, MinConverged: &yes, MaxConverged: &yes},
			{Component: "species_2", Min: 0.3, Max: 0.6, MinConverged: &no, MaxConverged: &yes},
			{Component: "species_3", Min: 0.1, Max: 0.5},
			{Component: "species_4", Min: 0.1, Max: 500, MinConverged: &yes, MaxConverged: &no},
		}}}
	_, checks := findings(f)
	all := strings.Join(checks, "\n")
	if !strings.Contains(all, "The search for the smallest share of species_2 stopped on its budget") ||
		strings.Count(all, "stopped on its budget") != 1 {
		t.Errorf("checks:\n%s", all)
	}
}
