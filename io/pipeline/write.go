package pipeline

import (
	"fmt"
	"io"
	"strconv"
	"strings"

	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// Types of summary.json, defined in io/output so that the report reads
// the file with the same types the run writes it with.
type (
	Summary       = output.Summary
	CriterionJSON = output.CriterionJSON
	BandJSON      = output.BandJSON
	KineticsJSON  = output.KineticsJSON
	RateConstant  = output.RateConstant
)

// round keeps summary numbers to 10 significant digits, as the CSVs do.
func round(v float64) float64 {
	f, _ := strconv.ParseFloat(output.Float(v), 64)
	return f
}

// MakeSummary fills summary.json's content from a result.
func MakeSummary(r *Result) *Summary {
	n, m := r.D.Dims()
	rtn, _ := residualToNoise(r) // the terminal's headline, weighted or not
	s := &Summary{
		Tool:                     "bandsolve " + Version,
		RankEstimate:             r.Rank.Estimate,
		Components:               r.Components,
		Mode:                     r.Mode.String(),
		ModeReason:               r.ModeReason,
		LackOfFitPercent:         round(r.LackOfFit),
		ExplainedVariancePercent: round(r.Explained),
		NoiseLackOfFitPercent:    round(r.NoiseLOF),
		NoiseSigma:               round(r.NoiseSigma),
		NoiseSource:              r.NoiseSource,
		ResidualToNoise:          round(rtn),
		NoiseDegreesOfFreedom:    round(r.ReferenceNoiseDOF()),
		ResidualToNoiseLimit:     round(r.misfit.Limit),
		ResidualToNoiseAllowance: round(r.misfit.Allowance),
		NoiseWeights:             "off",
		NoiseEdge:                round(r.Rank.NoiseEdge),
		RankReason:               r.Rank.Reason,
		SVDMethod:                r.Factors.Method,
		Compressed:               r.Compressed,
		InitialEstimate:          r.Init,
		Closure:                  "off",
		Spectra:                  n,
		Points:                   m,
		Axis:                     r.AxisName,
		ComponentNames:           nonNil(r.Names),
		UniquenessRanges:         []BandJSON{},
		FeasibleBands:            []BandJSON{},
		Baseline:                 baselineName(r.BaselineOrder),
		BaselineReason:           r.BaselineReason,
		OutlierSpectra:           setAsideSummary(r),
		SpectrumNoise:            spectrumNoiseSummary(r),
		NuisanceFactors:          nuisanceSummary(r),
		MinorSpecies:             minorSpeciesSummary(r),
		Advice:                   nonNil(r.Advice),
		Notes:                    nonNil(r.Notes),
		Warnings:                 nonNil(r.Warnings),
		WaterVapour:              vapourSummary(r),
	}
	if r.Mode.String() == "species" && r.Settings.Closure != "off" {
		s.Closure = r.Settings.Closure
	}
	if cr := r.Chemical; cr != nil {
		above, noise := cr.Examined, cr.NoiseLike
		s.FactorsAboveNoise, s.NoiseLikeFactors = &above, &noise
		s.NoiseWhiteFactors = cr.NoiseWhite
	}
	if r.KineticsErr != nil {
		s.KineticsNotDone = r.KineticsErr.Error()
	}
	for _, e := range r.Experiments {
		s.Experiments = append(s.Experiments, e.Source)
	}
	if weighted(r) {
		s.NoiseWeights = "noise"
	}
	if r.Blind != nil {
		s.BlindPoints = r.Blind.Count
	}
	constraintSummary(r, s)
	for _, c := range r.Rank.Criteria {
		s.RankCriteria = append(s.RankCriteria, CriterionJSON{Name: c.Name, Estimate: c.Estimate, AtLeast: c.AtLeast, Source: c.Source, Detail: c.Detail})
	}
	if r.DiffRank != nil {
		v := r.DiffRank.Estimate
		s.DifferenceRank = &v
		s.DifferenceRankReason = differenceRankReason(r)
	}
	if r.Kinetics != nil {
		s.Kinetics = kineticsSummary(r)
	}
	if r.EFA != nil {
		s.EFA = r.EFA.summary(r)
	}
	if r.ALS != nil {
		s.Iterations, s.Converged = r.ALS.Iterations, r.ALS.Converged
	} else {
		s.Converged = true
	}
	return s
}

func nonNil(x []string) []string {
	if x == nil {
		return []string{}
	}
	return x
}

// WriteResults writes every result file into the stage.
func WriteResults(r *Result, st *output.Stage) error {
	k := r.Components
	// spectra.csv: axis column named as the input's axis. Written cell by
	// cell (output.CSV: Table.CSV's bytes without a string per cell).
	{
		var w output.CSV
		w.Grow((len(r.Axis) + 1) * (k + 1) * 16)
		w.Row(append([]string{r.AxisName}, r.Names...))
		s := writtenSpectra(r)
		for i, x := range r.Axis {
			w.Float(x)
			for j := 0; j < k; j++ {
				w.Float(s.At(i, j))
			}
			w.End()
		}
		if err := st.Write("spectra.csv", w.Bytes()); err != nil {
			return err
		}
	}
	// profiles.csv: time in seconds; an experiment column with several.
	{
		multi := len(r.Experiments) > 1
		h := []string{"time"}
		if multi {
			h = []string{"experiment", "time"}
		}
		var w output.CSV
		w.Grow((len(r.Times) + 1) * (k + 2) * 16)
		w.Row(append(h, r.Names...))
		for i, tm := range r.Times {
			if multi {
				w.Int(r.ExpOfRow[i] + 1)
			}
			w.Float(tm)
			for j := 0; j < k; j++ {
				w.Float(r.ALS.C.At(i, j))
			}
			w.End()
		}
		if err := st.Write("profiles.csv", w.Bytes()); err != nil {
			return err
		}
	}
	if err := st.Write("singular_values.csv", singularTable(r.Factors, r.Rank, r.BaselineOrder).CSV()); err != nil {
		return err
	}
	if err := st.Write("rank.csv", rankTable(r.Rank).CSV()); err != nil {
		return err
	}
	if r.ALS != nil {
		if err := st.Write("iterations.csv", iterationsTable(r).CSV()); err != nil {
			return err
		}
	}
	if r.Kinetics != nil && r.Kinetics.Reported() != nil {
		t, err := kineticsTable(r)
		if err != nil {
			return err
		}
		if err := st.Write("kinetics.csv", t.CSV()); err != nil {
			return err
		}
	}
	sum, err := output.JSON(MakeSummary(r))
	if err != nil {
		return err
	}
	return st.Write("summary.json", sum)
}

// iterationsTable is iterations.csv: each accepted iteration under its own
// number, so the last row is the iteration count of summary.json (undone
// extrapolations leave gaps).
func iterationsTable(r *Result) output.Table {
	t := output.Table{Header: []string{"iteration", "lack_of_fit_percent"}}
	for i, v := range r.ALS.History {
		at := i + 1
		if i < len(r.ALS.HistoryAt) {
			at = r.ALS.HistoryAt[i]
		}
		t.Rows = append(t.Rows, []string{strconv.Itoa(at), output.Float(v)})
	}
	return t
}

func singularTable(f *svd.Factors, rank *svd.RankReport, baselineOrder int) output.Table {
	t := output.Table{Header: []string{"factor", "singular_value", "above_noise_edge"}}
	yes := func(v float64) string {
		if v > rank.Threshold {
			return "yes"
		}
		return "no"
	}
	projected := baselineOrder >= 0 && len(rank.Singular) > 0
	if projected {
		// The rank text counts these (svd.RankReport.Singular); the first
		// columns keep their meaning, the data as given.
		t.Header = append(t.Header, "singular_value_without_baseline", "above_noise_edge_without_baseline")
	}
	for i, v := range f.S {
		row := []string{strconv.Itoa(i + 1), output.Float(v), yes(v)}
		if projected {
			row = append(row, "", "")
			if i < len(rank.Singular) {
				row[3], row[4] = output.Float(rank.Singular[i]), yes(rank.Singular[i])
			}
		}
		t.Rows = append(t.Rows, row)
	}
	return t
}

func rankTable(rk *svd.RankReport) output.Table {
	t := output.Table{Header: []string{"k", "singular_value", "re", "ind", "f_significance", "autocorr_time", "autocorr_spectrum", "above_noise_edge", "reference_pattern"}}
	yn := func(b bool) string {
		if b {
			return "yes"
		}
		return "no"
	}
	for _, c := range rk.Table {
		t.Rows = append(t.Rows, []string{strconv.Itoa(c.K), output.Float(c.SingularValue), output.Float(c.RE), output.Float(c.IND),
			output.Float(c.FSignificance), output.Float(c.AutocorrU), output.Float(c.AutocorrV), yn(c.AboveNoiseEdge), yn(c.ReferencePattern)})
	}
	return t
}

// residualToNoise is the residual's root mean square per degree of freedom
// over the noise σ: lack of fit ÷ the lack of fit noise alone would give,
// √(‖D − C Sᵀ‖² / (σ² (nm − k(n+m−k)))). 1 means the model explains all but
// the noise; above 1, something systematic is left; well below 1, σ is
// overestimated (or the model fits the noise).
func residualToNoise(r *Result) (float64, bool) {
	if r.ResidualToNoise > 0 {
		return r.ResidualToNoise, true // the noise-weighted √(χ²/ν), ν = NoiseDOF
	}
	if r.NoiseLOF <= 0 {
		return 0, false
	}
	return r.LackOfFit / r.NoiseLOF, true
}

// unweightedWord names the headline lack of fit as unweighted when the
// constraint lines below it quote a weighted one.
func unweightedWord(r *Result) string {
	if weighted(r) {
		return "unweighted; "
	}
	return ""
}

// PrintTable writes the short human summary to w; explained variance is in
// summary.json and the report only (it reads near 100 % for any fit).
func PrintTable(r *Result, w io.Writer) {
	n, m := r.D.Dims()
	fmt.Fprintf(w, "data           %d spectra × %d points (%s)\n", n, m, r.AxisName)
	fmt.Fprintf(w, "mode           %s\n", r.ModeReason)
	fmt.Fprintf(w, "noise σ        %.3g (%s)\n", r.NoiseSigma, r.NoiseSource)
	var crit []string
	for _, c := range r.Rank.Criteria {
		crit = append(crit, output.CriterionText(c.Name, c.Estimate, c.AtLeast))
	}
	fmt.Fprintf(w, "rank           %d%s\n", r.Rank.Estimate, rankDetail(r, crit))
	if r.DiffRank != nil {
		fmt.Fprintf(w, "rank of ΔA     %d\n", r.DiffRank.Estimate)
	}
	fmt.Fprintf(w, "components     %d\n", r.Components)
	fmt.Fprintf(w, "baseline       %s\n", baselineName(r.BaselineOrder))
	tu := shownTimeUnit(r.Settings)
	for _, o := range setAsideSummary(r) {
		fmt.Fprintf(w, "set aside      t = %s %s (%s): %s\n", tu.T(o.Time), tu.Unit, o.Source, o.Reason)
	}
	if r.ALS != nil {
		conv := "converged"
		if !r.ALS.Converged {
			conv = "NOT converged"
		}
		if q, ok := residualToNoise(r); ok {
			fmt.Fprintf(w, "fit            residual %.3g × the noise  (1.0 = fits to the noise)\n", q)
		}
		fmt.Fprintf(w, "lack of fit    %.4g %%  (%snoise alone: %.3g %%)\n", r.LackOfFit, unweightedWord(r), r.NoiseLOF)
		fmt.Fprintf(w, "iterations     %d, %s\n", r.ALS.Iterations, conv)
		for j, name := range r.Names {
			col := mat.Col(nil, j, r.ALS.C)
			mx, at := 0.0, 0
			for i, v := range col {
				if v > mx {
					mx, at = v, i
				}
			}
			fmt.Fprintf(w, "  %-12s profile max %.4g at t = %s %s\n", name, mx, tu.T(r.Times[at]), tu.Unit)
		}
	}
	printConstraints(r, w)
	if r.Kinetics != nil {
		printKinetics(r, w)
	}
	// Warnings first: they say when a figure above cannot be trusted.
	for _, a := range r.Warnings {
		fmt.Fprintf(w, "warning: %s\n", a)
	}
	for _, a := range r.Advice {
		fmt.Fprintf(w, "advice: %s\n", a)
	}
	for _, a := range r.Notes {
		fmt.Fprintf(w, "note: %s\n", a)
	}
}

// rankDetail says, beside the chemical count, what the criteria's larger counts hold:
// the nuisance factors by number (described in the advice) and the factors that are noise
// correlated along the axis, so that "noise-floor 12" beside 2 is not read as 12 species.
func rankDetail(r *Result, crit []string) string {
	cr := r.Chemical
	if cr == nil || (len(cr.Nuisance) == 0 && cr.NoiseLike == 0) {
		return "  (" + strings.Join(crit, ", ") + ")"
	}
	var parts []string
	if len(cr.Nuisance) > 0 {
		var fs []string
		for _, nf := range cr.Nuisance {
			fs = append(fs, strconv.Itoa(nf.Factor))
		}
		parts = append(parts, fmt.Sprintf("factor(s) %s not chemistry, see the advice", strings.Join(fs, ", ")))
	}
	if cr.NoiseLike > 0 {
		parts = append(parts, fmt.Sprintf("%d more above the white-noise level are noise correlated along the axis", cr.NoiseLike))
	}
	return fmt.Sprintf(" chemical  (%s; the criteria count every factor above the noise: %s)", strings.Join(parts, "; "), strings.Join(crit, ", "))
}
