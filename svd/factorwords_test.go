package svd

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Where a factor's time vector is largest, in a stack of the two urethane ATR series
// (50 and 58 spectra: testdata/urethane-atr/README.md, source jevandezande/spectra, MIT),
// stacked as the pipeline stacks experiments: rows 0–49 the first, 50–107 the second.
// Largest at the last row of one and the first of the next is the step between the
// experiments; elsewhere it is placed within its experiment. No place is called a
// transient: a time vector orthogonal to a larger factor's everywhere-positive profile
// must change sign (their inner product is zero; linear algebra), so an interior
// maximum says nothing of a transient.
func TestTimePlace(t *testing.T) {
	blocks := []int{0, 50}
	for _, tc := range []struct {
		peak       int
		blocks     []int
		want, hide string
	}{
		{49, blocks, "at spectrum 50 of 108, the last of experiment 1 next to the first of experiment 2: a step between the experiments", ""},
		{50, blocks, "at spectrum 51 of 108, the first of experiment 2 next to the last of experiment 1: a step between the experiments", ""},
		{28, blocks, "at spectrum 29 of 108 (spectrum 29 of 50 of experiment 1;", "step"},
		{107, blocks, "at spectrum 108 of 108 (spectrum 58 of 58 of experiment 2;", "step"},
		{0, blocks, "at spectrum 1 of 108 (spectrum 1 of 50 of experiment 1;", "step"},
		{28, nil, "at spectrum 29 of 50 (its time course is not a component's profile: the decomposition makes it orthogonal to the larger factors'", "experiment"},
	} {
		n := 108
		if tc.blocks == nil {
			n = 50
		}
		got := timePlace(tc.peak, n, tc.blocks)
		if !strings.Contains(got, tc.want) || tc.hide != "" && strings.Contains(got, tc.hide) || strings.Contains(got, "transient") {
			t.Errorf("peak %d of %d: %q, want %q, no %q and no transient", tc.peak, n, got, tc.want, tc.hide)
		}
	}
}

// Positions on the axis carry its unit when the axis name fixes one: the readers call an
// axis "wavenumber" only from a cm⁻¹ title or unit (io/spectra), and cm⁻¹ is the
// wavenumber's unit (common practice); a wavelength may be in nm or µm, so only its name.
func TestAxisPlace(t *testing.T) {
	for _, tc := range []struct{ name, want string }{
		{"wavenumber", "1702 cm⁻¹"},
		{"wavelength", "1702 on the wavelength axis"},
		{"", "1702 on the axis"},
	} {
		if got := axisPlace(1702, tc.name); got != tc.want {
			t.Errorf("axis %q: %q, want %q", tc.name, got, tc.want)
		}
	}
}

// capData is n × m white noise of σ = 1e-3 plus k rank-one terms cos(π a (i+½)/n) ·
// cos(π b (j+½)/m) (orthogonal cosines: the discrete cosine transform's basis, so the
// terms' singular values are their amplitudes times √(nm)/2), each amplitude far above
// the Marchenko–Pastur edge σ(√n + √m) (Geman 1980).
func capData(n, m, k int) *mat.Dense {
	rng := rand.New(rand.NewPCG(7, 11))
	d := mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			v := 1e-3 * rng.NormFloat64()
			for a := 1; a <= k; a++ {
				amp := 0.05 / float64(a)
				v += amp * math.Cos(math.Pi*float64(a)*(float64(i)+0.5)/float64(n)) * math.Cos(math.Pi*float64(a)*(float64(j)+0.5)/float64(m))
			}
			d.Set(i, j, v)
		}
	}
	return d
}

// With more factors above the noise than the criteria count (12 by default), the noise
// floor says its count stopped there (AtLeast) and the reason gives the whole count: 20
// terms each above the edge (smallest 0.05/20 · √(40·200)/2 ≈ 0.11 against an edge of
// 1e-3 · (√40 + √200) ≈ 0.020) give 20 singular values above the threshold. Its consensus
// judges only the spectrum side when the 40 spectra are too few for the 14 directions it
// looks at (l ≥ 5K, docs/rank.md §5), and says so; a σ given with words for it is named by
// them, not "given".
func TestRankSaysWhereItsCountStops(t *testing.T) {
	const n, m, k = 40, 200, 20
	rep, err := EstimateRank(capData(n, m, k), nil, RankOptions{Sigma: 1e-3, SigmaFrom: "the test's noise", ReferenceRow: -1})
	if err != nil {
		t.Fatal(err)
	}
	if rep.AboveThreshold != k || rep.Examined != defaultMaxRank {
		t.Errorf("above the threshold %d of %d examined, want %d of %d", rep.AboveThreshold, rep.Examined, k, defaultMaxRank)
	}
	floor := rep.Criteria[0]
	if floor.Name != CriterionNoiseFloor || floor.Estimate != defaultMaxRank || !floor.AtLeast || !strings.Contains(floor.Detail, "20 of the 40 singular values computed exceed") {
		t.Errorf("noise floor %+v, want at least 12 and 20 of 40 named", floor)
	}
	for _, want := range []string{"20 factor(s) above the noise threshold", "the test's noise", "the first 14 are examined", "the time side is not judged: 40 spectra are too few for 14 directions, which need 70"} {
		if !strings.Contains(rep.Reason, want) {
			t.Errorf("reason %q lacks %q", rep.Reason, want)
		}
	}
	if strings.Contains(rep.Reason, "given") {
		t.Errorf("reason %q calls σ given beside its words", rep.Reason)
	}
	// Fewer factors than the cap: an exact count, no "at least".
	rep, err = EstimateRank(capData(n, m, 3), nil, RankOptions{Sigma: 1e-3, ReferenceRow: -1})
	if err != nil {
		t.Fatal(err)
	}
	if f := rep.Criteria[0]; f.Estimate != 3 || f.AtLeast || rep.AboveThreshold != 3 {
		t.Errorf("3 terms: noise floor %+v, above %d; want exactly 3", f, rep.AboveThreshold)
	}
}
