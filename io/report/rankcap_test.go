package report

import (
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
)

// When the noise floor's count stopped at the 12 factors the criteria count
// (summary.json at_least; docs/rank.md §5) the report says "≥ 12 (at most 12 counted)",
// as the terminal does, and its account of the classification says it covers the
// factors examined, not all above the noise. Figures of the real urethane ATR
// series at catalyst 1.00 (source: jevandezande/spectra, MIT, copy in
// /work/shared/real-data/urethane-atr; one reaction, so 2 species): 28 factors
// above the threshold, the first 14 examined, 2 chemical, 5 named, 7 noise-like.
func TestRankFindingSaysTheCap(t *testing.T) {
	above, noise := 14, 7
	var nf []output.NuisanceJSON
	for _, f := range []int{3, 5, 6, 10, 13} {
		nf = append(nf, output.NuisanceJSON{Factor: f})
	}
	crit := []output.CriterionJSON{{Name: "noise-floor", Estimate: 12, AtLeast: true}, {Name: "ind", Estimate: 3},
		{Name: "f-test", Estimate: 3}, {Name: "structure", Estimate: 3}}
	s := &output.Summary{Components: 2, Spectra: 58, Points: 6950, RankEstimate: 2, RankCriteria: crit,
		NuisanceFactors: nf, FactorsAboveNoise: &above, NoiseLikeFactors: &noise}
	find, _ := findings(&Folder{Summary: s})
	all := strings.Join(find, "\n")
	for _, want := range []string{"noise-floor ≥ 12 (at most 12 counted), ind 3", "of the first 14 factors above the noise, those examined, 2 are chemistry"} {
		if !strings.Contains(all, want) {
			t.Errorf("findings lack %q:\n%s", want, all)
		}
	}
	// Twelve is no agreement with a count of 12 when it is only a lower bound.
	if got := criterionVerdict(crit[0], 12); got != "differs" {
		t.Errorf("a lower bound of 12 against a rank of 12: %q, want differs", got)
	}
}
