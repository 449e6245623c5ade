package pipeline

import (
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/mcr"
)

// beamsWithCounts is makeBateman's series (A → B → C, three species, no
// blank given: difference spectra) with detector noise constant in counts
// added to every beam (beams of up to 2·10⁴ counts), so that absorbance
// noise grows as 1/I where the beam is weak.
func beamsWithCounts(t *testing.T, counts float64, seed uint64) (series string) {
	t.Helper()
	d := makeBateman(t, 1e-3, 1e-3, 0, seed, 3)
	rng := rand.New(rand.NewPCG(seed, 17))
	n, m := d.beams.Dims()
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			d.beams.Set(i, j, d.beams.At(i, j)+counts*rng.NormFloat64())
		}
	}
	series, _ = d.write(t)
	return series
}

// A zero region over the whole axis (1800–1200 cm⁻¹ is all of it) holds
// reaction 1's spectrum, and so its extent, at zero: the run must say that
// the region does this, not that the data support fewer components, and
// the constraint check must give what the fit without the region reaches.
// The differences of A → B → C hold exactly two independent reactions
// (two rate equations, rank of ΔA 2: analytic), so that fit is the
// resolution of the same data with two components and no region, which
// the check is compared with (same weights, same metric).
func TestZeroRegionOverWholeAxisIsNamed(t *testing.T) {
	series := beamsWithCounts(t, 20, 4)
	run := func(regions []string) *Result {
		s := NewSettings()
		s.Data, s.Kind, s.Components, s.Bands = []string{series}, "single-beam", "2", "off"
		s.ZeroRegions = regions
		r, err := Run(s, nil)
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	free := run(nil)
	r := run([]string{"1=1800:1200"})
	all := strings.Join(r.Warnings, "\n")
	if !strings.Contains(all, "--zero-region 1=1800:1200 covers every point of the axis: it forces component 1's spectrum to zero everywhere") {
		t.Errorf("no warning names the region that holds component 1 at zero:\n%s", all)
	}
	if strings.Contains(all, "component 1 vanished") || strings.Contains(all, "the data supports fewer components") {
		t.Errorf("the warnings blame the number of components, not the region:\n%s", all)
	}
	var zc *mcr.ConstraintCheck
	for i, c := range r.Constraints.Checks {
		if c.Name == "zero windows of spectra" {
			zc = &r.Constraints.Checks[i]
		}
	}
	if zc == nil {
		t.Fatalf("no check of the zero region: %+v", r.Constraints.Checks)
	}
	t.Logf("with %.4g %%, without %.4g %%; two components and no region %.4g %%", zc.With, zc.Without, free.ALS.LackOfFitPercent)
	if zc.Without > 1.01*free.ALS.LackOfFitPercent || zc.With < 5*zc.Without {
		t.Errorf("check: with %.4g %%, without %.4g %%; the fit without the region reaches %.4g %%", zc.With, zc.Without, free.ALS.LackOfFitPercent)
	}
}
