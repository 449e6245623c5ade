package pipeline

import (
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/svd"
)

// The terminal's rank line puts the chemical count first and says what the larger
// counts of the criteria hold: the factors classified as not chemistry, by number, and
// those that are noise correlated along the axis (issue #12: "noise-floor 12" beside a
// count of 2 read as 12 species). Without nuisance factors it lists the criteria alone.
func TestRankLineNamesNuisanceFactors(t *testing.T) {
	crit := []string{"noise-floor 12", "ind 4", "f-test 3", "structure 3"}
	r := &Result{Chemical: &svd.ChemicalRank{Estimate: 2, NoiseLike: 9,
		Nuisance: []svd.NuisanceFactor{{Factor: 3, Kind: svd.NuisanceBaseline}, {Factor: 4}, {Factor: 6}}}}
	got := rankDetail(r, crit)
	for _, want := range []string{"chemical", "factor(s) 3, 4, 6 not chemistry", "9 more above the white-noise level", "noise-floor 12"} {
		if !strings.Contains(got, want) {
			t.Errorf("rank line %q lacks %q", got, want)
		}
	}
	r.Chemical = &svd.ChemicalRank{Estimate: 2}
	if got := rankDetail(r, crit); got != "  (noise-floor 12, ind 4, f-test 3, structure 3)" {
		t.Errorf("without nuisance factors: %q", got)
	}
}
