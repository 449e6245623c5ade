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
	above, noise := 14, 7 // the run's classification: 2 chemical + 5 named + 7 noise-like
	explained := &Folder{Summary: &output.Summary{Components: 2, Spectra: 58, Points: 6950, RankEstimate: 2,
		RankCriteria: crit(12, 3, 3, 3), NuisanceFactors: nf, FactorsAboveNoise: &above, NoiseLikeFactors: &noise}}
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

// The clause about the factors beyond the chemical rank is a definition of
// the report's sentence: it says only what the run's own classification
// records (summary.json: factors_above_noise, nuisance_factors,
// noise_like_factors, rank_estimate) establish. Every factor above the noise
// is chemical, named or noise-like (svd.ClassifyFactors), so the sentence
// may say "the other N are noise correlated along the axis" only when
// above − named − noise-like equals the chemical rank. Figures of the
// urethane ATR series at catalyst 1.00 (source as above; the run's notes
// say 7 factors are noise-like, 14 are above the threshold in rank.csv).
func TestRankFindingSaysOnlyWhatTheClassificationRecords(t *testing.T) {
	ptr := func(v int) *int { return &v }
	crit := []output.CriterionJSON{{Name: "noise-floor", Estimate: 12}, {Name: "ind", Estimate: 3},
		{Name: "f-test", Estimate: 3}, {Name: "structure", Estimate: 3}}
	var nf []output.NuisanceJSON
	for _, f := range []int{3, 5, 6, 10, 13} {
		nf = append(nf, output.NuisanceJSON{Factor: f})
	}
	cases := []struct {
		name         string
		above, noise *int
		want, refuse []string
	}{
		// 14 = 2 chemical + 5 named + 7 noise-like: every factor accounted for.
		{"accounted", ptr(14), ptr(7),
			[]string{"of the 14 factors above the noise, 2 are chemistry, factors 3, 5, 6, 10 and 13 are not chemistry (see the advice) and the other 7 are noise correlated along the axis"},
			[]string{"treat the count with care", "any others"}},
		// 15 above: one factor the classification found chemical is beyond
		// the rank, neither named nor noise — the clause would be false.
		{"one more chemical", ptr(15), ptr(7),
			[]string{"treat the count with care"},
			[]string{"noise correlated along the axis"}},
		// A folder written before the counts were recorded: nothing to check.
		{"not recorded", nil, nil,
			[]string{"treat the count with care"},
			[]string{"noise correlated along the axis"}},
	}
	for _, c := range cases {
		f := &Folder{Summary: &output.Summary{Components: 2, Spectra: 58, Points: 6950, RankEstimate: 2,
			RankCriteria: crit, NuisanceFactors: nf, FactorsAboveNoise: c.above, NoiseLikeFactors: c.noise}}
		find, _ := findings(f)
		all := strings.Join(find, "\n")
		for _, w := range c.want {
			if !strings.Contains(all, w) {
				t.Errorf("%s: the findings lack %q:\n%s", c.name, w, all)
			}
		}
		for _, w := range c.refuse {
			if strings.Contains(all, w) {
				t.Errorf("%s: the findings say %q, which the records do not establish:\n%s", c.name, w, all)
			}
		}
	}
}
