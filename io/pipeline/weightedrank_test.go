package pipeline

import (
	"math"
	"strconv"
	"testing"

	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// TestWeightedRankSeesThroughSolventBand: A → B → C (consecutive first-order steps,
// Bateman 1910) with a weak intermediate (B's bands at 0.3 of their height), single beams
// with detector noise constant in counts (σ_I = 40) and a solvent band of absorbance 2
// between 1560 and 1500 cm⁻¹: 1 % of the light gets through there, so the absorbance
// noise σ_I/(I ln 10) is 100× the rest's (propagation of error, PRIMER §1 and §8). The
// true counts follow from the definitions: three species give absorbance of rank 3, and
// two independent reactions (A → B, B → C) give difference spectra of rank 2
// (stoichiometric rank; PRIMER §2); no baseline was added, so the baseline model must be
// off. With the noise weights the noise edge is compared in units of the noise (σ = 1
// after scaling) and every count is right; the same files with --weights off, where the
// noisy band sets the noise seen by the unweighted rank, lose the weak intermediate (the
// absorbance rank comes out 2 on these data), which shows the test can fail. (With σ_I
// = 4 the unweighted run lost the second reaction only to the size rule, at 1.9 % of the
// first factor's signal and 900 times its noise edge, which no longer sets aside a
// factor that far above the noise: svd's clearOfNoise.)
func TestWeightedRankSeesThroughSolventBand(t *testing.T) {
	s := makeBateman(t, 3e-3, 1e-3, 0, 3, 3)
	for j := range s.axis {
		s.spectra.Set(j, 1, 0.3*s.spectra.At(j, 1))
	}
	solventBeams(s, 40, 2, 3)
	series, blank := s.write(t)
	run := func(weights string) *Result {
		st := NewSettings()
		st.Data, st.Blanks, st.Kind = []string{series}, []string{blank}, "single-beam"
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

// TestWeightedSingularValuesInNoiseUnits: with noise weights the singular values written
// (singular_values.csv) are those of the matrix the rank is counted on, √A D √B, so that
// they and the noise edge beside them are in the same units. Reference: the singular
// values of √A D √B formed here from the run's own D and weights and decomposed by
// LAPACK's SVD (gonum mat.SVD; definition of the SVD). The above_noise_edge column must
// then say yes exactly for the values above the rank's threshold, and at least for as
// many factors as species were counted (the estimate counts directions in the span of
// the factors above the threshold, svd.EstimateRank). The outlier test's noise level in
// D's units is the root-mean-square noise of a typical spectrum under the noise model,
// √(median_i 1/a_i · mean_j 1/b_j) (the expected residual of a spectrum fitted to its
// noise; definition of the weights a_i b_j = 1/σ_ij²), recomputed from the weights.
// Data: TestWeightedRankSeesThroughSolventBand's (noise constant in counts).
func TestWeightedSingularValuesInNoiseUnits(t *testing.T) {
	s := makeBateman(t, 3e-3, 1e-3, 0, 3, 3)
	solventBeams(s, 4, 2, 3)
	series, blank := s.write(t)
	st := NewSettings()
	st.Data, st.Blanks, st.Kind = []string{series}, []string{blank}, "single-beam"
	st.Bands, st.Checks, st.KeepOutliers = "off", "off", true
	r, err := Run(st, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.BaselineOrder != -1 {
		t.Fatalf("baseline %s on data without one: D was changed in place, no reference", baselineName(r.BaselineOrder))
	}
	var ref mat.SVD
	if !ref.Factorize(svd.Scale(r.D, r.Weights.Row, r.Weights.Col), mat.SVDNone) {
		t.Fatal("reference SVD did not converge")
	}
	want := ref.Values(nil)
	tab := singularTable(r.Factors, r.Rank, r.BaselineOrder)
	yes, above := 0, 0
	for i, row := range tab.Rows {
		got, _ := strconv.ParseFloat(row[1], 64)
		if i < 10 && math.Abs(got-want[i]) > 1e-8*want[0] {
			t.Errorf("singular value %d: written %g, √A D √B has %g", i+1, got, want[i])
		}
		if row[2] == "yes" {
			yes++
		}
		if want[i] > r.Rank.Threshold {
			above++
		}
	}
	if yes != above || yes < r.Rank.Estimate {
		t.Errorf("%d values marked above the noise edge, %d exceed the threshold %g, %d species counted", yes, above, r.Rank.Threshold, r.Rank.Estimate)
	}
	inv := func(v []float64) (out []float64) {
		for _, x := range v {
			out = append(out, 1/x)
		}
		return out
	}
	mean := 0.0
	for _, x := range r.Weights.Col {
		mean += 1 / x / float64(len(r.Weights.Col))
	}
	if got, want := plainSigma(r), math.Sqrt(medianOf(inv(r.Weights.Row))*mean); math.Abs(got-want) > 1e-12*want {
		t.Errorf("outlier test's σ %g, the noise model's typical spectrum %g", got, want)
	}
}
