package spectra

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// darkExport is an absorbance export of single beams with detector noise
// constant in counts (σ_I): I = I₀·10^(−A) + ε, A = −log10(I/I_bg) with
// I_bg one background beam recorded once (Beer–Lambert; the definition of
// absorbance, IUPAC Gold Book). A solvent band of absorbance 4.5 at
// 1560–1500 cm⁻¹ leaves 10^−4.5 of 2·10⁴ counts, 0.6 counts, below the
// noise: in the sample only (an empty-cell background), or in the
// background too (bandInBackground: A is then −log10 of noise over noise
// there). Values the logarithm cannot take (I or I_bg ≤ 0) and those above
// capAt are written as capAt, as instruments export them (common
// practice); capAt 0 writes them uncapped, a beam ≤ 0 read as 0.1 counts.
// It returns the export, each point's light I_true and the background's
// true light.
func darkExport(n int, sigI, capAt float64, bandInBackground bool, seed uint64) (*Series, *mat.Dense, []float64) {
	m := 301
	s := &Series{AxisName: "wavenumber", Source: "sim.csv", Values: mat.NewDense(n, m, nil)}
	light := mat.NewDense(n, m, nil)
	rng := rand.New(rand.NewPCG(seed, 2026))
	bgTrue, bg := make([]float64, m), make([]float64, m)
	solvent := make([]float64, m)
	for j := 0; j < m; j++ {
		nu := 1800 - 2*float64(j)
		s.Axis = append(s.Axis, nu)
		if nu <= 1560 && nu >= 1500 {
			solvent[j] = 4.5
		}
		u := (nu - 1500) / 500
		bgTrue[j] = 2e4 * math.Exp(-u*u)
		if bandInBackground {
			bgTrue[j] *= math.Pow(10, -solvent[j])
		}
		bg[j] = bgTrue[j] + sigI*rng.NormFloat64()
	}
	for i := 0; i < n; i++ {
		s.Times = append(s.Times, 30*float64(i))
		x := 1 - math.Exp(-float64(i)/float64(n/3))
		for j, nu := range s.Axis {
			u := (nu - 1500) / 500
			a := 0.4*(1-x)*math.Exp(-0.5*sq((nu-1700)/14)) + 0.5*x*math.Exp(-0.5*sq((nu-1400)/18)) + solvent[j]
			it := 2e4 * math.Exp(-u*u) * math.Pow(10, -a)
			light.Set(i, j, it)
			beam := it + sigI*rng.NormFloat64()
			v := -math.Log10(beam / bg[j])
			switch {
			case capAt > 0 && (beam <= 0 || bg[j] <= 0 || v > capAt):
				v = capAt
			case capAt == 0 && beam <= 0:
				v = -math.Log10(0.1 / bg[j])
			}
			s.Values.Set(i, j, v)
		}
	}
	return s, light, bgTrue
}

// An export's cap and the channels without light are blind, and no point
// left in the fit is weighted more than overweighted times its noise
// (w_ij·σ²_ij ≤ 100, σ_ij = σ_I·√(1/I² + 1/I_bg²)/ln 10 from the true light
// by propagation of error through A = −log10(I/I_bg)). Before, nothing was
// blind, and with --pre 4 the noise of the dark channels was pooled with
// that of the lit ones around them (3 differences a channel are too few
// alone): points of −log10(noise) were weighted as measured absorbance.
func TestAbsorbanceCapIsBlind(t *testing.T) {
	const sigI = 4
	for _, c := range []struct {
		name  string
		capAt float64
		bg    bool
		pre   int
	}{
		{"capped at 6, band in the background, --pre 4", 6, true, 4},
		{"capped at 6, band in the background", 6, true, 0},
		{"capped at 6, empty background, --pre 4", 6, false, 4},
		{"uncapped, empty background", 0, false, 0},
	} {
		s, light, bgTrue := darkExport(60, sigI, c.capAt, c.bg, 11)
		caps := 0
		n, m := s.Values.Dims()
		for i := 0; i < n; i++ {
			for _, v := range s.Values.RawRowView(i) {
				if c.capAt > 0 && v == c.capAt {
					caps++
				}
			}
		}
		if c.capAt > 0 && caps < 3 {
			t.Fatalf("%s: %d values at the cap: the case tests nothing", c.name, caps)
		}
		a, err := Assemble(s, AssembleOptions{Kind: Absorbance, Reference: Reference{Mean: 1}, Pre: c.pre})
		if err != nil {
			t.Fatal(err)
		}
		if a.Blind == nil {
			t.Errorf("%s: no blind point", c.name)
		}
		gone := a.Blind.Everywhere(m)
		for j, x := range s.Axis {
			// A channel is without light when every beam (or the
			// background) is within 3σ_I of zero (the 3σ detection limit,
			// common practice); one with at least 30σ_I everywhere
			// (σ_A ≤ 0.015) is measured.
			lo, hi := bgTrue[j], 0.0
			for i := 0; i < n; i++ {
				lo, hi = math.Min(lo, light.At(i, j)), math.Max(hi, light.At(i, j))
			}
			if min(hi, bgTrue[j]) <= weakSigmas*sigI && !gone[j] {
				t.Errorf("%s: %g cm⁻¹ holds at most %.2g counts of light (σ_I = %g) and is not blind", c.name, x, min(hi, bgTrue[j]), float64(sigI))
			}
			if lo >= 30*sigI && gone[j] {
				t.Errorf("%s: %g cm⁻¹ holds at least %.3g counts of light and is blind", c.name, x, lo)
			}
		}
		for i := 0; i < n; i++ {
			for j, v := range s.Values.RawRowView(i) {
				if c.capAt > 0 && v == c.capAt && !a.Blind.Has(i, j) {
					t.Errorf("%s: the value at the cap at (%d, %g cm⁻¹) is not blind", c.name, i, s.Axis[j])
				}
			}
		}
		w := a.AbsoluteWeights
		worst, wi, wj := 0.0, 0, 0
		for i := 0; i < n; i++ {
			for j := 0; j < m; j++ {
				if a.Blind.Has(i, j) {
					continue
				}
				sig := sigI * math.Hypot(1/light.At(i, j), 1/bgTrue[j]) / math.Ln10
				if p := w.Row[i] * w.Col[j] * sig * sig; p > worst {
					worst, wi, wj = p, i, j
				}
			}
		}
		if worst > overweighted {
			t.Errorf("%s: point (%d, %g cm⁻¹) weighted %.3g times its noise variance, at most %d allowed", c.name, wi, s.Axis[wj], worst, overweighted)
		}
		for _, d := range []*mat.Dense{a.Absolute, a.Difference} {
			for _, v := range d.RawMatrix().Data {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					t.Fatalf("%s: a value %v left in the matrix", c.name, v)
				}
			}
		}
	}
}

// Clean absorbance (no band without light, nothing at a cap) keeps every
// point and the bits of the noise model it had: channelNoise over no blind
// points and the same weights.
func TestAbsorbanceWithLightUnchanged(t *testing.T) {
	s, _, _ := darkExport(60, 4, 6, false, 12)
	// Take the dark band out: what is left is lit everywhere.
	var keep []int
	for j, x := range s.Axis {
		if x > 1580 || x < 1480 {
			keep = append(keep, j)
		}
	}
	s = s.Keep(keep)
	sigma, _, _ := channelNoise(s.Values, 0, nil)
	n, _ := s.Values.Dims()
	want := channelWeights(n, sigma, nil)
	a, err := Assemble(s, AssembleOptions{Kind: Absorbance, Reference: Reference{Mean: 1}})
	if err != nil {
		t.Fatal(err)
	}
	if a.Blind != nil {
		t.Fatalf("%d blind points in lit data", a.Blind.Count)
	}
	for j := range sigma {
		if a.Noise.Channel[j] != sigma[j] || a.AbsoluteWeights.Col[j] != want.Col[j] {
			t.Fatalf("channel %d: σ %v and weight %v, before %v and %v", j, a.Noise.Channel[j], a.AbsoluteWeights.Col[j], sigma[j], want.Col[j])
		}
	}
}
