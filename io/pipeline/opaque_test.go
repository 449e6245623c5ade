package pipeline

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// opaqueBeams sets s.beams and s.blank from s's species with detector noise constant in
// counts (σ_I = 4 on a source envelope of up to 2·10⁴ counts) and a constant band of
// absorbance top at 1550 cm⁻¹ (Gaussian, 40 cm⁻¹ at half height) in the sample only, as
// ATR against the empty crystal: exported as absorbance, its noise is σ_A = σ_I/(I ln 10)
// (propagation of error through A = −log10(I/I₀); analytic), 10^A times the rest's.
func opaqueBeams(s *synth, top float64, seed uint64) {
	n, m := len(s.times), len(s.axis)
	rng := rand.New(rand.NewPCG(seed, 2000))
	env, band := make([]float64, m), make([]float64, m)
	for j, x := range s.axis {
		u := (x - 1500) / 500
		env[j] = 2e4 * math.Exp(-u*u)
		band[j] = top * math.Exp(-4*math.Ln2*sq((x-1550)/40))
	}
	var a mat.Dense
	a.Mul(s.profiles, s.spectra.T())
	s.beams = mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			s.beams.Set(i, j, env[j]*math.Pow(10, -a.At(i, j)-band[j])+4*rng.NormFloat64())
		}
	}
	s.blank = make([]float64, m)
	for j := range env {
		s.blank[j] = env[j] + 0.5*rng.NormFloat64()
	}
}

// A → B (Bateman 1910, k = 3·10⁻³ s⁻¹) exported as absorbance capped at 4 under a
// constant opaque band of absorbance 3.5 (opaqueBeams): its channels are nearly blind,
// so the run must count 2 species, name the band's range in a note, resolve both
// spectra at a cosine ≥ 0.99 away from the band (|ν − 1550| > 60 cm⁻¹, where the band is
// under 0.02) and the profiles at ≥ 0.99, and fit k within 4 standard errors of the
// truth.
func TestOpaqueBandAbsorbanceExport(t *testing.T) {
	const k1 = 3e-3
	s := makeBateman(t, k1, 1e-3, 0, 31, 2)
	opaqueBeams(s, 3.5, 31)
	path, caps := cappedAbsorbance(t, s, 4)
	if caps == 0 {
		t.Fatal("no value at the cap: the band is not opaque")
	}
	st := NewSettings()
	st.Data, st.Kind = []string{path}, "absorbance"
	st.Model, st.T0 = "A -> B", "60"
	st.Bands, st.Checks = "off", "off" // not what is tested here; they only add time
	r, err := Run(st, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !anyContains(r.Notes, "opaque band") || !anyContains(r.Notes, "wavenumber 15") {
		t.Errorf("no note names the opaque band at 1550: %q", r.Notes)
	}
	if r.Rank.Estimate != 2 || r.Components != 2 {
		t.Fatalf("rank %d, components %d; want 2 (%s)", r.Rank.Estimate, r.Components, r.Rank.Reason)
	}
	checkLitCosines(t, s, r, func(x float64) bool { return math.Abs(x-1550) > 60 })
	if r.Kinetics == nil || r.Kinetics.Reported() == nil {
		t.Fatal("no kinetic fit")
	}
	fit := r.Kinetics.Reported().Fit
	within(t, r.Kinetics.Scheme.Steps[0].Text, fit.K[0], fit.KStdErr[0], k1, 4)
}

// The real urethane series (realUrethane: jevandezande/spectra, MIT) with a constant band
// of absorbance 3.5 added at 2000 cm⁻¹ (Gaussian, 60 cm⁻¹ at half height) and detector
// noise constant in counts (2·10⁻³ of the empty crystal's light), capped at 4, as an
// export of a sample that is opaque there. The chemistry is one reaction (the data set's
// README): rank 2, one in the differences, and the first-order rate constant within 2
// standard errors of the one fitted to the README's independent measure, the N=C=O band
// area (least squares, firstOrderRate). Before, the band's flanks made a third species
// and the kinetics were not done.
func TestUrethaneOpaqueBand(t *testing.T) {
	_, ser, area := realUrethaneSeries(t, "catalyst-1.00")
	out := t.TempDir()
	rng := rand.New(rand.NewPCG(11, 2000))
	for i, name := range ser.Names {
		var b strings.Builder
		for j, x := range ser.Axis {
			a := ser.Values.At(i, j) + 3.5*math.Exp(-4*math.Ln2*sq((x-2000)/60))
			v := -math.Log10(math.Pow(10, -a) + 2e-3*rng.NormFloat64())
			if !(v < 4) {
				v = 4
			}
			fmt.Fprintf(&b, "%.6e,%.6e\n", x, v)
		}
		if err := os.WriteFile(filepath.Join(out, filepath.Base(name)), []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	st := NewSettings()
	st.Data, st.Kind, st.TimesFromName = []string{out}, "absorbance", true
	st.Model = "A -> B"
	st.Bands, st.Checks = "off", "off"
	r, err := Run(st, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.Rank.Estimate != 2 || r.Components != 2 || r.DiffRank == nil || r.DiffRank.Estimate != 1 {
		t.Fatalf("rank %d, components %d, difference rank %v; want 2, 2, 1 (%s)", r.Rank.Estimate, r.Components, r.DiffRank, r.Rank.Reason)
	}
	if !anyContains(r.Notes, "opaque band") {
		t.Errorf("no note names the opaque band: %q", r.Notes)
	}
	if r.Kinetics == nil || r.Kinetics.Reported() == nil {
		t.Fatal("no kinetic fit")
	}
	want := firstOrderRate(ser.Times, area)
	fit := r.Kinetics.Reported().Fit
	t.Logf("k = %.4g ± %.2g s⁻¹; from the N=C=O area %.4g s⁻¹", fit.K[0], fit.KStdErr[0], want)
	within(t, r.Kinetics.Scheme.Steps[0].Text, fit.K[0], fit.KStdErr[0], want, 2)
}

// firstOrderRate fits y = a·e^(−kt) + c by least squares: for each k the best a and c
// are linear (normal equations of two unknowns), and k is the minimum of the remaining
// sum of squares, found by golden-section search on log k over 10⁻⁶ … 1 s⁻¹ (the sum is
// unimodal in k for one decay; Kiefer 1953).
func firstOrderRate(t, y []float64) float64 {
	rss := func(lk float64) float64 {
		k := math.Exp(lk)
		var se, see, sy, sey, n float64
		for i := range t {
			e := math.Exp(-k * t[i])
			se, see, sy, sey, n = se+e, see+e*e, sy+y[i], sey+e*y[i], n+1
		}
		det := see*n - se*se
		a, c := (sey*n-se*sy)/det, (see*sy-se*sey)/det
		s := 0.0
		for i := range t {
			d := y[i] - a*math.Exp(-k*t[i]) - c
			s += d * d
		}
		return s
	}
	lo, hi := math.Log(1e-6), 0.0
	g := (math.Sqrt(5) - 1) / 2
	for hi-lo > 1e-9 {
		m1, m2 := hi-g*(hi-lo), lo+g*(hi-lo)
		if rss(m1) < rss(m2) {
			hi = m2
		} else {
			lo = m1
		}
	}
	return math.Exp((lo + hi) / 2)
}
