package report

import (
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
)

// The rank criteria count every factor above the noise; the chemical count
// may be below them when the factors beyond it were each examined and named
// as nuisance factors. Figures of the real urethane ATR series at catalyst
// loading 1.00 (source: jevandezande/spectra, MIT licence, copy in
// /work/shared/real-data/urethane-atr; one reaction, isocyanate + butanol,
// so rank 2 in absorbance): criteria 12, 3, 3, 3, chemical rank 2, factors
// 3, 5, 6, 10 and 13 named. The report must say why the criteria count
// more, not tell the reader to distrust a count the run explained; when a
// criterion counts fewer than the estimate, the caution stays.
func TestRankFindingExplainsNuisanceFactors(t *testing.T) {
	crit := func(est ...int) []output.CriterionJSON {
		names := []string{"noise-floor", "ind", "f-test", "structure"}
		var cs []output.CriterionJSON
		for i, e := range est {
			cs = append(cs, output.CriterionJSON{Name: names[i], Estimate: e})
		}
		return cs
	}
	var nf []output.NuisanceJSON
	for _, f := range []int{3, 5, 6, 10, 13} {
		nf = append(nf, output.NuisanceJSON{Factor: f})
	}
	explained := &Folder{Summary: &output.Summary{Components: 2, Spectra: 58, Points: 6950, RankEstimate: 2,
		RankCriteria: crit(12, 3, 3, 3), NuisanceFactors: nf}}
	find, _ := findings(explained)
	all := strings.Join(find, "\n")
	if strings.Contains(all, "treat the count with care") {
		t.Errorf("a count the run explained is called doubtful:\n%s", all)
	}
	if !strings.Contains(all, "factors 3, 5, 6, 10 and 13") || !strings.Contains(all, "noise-floor 12, ind 3, f-test 3, structure 3") {
		t.Errorf("the finding does not name the criteria and the factors not counted:\n%s", all)
	}
	below := &Folder{Summary: &output.Summary{Components: 2, Spectra: 58, Points: 6950, RankEstimate: 2,
		RankCriteria: crit(12, 1, 3, 3), NuisanceFactors: nf}}
	find, _ = findings(below)
	if all := strings.Join(find, "\n"); !strings.Contains(all, "treat the count with care") {
		t.Errorf("a criterion counting fewer than the estimate raises no caution:\n%s", all)
	}
}
