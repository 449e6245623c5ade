package pipeline

import (
	"fmt"
	"io"
	"math"
	"slices"
	"strings"

	"github.com/bandsolve/bandsolve/internal/pvalue"
	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/mcr/kinetics"
	"gonum.org/v1/gonum/mat"
)

// The data fit again with one noise level for every spectrum.
//
// When the spectra differ in noise (spectrumnoise.go) the data fit weights
// each by its own level: the maximum-likelihood fit when the model holds
// and the noise is all that separates it from the data. The fit with one
// level for every spectrum then estimates the same constants, less
// precisely. If the model holds, the difference of the two estimates has
// the variance V₁ − V_w (the efficient estimate is uncorrelated with its
// difference from any other consistent one), and z = Δk/√(V₁ − V_w) is
// standard normal: Hausman's specification test (Econometrica 46, 1251,
// 1978). A rate constant that moves further than that with the weights
// says the model does not describe the data, and the weighting then
// chooses among answers the noise does not separate: the standard error
// alone understates the uncertainty. On the real urethane series (catalyst
// 1.00, A -> B) k = 1.28e-3 ± 1.4e-4 s⁻¹ with each spectrum weighted,
// 1.64e-3 ± 2.0e-4 with one level: z = 4.2, p = 7e-4, where the kinetic
// model left 1.89 times the noise.
//
// V₁ − V_w is the difference of the true variances. Estimated, each with
// its own error (their noise levels measured apart, the sandwich's
// widening), the difference of the estimates can fall near zero or below
// it where the two are close: on invented absorbance series with three
// noise levels and the right model, 60 draws of 100 found it negative and
// 7 of the other 40 rejected (17.5 % at a 5 % test), one at z = 34 for a
// difference of 0.47 standard errors (4.0439 against 4.0435·10⁻⁷). So the
// variance of the difference is measured directly, from what each spectrum
// does to the two fits (kinetics.DifferenceErrors: the sandwich of the
// difference of their influences, on ln k), which is positive and carries
// the shared noise. Only where a fit holds no influences is V₁ − V_w taken,
// or V₁ + V_w (two independent estimates, larger: erring toward silence)
// where that is not positive.

// oneLevelRate is one step's constant from the fit with one noise level,
// with the test of its difference from the reported one.
type oneLevelRate struct {
	K, StdErr float64
	Z, P      float64
	Hausman   bool // the difference's variance measured directly or as V₁ − V_w (else V₁ + V_w)
	Tested    bool // both constants free and determined
	// DiffSE is the standard error z divides by when measured directly
	// (kinetics.DifferenceErrors): of ln(k₁/k_w) for a step, of the
	// difference for a sum; 0 otherwise. DF is its estimate's degrees of
	// freedom, of the t reference p is taken from.
	DiffSE, DF float64
}

// oneLevelFitted is the data fit made with one noise level per experiment:
// the fit, its spectra, and the weights each kept spectrum had (own) and
// was fitted with (level), kept for reportOneLevel.
type oneLevelFitted struct {
	fit        *kinetics.FitResult
	spectra    *mat.Dense
	own, level []float64
}

// oneLevelFit refits the data matrix with every spectrum of an experiment
// at the mean of its kept spectra's weights (only their ratios move the
// constants; experiments of several noise levels keep theirs), from the
// weighted fit's constants, and tests each step, and the sum of the
// constants the data determine only together (kf.OneLevelSum; nil when
// there is none). The fit is a dataFitJob of its own, not fitData's: the
// batch's scaled data and reductions are of the weights each spectrum has,
// and this fit must neither take nor leave them. Nothing is set when the
// spectra share one level or the weights are off.
func (kn *Kinetics) oneLevelFit(r *Result, kf *KineticFit) {
	dfit := kf.Fit
	if !weightsPerSpectrum(r) || !weighted(r) {
		return
	}
	opt := kn.dataOptions(r, kn.warm(dfit))
	own := opt.RowWeights
	opt.RowWeights = experimentMeans(r, own)
	opt.NoResidual = true
	times, d := kn.fitRows(r)
	job := &dataFitJob{kn: kn, r: r, times: times, d: d, opt: opt}
	job.run()
	if job.err != nil {
		return
	}
	f := job.fit
	kf.oneLevel = &oneLevelFitted{fit: f, spectra: job.spectra, own: own, level: opt.RowWeights}
	kf.OneLevel = make([]oneLevelRate, len(f.K))
	lnDiff, sumDiff, direct := kinetics.DifferenceErrors(f, dfit)
	for j := range kf.OneLevel {
		kf.OneLevel[j] = oneLevelRate{K: f.K[j], StdErr: f.KStdErr[j]}
		if kn.KFixed[j] || notDetermined(dfit, j) || notDetermined(f, j) {
			continue
		}
		if direct && lnDiff[j].SE > 0 && f.K[j] > 0 && dfit.K[j] > 0 {
			kf.OneLevel[j].testBy(math.Log(f.K[j]/dfit.K[j]), lnDiff[j])
			continue
		}
		kf.OneLevel[j].test(dfit.K[j], dfit.KStdErr[j])
	}
	if len(dfit.SumSteps) > 0 && slices.Equal(dfit.SumSteps, f.SumSteps) {
		kf.OneLevelSum = &oneLevelRate{K: f.SumK, StdErr: f.SumKStdErr}
		if direct && sumDiff.SE > 0 {
			kf.OneLevelSum.testBy(f.SumK-dfit.SumK, sumDiff)
		} else {
			kf.OneLevelSum.test(dfit.SumK, dfit.SumKStdErr)
		}
	}
}

// testBy records Hausman's z, diff over its standard error measured
// directly (kinetics.DifferenceErrors), and its two-sided p from Student's
// t with that estimate's degrees of freedom (t² is F(1, ν)).
func (o *oneLevelRate) testBy(diff float64, e kinetics.DifferenceError) {
	z := diff / e.SE
	o.Z, o.P, o.Hausman, o.Tested, o.DiffSE, o.DF = z, pvalue.FUpper(z*z, 1, e.DF), true, true, e.SE, e.DF
}

// test tests o against the weighted fit's k ± se (Hausman's z and its
// two-sided normal p) where the fits hold no influences to measure the
// difference's variance directly; untested when either error is not
// positive.
func (o *oneLevelRate) test(k, se float64) {
	if !(se > 0) || !(o.StdErr > 0) {
		return
	}
	vw, v1 := se*se, o.StdErr*o.StdErr
	v, hausman := v1-vw, true
	if !(v > 0) {
		v, hausman = v1+vw, false
	}
	z := (o.K - k) / math.Sqrt(v)
	o.Z, o.P, o.Hausman, o.Tested = z, math.Erfc(math.Abs(z)/math.Sqrt2), hausman, true
}

// experimentMeans gives each kept row (w has one value per keptRows entry)
// the mean of w over the kept rows of its experiment.
func experimentMeans(r *Result, w []float64) []float64 {
	rows := keptRows(r)
	sum, count := map[int]float64{}, map[int]float64{}
	exp := func(i int) int {
		if i < len(r.ExpOfRow) {
			return r.ExpOfRow[i]
		}
		return 0
	}
	for a, i := range rows {
		sum[exp(i)] += w[a]
		count[exp(i)]++
	}
	out := make([]float64, len(w))
	for a, i := range rows {
		out[a] = sum[exp(i)] / count[exp(i)]
	}
	return out
}

// rateWithError is a rate constant and its standard error.
type rateWithError struct{ K, StdErr float64 }

// reportOneLevel makes the data fit with one noise level per experiment
// (oneLevelFit's) the one reported, in place of kf's fit (each spectrum
// weighted by its own level), once oneLevelWarning found constants that the
// weights move beyond the noise. Hausman's test asks whether the efficient
// estimate is consistent; rejected, it is not, and the estimate consistent
// either way is the one to keep (Hausman 1978, section 2): the fit with one
// level does not lean on each spectrum's own level, which the model's
// misfit then steers. On the real urethane series (catalyst 1.00, A -> B)
// the N=C=O band area, the data set's independent measure, gives
// 1.67e-3 ± 1.0e-4 s⁻¹: the fit with each spectrum weighted said
// 1.28e-3 ± 1.4e-4 (2.8 of its standard errors away), the fit with one
// level 1.64e-3 ± 2.0e-4. The fit is oneLevelFit's, made in full (its
// spectra and figures); false when there is none, and the weighted fit
// stays.
func (kn *Kinetics) reportOneLevel(kf *KineticFit) bool {
	ol, dfit := kf.oneLevel, kf.Fit
	if ol == nil {
		return false
	}
	kf.EachWeighted = make([]rateWithError, len(dfit.K))
	for j := range dfit.K {
		kf.EachWeighted[j] = rateWithError{dfit.K[j], dfit.KStdErr[j]}
	}
	if len(dfit.SumSteps) > 0 {
		kf.EachWeightedSum = &rateWithError{dfit.SumK, dfit.SumKStdErr}
	}
	kf.ownToLevel = make([]float64, len(ol.own))
	for i, w := range ol.own {
		if ol.level[i] > 0 {
			kf.ownToLevel[i] = w / ol.level[i]
		}
	}
	kf.Fit, kf.Spectra = ol.fit, ol.spectra
	return true
}

// oneLevelReportedWords end the warning when the fit with one level is the
// one reported (reportOneLevel).
const oneLevelReportedWords = "; the constants reported are those with one noise level per experiment, which do not lean on each spectrum's own level (summary.json each_spectrum_weighted holds the others)"

// toNoise is the data fit's residual over the noise (dataFitToNoise); for
// the fit with one level reported it is taken with each spectrum's own
// noise, as for the other fits: √(Σ_i RSS_i w_i/w̄_i / ν), RSS_i the
// spectrum's residual in units of the level w̄_i it was fitted with.
func (kf *KineticFit) toNoise(r *Result) float64 {
	f := kf.Fit
	if kf.ownToLevel == nil || len(kf.ownToLevel) != len(f.RowSSR) || f.DegreesOfFreedom < 1 {
		return dataFitToNoise(r, f)
	}
	s := 0.0
	for i, ssr := range f.RowSSR {
		s += ssr * kf.ownToLevel[i]
	}
	return math.Sqrt(s/float64(f.DegreesOfFreedom)) * referenceScale(r)
}

// oneLevelWarning says which constants moved with the weights beyond what
// the noise allows, at --alpha shared by the steps tested (Bonferroni);
// "" when none did.
func (kn *Kinetics) oneLevelWarning(r *Result, dfit *kinetics.FitResult, ol []oneLevelRate, sum *oneLevelRate) string {
	tested := 0
	for _, o := range ol {
		if o.Tested {
			tested++
		}
	}
	if sum != nil && sum.Tested {
		tested++
	}
	if tested == 0 {
		return ""
	}
	level := r.Settings.Alpha / float64(tested)
	units := kn.rateUnits()
	var moved []string
	say := func(name, unit string, o oneLevelRate, k, se float64) {
		if o.Tested && o.P < level {
			moved = append(moved, fmt.Sprintf("%s %.3g ± %.2g %s with one noise level for every spectrum against %.3g ± %.2g with each weighted by its own, z = %.2f (%s)",
				name, o.K, o.StdErr, unit, k, se, o.Z, pvalue.Text(o.P)))
		}
	}
	for j, o := range ol {
		say(fmt.Sprintf("k%d (%s)", j+1, kn.Scheme.Steps[j].Text), units[j], o, dfit.K[j], dfit.KStdErr[j])
	}
	if sum != nil {
		say(determinedSum(dfit), units[dfit.SumSteps[0]], *sum, dfit.SumK, dfit.SumKStdErr)
	}
	if len(moved) == 0 {
		return ""
	}
	shared := ""
	if tested > 1 {
		shared = fmt.Sprintf(", --alpha %g shared by the %d constants tested", r.Settings.Alpha, tested)
	}
	return fmt.Sprintf("the rate constants depend on how the spectra are weighted: %s; further apart than noise alone moves them (Hausman's test of the difference, 1978, at level %.3g%s). Were the model right, both weightings would estimate the same constants and differ only in precision: the model's misfit, not the noise, limits them here, so the standard errors understate the uncertainty and the spread between the two is part of it (summary.json one_noise_level)",
		strings.Join(moved, "; "), level, shared)
}

// oneLevelJSON is summary.json's one_noise_level of the data fit (nil
// when it was not made); reported when its constants are the fit's own.
func (kn *Kinetics) oneLevelJSON(ol []oneLevelRate, sum *oneLevelRate, terms string, reported bool) *output.OneNoiseLevelJSON {
	if ol == nil {
		return nil
	}
	out := &output.OneNoiseLevelJSON{Reported: reported, Test: "Hausman (1978): z = ln(k_one_level / k_each_weighted) / stderr_of_log_ratio (a determined sum: its difference / stderr_of_difference_per_s), the standard error of the difference measured directly from what each spectrum does to both fits (the sandwich of the difference of their influences; Cameron & Trivedi 2005, §8.4), two-sided p of Student's t with degrees_of_freedom (Satterthwaite 1946); where the fits hold none, (k_one_level − k_each_weighted) / √(V_one_level − V_each_weighted), or / √(V_one_level + V_each_weighted) where that is not positive (hausman false); two-sided normal p"}
	for j, o := range ol {
		rc := output.OneLevelRate{Step: kn.Scheme.Steps[j].Text, K: round(finite(o.K)), StdErr: round(finite(o.StdErr)), NotTested: !o.Tested}
		if o.Tested {
			rc.Z, rc.PValue, rc.Hausman, rc.LogRatioStdErr, rc.DegreesOfFreedom = round(o.Z), round(o.P), o.Hausman, round(o.DiffSE), round(o.DF)
		}
		out.RateConstants = append(out.RateConstants, rc)
	}
	if sum != nil {
		out.DeterminedSum = &output.OneLevelRate{Step: terms, K: round(finite(sum.K)), StdErr: round(finite(sum.StdErr)), NotTested: !sum.Tested}
		if sum.Tested {
			out.DeterminedSum.Z, out.DeterminedSum.PValue, out.DeterminedSum.Hausman = round(sum.Z), round(sum.P), sum.Hausman
			out.DeterminedSum.DifferenceStdErr, out.DeterminedSum.DegreesOfFreedom = round(sum.DiffSE), round(sum.DF)
		}
	}
	return out
}

// eachWeightedJSON is summary.json's each_spectrum_weighted (nil unless the
// fit with one level is reported).
func (kn *Kinetics) eachWeightedJSON(ew []rateWithError, sum *rateWithError, terms string) *output.EachWeightedJSON {
	if ew == nil {
		return nil
	}
	out := &output.EachWeightedJSON{}
	for j, e := range ew {
		out.RateConstants = append(out.RateConstants, output.StepRate{Step: kn.Scheme.Steps[j].Text, K: round(finite(e.K)), StdErr: round(finite(e.StdErr))})
	}
	if sum != nil {
		out.DeterminedSum = &output.StepRate{Step: terms, K: round(finite(sum.K)), StdErr: round(finite(sum.StdErr))}
	}
	return out
}

// printEachWeighted says under a data fit made with one noise level per
// experiment (reportOneLevel) that it was, and gives the constants of the
// fit with each spectrum weighted by its own level beside it.
func (kn *Kinetics) printEachWeighted(f *KineticFit, tu shownTime, w io.Writer) {
	if f.EachWeighted == nil {
		return
	}
	var each []string
	for j, e := range f.EachWeighted {
		k, unit := tu.Rate(e.K, kn.rateUnit(kn.Scheme.Steps[j].Order))
		se, _ := tu.Rate(e.StdErr, "")
		each = append(each, fmt.Sprintf("%s k = %.4g ± %.2g %s", kn.Scheme.Steps[j].Text, k, se, unit))
	}
	fmt.Fprintf(w, "\n    %-13s one noise level per experiment (the weights moved the constants beyond the noise)", "")
	fmt.Fprintf(w, "\n    %-13s each spectrum weighted by its own: %s", "", strings.Join(each, "; "))
}
