package pipeline

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
	"gonum.org/v1/gonum/mat"
)

// newChainFromMixture is an invented series of A -> B -> C (k1, k2) whose
// sample already holds some B when the reaction starts at t0, the time of
// the pre-th spectrum: [A]0 = 0.7, [B]0 = 0.3. The concentrations are the
// analytic first-order solution with an initial intermediate (Bateman 1910;
// Atkins' Physical Chemistry, consecutive reactions, from memory):
//
//	[A] = A0 e^{−k1 τ},  [B] = B0 e^{−k2 τ} + A0 k1/(k2 − k1) (e^{−k1 τ} − e^{−k2 τ}),
//	[C] = A0 + B0 − [A] − [B],  τ = t − t0.
//
// Each species has two bands of its own.
func newChainFromMixture(n, m, pre int) *seriesCase {
	c := &seriesCase{K: []float64{4e-3, 1e-3}}
	c.Times = make([]float64, n)
	for i := range c.Times {
		c.Times[i] = 30 * float64(i)
	}
	c.T0 = c.Times[pre-1]
	c.Axis = make([]float64, m)
	for j := range c.Axis {
		c.Axis[j] = 1900 - 800*float64(j)/float64(m-1)
	}
	const a0, b0 = 0.7, 0.3
	k1, k2 := c.K[0], c.K[1]
	c.Conc = mat.NewDense(n, 3, nil)
	for i, tm := range c.Times {
		tau := math.Max(0, tm-c.T0)
		a := a0 * math.Exp(-k1*tau)
		b := b0*math.Exp(-k2*tau) + a0*k1/(k2-k1)*(math.Exp(-k1*tau)-math.Exp(-k2*tau))
		c.Conc.SetRow(i, []float64{a, b, a0 + b0 - a - b})
	}
	c.Spectra = mat.NewDense(m, 3, nil)
	for j, x := range c.Axis {
		band := func(centre, width, height float64) float64 {
			d := (x - centre) / width
			return height * math.Exp(-0.5*d*d)
		}
		c.Spectra.Set(j, 0, band(1820, 12, 0.7)+band(1480, 20, 0.3))
		c.Spectra.Set(j, 1, band(1720, 14, 0.6)+band(1380, 22, 0.3))
		c.Spectra.Set(j, 2, band(1620, 14, 0.5)+band(1250, 22, 0.4))
	}
	return c
}

// A sample that already holds some intermediate when A -> B -> C starts:
// the scheme's default puts everything in A (the species no step forms),
// which the pre-reaction spectra contradict. With A's spectrum known (a
// measured reference, --known-spectrum) the resolved profiles show the
// mixture before t0; the pipeline must notice, compare the profile fits
// with both sets of initial concentrations, keep the better (the values
// the data were made from, 0.7 and 0.3), and say so with both residuals.
// The reported data fit recovers both rate constants within 3 % and 4
// standard errors of the analytic solution's (above). Forcing the default
// with --c0 A=1 makes the profile fit worse. A scheme that misses a
// species leaves a data-fit residual well above the noise, and a warning
// must say so. Noise is constant in counts on the single beams.
func TestKineticsInitialConcentrationsFromPreReactionProfiles(t *testing.T) {
	const pre = 5
	c := newChainFromMixture(150, 401, pre)
	dir := t.TempDir()
	series, blank := c.write(t, dir, 20, rand.New(rand.NewPCG(17, 19)))
	ref := output.Table{Header: []string{"wavenumber", "absorbance"}}
	for j, x := range c.Axis {
		ref.Rows = append(ref.Rows, []string{output.Float(x), output.Float(c.Spectra.At(j, 0))})
	}
	known := filepath.Join(dir, "a.csv")
	if err := os.WriteFile(known, ref.CSV(), 0o644); err != nil {
		t.Fatal(err)
	}
	run := func(model, c0, mapping string) *Result {
		s := NewSettings()
		s.Data, s.Kind, s.Blanks, s.Pre = []string{series}, "single-beam", []string{blank}, pre
		s.Components, s.Model, s.C0, s.Map, s.Report = "3", model, c0, mapping, "off"
		if err := s.Set("known-spectrum", "1="+known); err != nil {
			t.Fatal(err)
		}
		r, err := Run(s, nil)
		if err != nil {
			t.Fatal(err)
		}
		if r.Kinetics == nil || r.Kinetics.Find("data") == nil || r.Kinetics.Find("profiles") == nil {
			t.Fatalf("no profile or data fit; warnings %q", r.Warnings)
		}
		return r
	}

	r := run("A -> B -> C", "", "")
	kn := r.Kinetics
	noted := false
	for _, n := range r.Notes {
		noted = noted || strings.Contains(n, "before the reaction") && strings.Contains(n, "not the scheme's default [A]0 = 1") && strings.Contains(n, "fit better with them")
	}
	if !noted {
		t.Errorf("no note that the pre-reaction profiles contradict the default [A]0 = 1 and fit better; notes %q", r.Notes)
	}
	a, b := kn.Scheme.SpeciesIndex("A"), kn.Scheme.SpeciesIndex("B")
	if math.Abs(kn.C0[a]-0.7) > 0.03 || math.Abs(kn.C0[b]-0.3) > 0.03 {
		t.Errorf("initial concentrations from the profiles [A]0 = %.4f, [B]0 = %.4f, want 0.7 and 0.3 within 0.03", kn.C0[a], kn.C0[b])
	}
	data := kn.Find("data").Fit
	for j, truth := range c.K {
		t.Logf("%s: k = %.5g ± %.2g, truth %g", kn.Scheme.Steps[j].Text, data.K[j], data.KStdErr[j], truth)
		within(t, "data fit "+kn.Scheme.Steps[j].Text, data.K[j], data.KStdErr[j], truth, 4)
		if d := math.Abs(data.K[j]/truth - 1); d > 0.03 {
			t.Errorf("%s: k = %.5g is %.1f %% from the truth %g, want ≤ 3 %%", kn.Scheme.Steps[j].Text, data.K[j], 100*d, truth)
		}
	}
	for _, w := range r.Warnings {
		if strings.Contains(w, "times the noise") {
			t.Errorf("warning on a fit made under the model: %q", w)
		}
	}

	forced := run("A -> B -> C", "A=1", "")
	if got, want := forced.Kinetics.Find("profiles").Fit.SSR, kn.Find("profiles").Fit.SSR; !(got > 2*want) {
		t.Errorf("profile fit with the contradicted --c0 A=1: residual sum of squares %.4g, want well above %.4g (the profiles' own initial concentrations)", got, want)
	}

	short := run("A -> B", "", "A=1,B=2")
	warned := false
	for _, w := range short.Warnings {
		warned = warned || strings.Contains(w, "times the noise")
	}
	ratio := dataFitToNoise(short, short.Kinetics.Find("data").Fit)
	t.Logf("A -> B fitted to A -> B -> C data leaves %.3g times the noise", ratio)
	if !(ratio > 2) || !warned {
		t.Errorf("a scheme missing a species leaves %.3g times the noise but no warning says so; warnings %q", ratio, short.Warnings)
	}
}
