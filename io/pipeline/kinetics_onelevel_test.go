package pipeline

import (
	"fmt"
	"gonum.org/v1/gonum/stat/distuv"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
)

// spacedSeries writes an invented absorbance series A -> B on two Gaussian
// bands: 20 spectra 20 s apart, 20 at 40 s, 20 at 80 s, each interval
// averaging twice the scans of the one before, so the noise falls by √2
// each time (σ 4e-4, 2.83e-4, 2e-4 absorbance, white; the scan-averaging
// law, common practice), as on the real urethane series. A's profile is
// first order, e^(−kt), or second order, 1/(1 + 2kt) for 2A -> B (the
// integrated rate laws, IUPAC Gold Book "order of reaction"), and B = 1 − A.
func spacedSeries(t *testing.T, k float64, second bool, seed uint64) string {
	t.Helper()
	var times, sig []float64
	tm := 0.0
	for blk, step := range []float64{20, 40, 80} {
		for i := 0; i < 20; i++ {
			times = append(times, tm)
			sig = append(sig, 4e-4/math.Pow(math.Sqrt2, float64(blk)))
			tm += step
		}
	}
	var axis []float64
	for x := 2200.0; x >= 1200; x -= 2 {
		axis = append(axis, x)
	}
	band := func(x, c, w float64) float64 { return math.Exp(-0.5 * (x - c) * (x - c) / (w * w)) }
	rng := rand.New(rand.NewPCG(seed, 29))
	head := []string{"wavenumber"}
	for _, v := range times {
		head = append(head, output.Float(v))
	}
	cols := make([][]float64, len(times))
	for i, v := range times {
		a := math.Exp(-k * v)
		if second {
			a = 1 / (1 + 2*k*v)
		}
		cols[i] = make([]float64, len(axis))
		for j, x := range axis {
			d := a*0.8*band(x, 1700, 12) + (1-a)*(0.6*band(x, 1560, 15)+0.2*band(x, 1690, 20))
			cols[i][j] = d + sig[i]*rng.NormFloat64()
		}
	}
	tab := output.Table{Header: head}
	for j, x := range axis {
		row := []string{output.Float(x)}
		for i := range times {
			row = append(row, output.Float(cols[i][j]))
		}
		tab.Rows = append(tab.Rows, row)
	}
	p := filepath.Join(t.TempDir(), "series.csv")
	if err := os.WriteFile(p, tab.CSV(), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// oneLevelRun resolves spacedSeries with the model A -> B and returns the
// run and its data fit.
func oneLevelRun(t *testing.T, second bool, seed uint64) (*Result, *KineticFit) {
	t.Helper()
	s := NewSettings()
	s.Data, s.Kind, s.Model = []string{spacedSeries(t, 2e-3, second, seed)}, "absorbance", "A -> B"
	s.Report, s.Checks, s.Bands = "off", "off", "off"
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !weightsPerSpectrum(r) {
		t.Fatalf("seed %d: the spectra were not weighted each by its own noise (made with three levels, ratio 2)", seed)
	}
	d := r.Kinetics.Find("data")
	if d == nil || len(d.OneLevel) != 1 || !d.OneLevel[0].Tested {
		t.Fatalf("seed %d: no fit with one noise level: %+v", seed, d)
	}
	return r, d
}

const weightsWarning = "depend on how the spectra are weighted"

// When the model is the one the data were made with (first order), the
// fit with one noise level estimates the same constant: Hausman's z
// (Econometrica 1978) is standard normal, within ±3 on each of three
// draws, and nothing is said. The figures in summary.json are the fits'
// own, and z and p are recomputed from them by their definitions,
// ln(k₁/k)/se(ln(k₁/k)) and the two-sided tail of Student's t with the
// degrees of freedom given (gonum's distuv.StudentsT).
func TestOneNoiseLevelQuietWhenTheModelHolds(t *testing.T) {
	for seed := uint64(1); seed <= 3; seed++ {
		r, d := oneLevelRun(t, false, seed)
		if hasWarning(r, weightsWarning) || d.EachWeighted != nil {
			t.Errorf("seed %d: warned for a model that holds, or reported the fit with one level: %q", seed, r.Warnings)
		}
		o := d.OneLevel[0]
		if math.Abs(o.Z) > 3 || !o.Hausman {
			t.Errorf("seed %d: z = %.3g (Hausman form %v); want |z| ≤ 3 for the true model", seed, o.Z, o.Hausman)
		}
		if math.Abs(o.K-2e-3) > 4*o.StdErr {
			t.Errorf("seed %d: one-level k = %.6g ± %.2g; the data were made with 2e-3", seed, o.K, o.StdErr)
		}
		j := MakeSummary(r).Kinetics.Fits
		var ol *output.OneNoiseLevelJSON
		for _, f := range j {
			if f.Method == "data" {
				ol = f.OneNoiseLevel
			}
		}
		if ol == nil || len(ol.RateConstants) != 1 {
			t.Fatalf("seed %d: summary has no one_noise_level of the data fit", seed)
		}
		rc, k := ol.RateConstants[0], d.Fit.K[0]
		z := math.Log(rc.K/k) / rc.LogRatioStdErr
		// The written figures carry ten digits; the difference of two
		// close constants and of two close variances loses about five.
		p := 2 * (1 - distuv.StudentsT{Mu: 0, Sigma: 1, Nu: rc.DegreesOfFreedom}.CDF(math.Abs(rc.Z)))
		if math.Abs(z-rc.Z) > 1e-4*math.Max(1, math.Abs(z)) || math.Abs(rc.PValue-p) > 1e-7 {
			t.Errorf("seed %d: summary z %.9g, p %.9g; recomputed z %.9g, p %.9g (t with %g degrees of freedom)", seed, rc.Z, rc.PValue, z, p, rc.DegreesOfFreedom)
		}
	}
}

// Under the model the data were made with, Hausman's test at level 0.05
// rejects in 5 % of draws (the definition of a test's level). The
// variance of the difference taken as V₁ − V_w, each estimated apart,
// rejected 7 of 40 draws where it was positive on such series (field
// trial), one at z = 34 for a difference of 0.47 standard errors; measured
// directly with its t reference, 7 of 200 draws here (3.5 %). Sixty draws:
// at most 8 rejections (the binomial(60, 0.05) tail beyond is 0.2 %).
func TestOneNoiseLevelTestHoldsItsLevel(t *testing.T) {
	rejected := 0
	for seed := uint64(1); seed <= 60; seed++ {
		_, d := oneLevelRun(t, false, seed)
		if o := d.OneLevel[0]; o.P < 0.05 {
			rejected++
			t.Logf("seed %d: z = %.3g, p = %.3g (t with %.3g degrees of freedom)", seed, o.Z, o.P, o.DF)
		}
	}
	t.Logf("%d of 60 draws rejected at 0.05", rejected)
	if rejected > 8 {
		t.Errorf("%d of 60 draws of a model that holds rejected at 0.05; want about 3, at most 8", rejected)
	}
}

// Data of second order (2A -> B) fitted as first order: the apparent
// first-order constant falls as A is used up (the integrated laws), so the
// fit that trusts the late, quieter spectra more gives a lower constant
// than the fit with one level (2.48e-3–2.52e-3 against 2.77e-3 on three
// draws, z 3.9–4.2), and the run says the weights move it beyond the noise.
// Hausman's test rejecting the efficient fit, the consistent one is
// reported (Hausman 1978, §2): the data fit's constants are those with one
// level, the fit with each spectrum weighted given beside them, in
// summary.json as in the run.
func TestOneNoiseLevelWarnsForAWrongOrder(t *testing.T) {
	for seed := uint64(1); seed <= 3; seed++ {
		r, d := oneLevelRun(t, true, seed)
		if !hasWarning(r, weightsWarning) || !hasWarning(r, "the constants reported are those with one noise level") {
			t.Errorf("seed %d: no warning that says which fit is reported: %q", seed, r.Warnings)
		}
		o := d.OneLevel[0]
		t.Logf("seed %d: z = %.3g, p = %.3g on %.3g degrees of freedom", seed, o.Z, o.P, o.DF)
		if len(d.EachWeighted) != 1 {
			t.Fatalf("seed %d: the fit with one level is not reported (each weighted %v)", seed, d.EachWeighted)
		}
		if ew := d.EachWeighted[0]; !(o.K > ew.K) {
			t.Errorf("seed %d: one-level k %.6g not above the weighted %.6g", seed, o.K, ew.K)
		}
		if d.Fit.K[0] != o.K || d.Fit.KStdErr[0] != o.StdErr {
			t.Errorf("seed %d: reported k %.9g ± %.3g; the fit with one level gave %.9g ± %.3g", seed, d.Fit.K[0], d.Fit.KStdErr[0], o.K, o.StdErr)
		}
		var fj *KineticFitJSON
		sum := MakeSummary(r).Kinetics
		for i := range sum.Fits {
			if sum.Fits[i].Method == "data" {
				fj = &sum.Fits[i]
			}
		}
		var term strings.Builder
		printKinetics(r, &term)
		if want := fmt.Sprintf("each spectrum weighted by its own: A -> B k = %.4g ± %.2g s^-1", d.EachWeighted[0].K, d.EachWeighted[0].StdErr); !strings.Contains(term.String(), want) || !strings.Contains(term.String(), "one noise level per experiment") {
			t.Errorf("seed %d: the terminal does not say which fit is reported (%q):\n%s", seed, want, term.String())
		}
		if fj == nil || fj.OneNoiseLevel == nil || !fj.OneNoiseLevel.Reported || fj.EachSpectrumWeighted == nil || fj.EachSpectrumWeighted.RateConstants[0].K != round(d.EachWeighted[0].K) || sum.RateConstants[0].K != round(o.K) {
			t.Errorf("seed %d: summary.json does not say the one-level fit is reported with the other beside it: %+v", seed, fj)
		}
	}
}

// The real urethane series at catalyst 1.00 (realUrethane: jevandezande/
// spectra, MIT) resolved with the model A -> B: the rate constant reported
// is within 2 standard errors of the one fitted to the data set's
// independent measure, the N=C=O band area (its README; y = a e^(−kt) + c by
// least squares, firstOrderRate: 1.67e-3 s⁻¹). The spectra differ in noise
// (each weighted by its own level, spectrumnoise.go); the fit so weighted
// gave 1.28e-3 ± 1.4e-4, 2.8 standard errors from it, and moved beyond the
// noise from the fit with one level, 1.64e-3 ± 2.0e-4 (Hausman's z 2.47),
// which is now the one reported.
func TestUrethaneRateAgreesWithTheIsocyanateArea(t *testing.T) {
	dir, ser, area := realUrethaneSeries(t, "catalyst-1.00")
	want := firstOrderRate(ser.Times, area)
	r := resolveFolder(t, dir, "A -> B")
	d := r.Kinetics.Reported()
	if d == nil || d.Method != "data" {
		t.Fatalf("the data fit is not the one reported: %+v", d)
	}
	t.Logf("k = %.4g ± %.2g s⁻¹ (each spectrum weighted: %v); from the N=C=O area %.4g s⁻¹", d.Fit.K[0], d.Fit.KStdErr[0], d.EachWeighted, want)
	within(t, "A -> B", d.Fit.K[0], d.Fit.KStdErr[0], want, 2)
}
