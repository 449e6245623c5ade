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
