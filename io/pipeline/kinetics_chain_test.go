package pipeline

import (
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/mcr"
)

// runSmallChain resolves the six-species chain at 150 × 401 (newChain, noise constant
// in counts, a fixed seed) with the model as a hard constraint (chainSettings).
func runSmallChain(t *testing.T) (*seriesCase, *Result) {
	t.Helper()
	c := newChain(150, 401, 6000)
	series, blank := c.write(t, t.TempDir(), 30, rand.New(rand.NewPCG(7, 11)))
	r, err := Run(chainSettings(series, blank), nil)
	if err != nil {
		t.Fatal(err)
	}
	return c, r
}

// Six species in one chain, A -> B -> C -> D -> E -> F, resolved with the
// model as a hard constraint: the data are not rank deficient (newChain),
// so the reported rate constants (the fit of the data matrix) must lie
// within 3 % and 4 standard errors of the values the data were made from
// (Bateman's analytic solution, see newChain), in the order written. Noise
// constant in counts. The 2000 × 3001 case and its timing are
// BenchmarkHardModelChain.
func TestChainHardModel(t *testing.T) {
	c, r := runSmallChain(t)
	t.Logf("soft ALS %d iterations, hard–soft %d; warnings %q", r.SoftALS.Iterations, r.ALS.Iterations, r.Warnings)
	checkRates(t, r, c.K)
}

// Before hard–soft that starts from the fit of the data matrix, --init auto
// keeps the purest-variable start alone exactly when it fits within the
// noise: its weighted residual (summed here directly, Σ a_i b_j e²_ij) at
// most 1.02 × 1.25 ν, ν = n·m − k(n + m − k) the degrees of freedom of a
// rank-k bilinear fit (definition; 1.25 the noise model's allowance, see
// startNoise). With --map hard–soft starts from the soft solution, and both
// starts run as before. Either way the rate constants are those the data
// were made from (Bateman's solution, 3 % and 4 standard errors).
func TestHardModelOneSoftStartWithinNoise(t *testing.T) {
	c, r := runSmallChain(t)
	n, m := r.D.Dims()
	k := r.Components
	soft := r.SoftALS
	chi2 := mcr.FitWeighted(r.D, soft.C, soft.S, r.Weights.Row, r.Weights.Col, nil).WeightedSS
	nu := float64(n*m - k*(n+m-k))
	within := chi2 <= 1.02*1.25*nu
	one := strings.Contains(r.Init, "one start")
	t.Logf("χ² %.6g, ν %.6g; initial estimate %q", chi2, nu, r.Init)
	if one != within {
		t.Errorf("one start: %v, but the first start fits within the noise: %v (χ² %.6g against 1.02 × 1.25 × %.6g)", one, within, chi2, nu)
	}
	if !within {
		t.Errorf("the soft fit is χ² = %.6g, above 1.02 × 1.25 ν = %.6g: the test's data no longer exercise the single start", chi2, 1.02*1.25*nu)
	}
	checkRates(t, r, c.K)

	series, blank := c.write(t, t.TempDir(), 30, rand.New(rand.NewPCG(7, 11)))
	s := chainSettings(series, blank)
	s.Map = "A=1,B=2,C=3,D=4,E=5,F=6"
	mapped, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if strings.Contains(mapped.Init, "one start") || !strings.Contains(mapped.Init, "evolving factor analysis") {
		t.Errorf("with --map both starts must run; initial estimate %q", mapped.Init)
	}
}
