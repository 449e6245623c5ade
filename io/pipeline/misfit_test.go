package pipeline

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The limits are the standard tables' points: χ²_{0.95}(10) = 18.307 and
// F_{0.95}(10, 20) = 2.348 (NIST/SEMATECH e-Handbook of Statistical Methods,
// tables 1.3.6.7.4 and 1.3.6.7.3), square-rooted as √(χ²/ν) is.
func TestMisfitLimitIsTheTablesPoint(t *testing.T) {
	if got, want := misfitLimit(10, math.Inf(1), 0.05), math.Sqrt(18.307/10); math.Abs(got-want) > 1e-4 {
		t.Errorf("χ² limit %.6f, want %.6f (table)", got, want)
	}
	if got, want := misfitLimit(10, 20, 0.05), math.Sqrt(2.348); math.Abs(got-want) > 1e-3 {
		t.Errorf("F limit %.6f, want %.6f (table)", got, want)
	}
	// The p-value at the limit is alpha (the definition of the quantile).
	if p := misfitP(misfitLimit(500, 3000, 0.05), 500, 3000); math.Abs(p-0.05) > 1e-6 {
		t.Errorf("p at the limit %.8f, want 0.05", p)
	}
}

// misfitSeries is the two-species Bateman series (analytic) recorded as single
// beams with noise of 4 counts at every point (a detector's, common practice)
// on a source whose light falls to about 2 % of its peak at the ends of the
// axis, where absorbance is then some 40 times noisier, against a blank
// co-added from 64 scans (noise 0.5 counts; a background is averaged longer
// than a sample scan, common practice: a blank as noisy as one scan leaves
// its pattern in every spectrum, which non-negative spectra clip where they
// are zero, a real misfit of about 9 % of the noise here); and, when h > 0, a
// transient band of height h at 1550 cm⁻¹ that no two-component model holds
// (Gaussian in time about t = 1800 s).
func misfitSeries(t *testing.T, h float64) *Settings {
	d := makeBateman(t, 2e-3, 1e-9, 2e-4, 5, 2)
	n, m := d.beams.Dims()
	rng := rand.New(rand.NewPCG(7, 8))
	env := make([]float64, m)
	for j, x := range d.axis {
		u := (x - 1500) / 150
		env[j] = 2e4 * (0.005 + math.Exp(-u*u))
		d.blank[j] = env[j] + 0.5*rng.NormFloat64()
	}
	var a mat.Dense
	a.Mul(d.profiles, d.spectra.T())
	for i := 0; i < n; i++ {
		u := (d.times[i] - 1800) / 300
		for j := 0; j < m; j++ {
			w := (d.axis[j] - 1550) / 10
			x := a.At(i, j) + h*math.Exp(-u*u-w*w)
			d.beams.Set(i, j, env[j]*math.Pow(10, -x)+4*rng.NormFloat64())
		}
	}
	series, blank := d.write(t)
	s := NewSettings()
	s.Data, s.Kind, s.Blanks, s.Pre = []string{series}, "single-beam", []string{blank}, 3
	s.Components, s.Report = "2", "off"
	return s
}

// A transient band the model cannot hold leaves a noise-weighted residual
// many times the noise, while the noisy edge channels keep the unweighted
// lack of fit within 3 times its noise-alone value (the old test, which said
// nothing); a warning must say it, quoting the weighted figure. Without the
// band the same data fit within the limit and nothing is said.
func TestMisfitWarnedOnTheWeightedResidual(t *testing.T) {
	r, err := Run(misfitSeries(t, 8e-3), nil)
	if err != nil {
		t.Fatal(err)
	}
	q, _ := residualToNoise(r)
	t.Logf("q %.3g limit %.4g lof %.4g noise lof %.4g", q, r.misfit.Limit, r.LackOfFit, r.NoiseLOF)
	if r.LackOfFit > 3*r.NoiseLOF {
		t.Fatalf("lack of fit %.3g %% beside %.3g %% of noise: the case is not one the unweighted ratio misses", r.LackOfFit, r.NoiseLOF)
	}
	if !(q > 2) || !anyContains(r.Warnings, "the fit's residual is") || !anyContains(r.Warnings, "weighted by the noise") {
		t.Errorf("residual %.3g times the noise, warnings %q: want one quoting the weighted figure", q, r.Warnings)
	}
	clean, err := Run(misfitSeries(t, 0), nil)
	if err != nil {
		t.Fatal(err)
	}
	q, _ = residualToNoise(clean)
	t.Logf("clean q %.4g limit %.4g", q, clean.misfit.Limit)
	if q > clean.misfit.Limit || anyContains(clean.Warnings, "the fit's residual is") || anyContains(clean.Notes, "the fit's residual is") {
		t.Errorf("the model's own data: residual %.4g times the noise (limit %.4g), warnings %q", q, clean.misfit.Limit, clean.Warnings)
	}
}

var _ = strings.Contains
