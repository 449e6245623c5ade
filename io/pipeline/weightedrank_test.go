package pipeline

import (
	"testing"
)

// TestWeightedRankSeesThroughSolventBand: A → B → C (consecutive first-order steps,
// Bateman 1910) with a weak intermediate (B's bands at 0.3 of their height), single beams
// with detector noise constant in counts (σ_I = 4) and a solvent band of absorbance 2
// between 1560 and 1500 cm⁻¹: 1 % of the light gets through there, so the absorbance
// noise σ_I/(I ln 10) is 100× the rest's (propagation of error, PRIMER §1 and §8). The
// true counts follow from the definitions: three species give absorbance of rank 3, and
// two independent reactions (A → B, B → C) give difference spectra of rank 2
// (stoichiometric rank; PRIMER §2); no baseline was added, so the baseline model must be
// off. With the noise weights the noise edge is compared in units of the noise (σ = 1
// after scaling) and every count is right; the same files with --weights off, where the
// noisy band sets the noise seen by the unweighted rank, lose the weak reaction (the
// difference rank comes out 1 on these data), which shows the test can fail.
func TestWeightedRankSeesThroughSolventBand(t *testing.T) {
	s := makeBateman(t, 3e-3, 1e-3, 0, 3, 3)
	for j := range s.axis {
		s.spectra.Set(j, 1, 0.3*s.spectra.At(j, 1))
	}
	solventBeams(s, 4, 2, 3)
	series, blank := s.write(t)
	run := func(weights string) *Result {
		st := NewSettings()
		st.Data, st.Blank, st.Kind = []string{series}, blank, "single-beam"
		st.Weights, st.Bands, st.Checks = weights, "off", "off"
		r, err := Run(st, nil)
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	r := run("noise")
	if r.Rank.Estimate != 3 || r.DiffRank == nil || r.DiffRank.Estimate != 2 {
		t.Fatalf("weighted: absorbance rank %d, difference rank %v; want 3 species in 2 independent reactions (%s)", r.Rank.Estimate, r.DiffRank, r.Rank.Reason)
	}
	if r.BaselineOrder != -1 {
		t.Errorf("weighted: baseline %s on data without one (%s)", baselineName(r.BaselineOrder), r.BaselineReason)
	}
	if r.Rank.Sigma != 1 {
		t.Errorf("weighted rank's noise level %g; the scaled matrix's noise has σ = 1 by construction", r.Rank.Sigma)
	}
	off := run("off")
	if off.DiffRank != nil && off.DiffRank.Estimate == 2 && off.Rank.Estimate == 3 && off.BaselineOrder == -1 {
		t.Errorf("--weights off counts right too (rank %d, differences %d): these data do not test the weighting", off.Rank.Estimate, off.DiffRank.Estimate)
	}
}
