package svd

import (
	"strings"
	"testing"
)

// The note names every criterion that differs from the estimate and the
// ones that agree: the case from a user's run, where IND and the F-test
// agreed with each other on 4 and only the noise floor said 5.
func TestRankDisagreementNamesTheCriteria(t *testing.T) {
	crit := []Criterion{{Name: CriterionNoiseFloor, Estimate: 5}, {Name: CriterionIND, Estimate: 4},
		{Name: CriterionFTest, Estimate: 4}, {Name: CriterionStructure, Estimate: 4}}
	got := disagreement(crit, 5)
	for _, w := range []string{"the estimate is 5", "ind 4, f-test 4, structure 4", "only noise-floor 5 give(s) 5", "--pre"} {
		if !strings.Contains(got, w) {
			t.Errorf("%q lacks %q", got, w)
		}
	}
	if got := disagreement(crit, 3); !strings.Contains(got, "no single criterion gives 3") {
		t.Errorf("estimate none gives: %q", got)
	}
	for _, internal := range []string{"Sigma", "PreRows", "MaxRank"} {
		if strings.Contains(got, internal) {
			t.Errorf("internal name %s in %q", internal, got)
		}
	}
}

// The invented long series holds 3 species, one spectrum with a spike and one
// with a bubble (its generator's truth): the criteria count 5 factors above
// the noise, the structure criterion 3. When the classification names
// factors 4 and 5 as those outlier spectra the difference is accounted for
// and the warning blaming the noise level must go; when it names only factor
// 4, the warning stays, names it, and still points at the noise level for
// the other.
func TestRankDisagreementAccountedByTheClassification(t *testing.T) {
	crit := []Criterion{{Name: CriterionNoiseFloor, Estimate: 5}, {Name: CriterionIND, Estimate: 5},
		{Name: CriterionFTest, Estimate: 5}, {Name: CriterionStructure, Estimate: 3}}
	rep := func() *RankReport {
		r := &RankReport{Estimate: 3, Criteria: crit}
		r.warn("%s", disagreement(crit, 3))
		return r
	}
	both := rep()
	ApplyChemical(both, &ChemicalRank{Estimate: 3, Nuisance: []NuisanceFactor{{Factor: 4, Kind: NuisanceOutlier}, {Factor: 5, Kind: NuisanceOutlier}}})
	for _, w := range both.Warnings {
		if strings.Contains(w, "check the noise level") {
			t.Errorf("factors 4 and 5 are named outliers, yet: %q", w)
		}
	}
	one := rep()
	ApplyChemical(one, &ChemicalRank{Estimate: 3, Nuisance: []NuisanceFactor{{Factor: 4, Kind: NuisanceOutlier}}})
	if len(one.Warnings) != 1 || !strings.Contains(one.Warnings[0], "4 (outlier)") || !strings.Contains(one.Warnings[0], "1 not classified") || !strings.Contains(one.Warnings[0], "check the noise level") {
		t.Errorf("factor 4 named, factor 5 not: %q", one.Warnings)
	}
}
