package pipeline

import (
	"math/rand/v2"
	"testing"
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
