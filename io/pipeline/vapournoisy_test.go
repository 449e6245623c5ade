package pipeline

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/spectra"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
)

// noisyUrethane writes a copy of the real urethane series (realUrethane:
// jevandezande/spectra, MIT) with detector noise constant in counts added,
// σ_I of the empty crystal's light (PRIMER §8): A' = −log10(10^−A + ε).
func noisyUrethane(t *testing.T, series string, sigmaI float64, seed uint64, extra func(x, tm float64) float64) (dir string, ser *spectra.Series) {
	t.Helper()
	ser, err := spectra.Load(realUrethane(t, series), spectra.FolderOptions{TimesFromName: true})
	if err != nil {
		t.Fatal(err)
	}
	dir = t.TempDir()
	rng := rand.New(rand.NewPCG(seed, 2026))
	for i, name := range ser.Names {
		var b strings.Builder
		for j, x := range ser.Axis {
			a := ser.Values.At(i, j)
			if extra != nil {
				a += extra(x, ser.Times[i])
			}
			v := -math.Log10(math.Pow(10, -a) + sigmaI*rng.NormFloat64())
			fmt.Fprintf(&b, "%.6e,%.6e\n", x, v)
		}
		if err := os.WriteFile(filepath.Join(dir, filepath.Base(name)), []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir, ser
}

// TestNoisyUrethaneVapourNotASpecies: the real urethane series at catalyst
// 0.01, whose beam path's humidity changed during the run (the vapour
// check's warning on the series as measured), with detector noise constant
// in counts added (2·10⁻³ of the empty crystal's light, about 4× the
// series' own noise at zero absorbance). The chemistry is one reaction
// (the data set's README): two species, the isocyanate's profile following
// the N=C=O band area. The refit of the minor factors fitted one more
// component whose spectrum was the vapour's lines (90 % of its narrow lines
// their pattern) with some reshaping of the N–H and low-edge bands, and
// called it a species: the vapour's stretching lines above 3950 cm⁻¹,
// outside the ranges the check reads, held 8 % of the drop outside the
// bands, so only 46 % of that drop lay in the check's ranges and the
// vapour's verdict (50 %) did not hold; four draws of eight counted three
// species (seeds 1, 2, 7 and 8 here). With the channels where the vapour
// has lines set apart as well as the bands, no band of its own is left
// (16–18 % of the drop, peaks 14–27 % of the largest; a species needs 25 %
// and 50 %, the refit's own limits).
func TestNoisyUrethaneVapourNotASpecies(t *testing.T) {
	for _, seed := range []uint64{1, 7} {
		r := vapourNotASpecies(t, 2e-3, seed)
		if r.Rank.Estimate != 2 || r.DiffRank == nil || r.DiffRank.Estimate != 1 {
			t.Fatalf("seed %d: rank %d, differences %v; want 2 and 1: %q", seed, r.Rank.Estimate, r.DiffRank, r.Notes)
		}
	}
}

// vapourNotASpecies resolves a noisy copy of catalyst 0.01 (noisyUrethane,
// counts noise sigmaI) with the defaults and checks the data set's README:
// one reaction, two species, the isocyanate's profile following the N=C=O
// band area; and that a refit verdict names the vapour's change.
func vapourNotASpecies(t *testing.T, sigmaI float64, seed uint64) *Result {
	t.Helper()
	dir, ser := noisyUrethane(t, "catalyst-0.01", sigmaI, seed, nil)
	r := resolveFolder(t, dir, "")
	if r.Components != 2 {
		t.Fatalf("seed %d: %d components, want 2 (one reaction, the data set's README): %q", seed, r.Components, r.Notes)
	}
	said := false
	for _, v := range r.MinorTests {
		if v.Test != nil && strings.Contains(v.Test.Verdict, "it is the change of the water vapour") {
			said = true
			t.Logf("seed %d factor %d: %s", seed, v.Factor, v.Test.Finding)
		}
	}
	if !said {
		t.Errorf("seed %d: no refit verdict names the vapour", seed)
	}
	checkIsocyanateFollowsArea(t, ser, r)
	return r
}

// TestVeryNoisyUrethaneCarbonDioxideNotASpecies: the same copy with counts
// noise 8·10⁻³ of the empty crystal's light (about 14× the series' own
// noise at zero absorbance). Counts noise is largest under the strongest
// bands (σ_A ∝ 10^A), so the weighted refit leaves the carbonyl's change of
// shape, which the series as measured refits (90 % of its drop under the
// bands), for what is left elsewhere: the vapour's lines, the air's CO₂
// (its Q branch at 667.7 cm⁻¹ the largest drop per channel outside the
// bands) and noise. With the vapour's lines alone set apart, what was left
// still passed the limits (25 %, 50 %; by a proxy, the refit's fitted
// change per channel on a like copy: about 28 % and a peak of 62 % at the
// CO₂ line), and two draws of four (seeds 2 and 3 here) counted three
// species; with CO₂'s lines set apart too (a purge that lets in moist air
// lets in CO₂; common practice) the refit's own figures are 22 % and 17 %.
func TestVeryNoisyUrethaneCarbonDioxideNotASpecies(t *testing.T) {
	for _, seed := range []uint64{2, 3} {
		vapourNotASpecies(t, 8e-3, seed)
	}
}

// TestVeryNoisyUrethaneKeepsItsBaseline: the copy of catalyst 0.01 with
// counts noise 8·10⁻³ (draw 1) drifts as the series as measured does (a
// cubic, p < 10⁻²⁶³ there), but with the four factors the order's test
// fits beside the baseline the offset alone read p = 0.47 and the search
// stopped: no baseline, the drift went into the species and the data fit's
// rate constant came out 7.3·10⁻⁵ s⁻¹ against 3.8·10⁻⁵ on the series as
// measured. Noise of zero mean added to the data moves an estimate that
// is right by about its standard error (definition of the standard error);
// the offset tested again jointly with the slope (p = 5·10⁻⁵) goes on to
// the cubic, and the two agree. (The N=C=O band area's own first-order
// fit, the data set's README measure, gives 2.4·10⁻⁵ ± 2.6·10⁻⁶ on this
// slow series, which ends at half conversion with an asymptote of −0.37
// times the decay and runs of one sign in its residual: logged, not a
// reference here.)
func TestVeryNoisyUrethaneKeepsItsBaseline(t *testing.T) {
	rate := func(dir string) (*Result, float64, float64) {
		r := resolveFolder(t, dir, "A -> B")
		d := r.Kinetics.Reported()
		if d == nil {
			t.Fatal("no kinetic fit reported")
		}
		return r, d.Fit.K[0], d.Fit.KStdErr[0]
	}
	dir, ser := noisyUrethane(t, "catalyst-0.01", 8e-3, 1, nil)
	_, measured, _ := rate(realUrethane(t, "catalyst-0.01"))
	r, k, se := rate(dir)
	t.Logf("baseline %s: %s", baselineName(r.BaselineOrder), r.BaselineReason)
	t.Logf("k = %.4g ± %.2g s⁻¹; as measured %.4g s⁻¹; from the N=C=O area %.4g s⁻¹", k, se, measured, firstOrderRate(ser.Times, isocyanateAreas(ser)))
	if r.BaselineOrder < 1 {
		t.Errorf("baseline %s; want a drift of at least a slope", baselineName(r.BaselineOrder))
	}
	within(t, "A -> B with noise added", k, se, measured, 2)
}

// checkIsocyanateFollowsArea checks the real-data README's independent answer: one
// resolved profile follows the N=C=O band area (isocyanateArea) of the series as
// measured, correlation above 0.99.
func checkIsocyanateFollowsArea(t *testing.T, ser *spectra.Series, r *Result) {
	t.Helper()
	area := isocyanateAreas(ser)
	best := -1.0
	for k := 0; k < r.Components; k++ {
		best = max(best, stat.Correlation(area, mat.Col(nil, k, r.ALS.C), nil))
	}
	t.Logf("isocyanate profile against the N=C=O area: r = %.5f", best)
	if best < 0.99 {
		t.Errorf("no profile follows the N=C=O area: best correlation %.4f", best)
	}
}

// TestNoisyUrethaneSpeciesBesideVapour: the same noisy copy with an invented
// transient species added, a band of absorbance 0.03 at 2520 cm⁻¹ (Gaussian,
// 25 cm⁻¹ at half height, outside the urethane's bands and the vapour's
// lines) whose amount rises and falls, (t/τ)e^(1−t/τ), τ = 5000 s: three
// species by construction. The refit's extra component carries the
// vapour's lines too (their pattern 88–89 % of its narrow lines), so the
// vapour's verdict is asked; the band outside the lines keeps it a species.
// (At absorbance 0.01 it sits on the limit: 24.6 % of the drop outside the
// bands and the lines, against 25 %; at 0.005 it is not found.)
func TestNoisyUrethaneSpeciesBesideVapour(t *testing.T) {
	const centre, width, tau = 2520.0, 25.0, 5000.0
	band := func(x float64) float64 { return math.Exp(-4 * math.Ln2 * sq((x-centre)/width)) }
	dir, _ := noisyUrethane(t, "catalyst-0.01", 2e-3, 1, func(x, tm float64) float64 {
		return 0.03 * band(x) * (tm / tau) * math.Exp(1-tm/tau)
	})
	r := resolveFolder(t, dir, "")
	if r.Components != 3 {
		t.Fatalf("%d components; want 3 (two of the series, one added): %q", r.Components, r.Notes)
	}
	// The added species' spectrum: over 2400–2650 cm⁻¹ one resolved spectrum
	// has the band's shape (cosine above 0.9, with the noise of a spectrum
	// resolved from 2·10⁻³ of noise in counts; the others have no band there).
	var truth []float64
	var idx []int
	for j, x := range r.Axis {
		if x >= 2400 && x <= 2650 {
			truth, idx = append(truth, band(x)), append(idx, j)
		}
	}
	best := 0.0
	for k := 0; k < r.Components; k++ {
		got := make([]float64, len(idx))
		for q, j := range idx {
			got[q] = r.ALS.S.At(j, k)
		}
		c := Cosine(got, truth)
		t.Logf("species_%d over 2400–2650 cm⁻¹: cosine %.4f to the added band", k+1, c)
		best = max(best, c)
	}
	if best < 0.9 {
		t.Errorf("no resolved spectrum holds the added band at %g cm⁻¹: best cosine %.4f", centre, best)
	}
}
