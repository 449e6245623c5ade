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
