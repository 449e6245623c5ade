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

// Summary is summary.json. Key names are part of the public contract.
type Summary struct {
	Tool                     string          `json:"tool"`
	RankEstimate             int             `json:"rank_estimate"`
	Components               int             `json:"components"`
	Mode                     string          `json:"mode"`
	ModeReason               string          `json:"mode_reason"`
	LackOfFitPercent         float64         `json:"lack_of_fit_percent"`
	ExplainedVariancePercent float64         `json:"explained_variance_percent"`
	NoiseLackOfFitPercent    float64         `json:"noise_lack_of_fit_percent"`
	Iterations               int             `json:"iterations"`
	Converged                bool            `json:"converged"`
	NoiseSigma               float64         `json:"noise_sigma"`
	NoiseSource              string          `json:"noise_source"`
	NoiseEdge                float64         `json:"noise_edge"`
	RankReason               string          `json:"rank_reason"`
	RankCriteria             []CriterionJSON `json:"rank_criteria"`
	DifferenceRank           *int            `json:"difference_rank_estimate,omitempty"`
	SVDMethod                string          `json:"svd_method"`
	Compressed               bool            `json:"compressed_iterations"`
	InitialEstimate          string          `json:"initial_estimate"`
	Closure                  string          `json:"closure"`
	Spectra                  int             `json:"spectra"`
	Points                   int             `json:"points"`
	Axis                     string          `json:"axis"`
	Experiments              []string        `json:"experiments"`
	ComponentNames           []string        `json:"component_names"`
	FeasibleBands            []BandJSON      `json:"feasible_bands"`
	Kinetics                 *KineticsJSON   `json:"kinetics,omitempty"`
	EFA                      *EFAJSON        `json:"efa,omitempty"`
	Advice                   []string        `json:"advice"`
	Notes                    []string        `json:"notes"`
	Warnings                 []string        `json:"warnings"`

	// Constraints, their checks, the bands' note and the bootstrap
	// (constraints.go; keys in docs/constraints.md).
	BandsNote        string           `json:"feasible_bands_note,omitempty"`
	Constraints      []string         `json:"constraints,omitempty"`
	ConstraintChecks []ConstraintJSON `json:"constraint_checks,omitempty"`
	Bootstrap        *BootstrapJSON   `json:"bootstrap,omitempty"`
}

// CriterionJSON is one rank criterion's verdict.
type CriterionJSON struct {
	Name     string `json:"name"`
	Estimate int    `json:"estimate"`
	Source   string `json:"source"`
	Detail   string `json:"detail"`
}

// BandJSON is one component's feasible band.
type BandJSON struct {
	Component string  `json:"component"`
	Min       float64 `json:"min"`
	Max       float64 `json:"max"`
}

// KineticsJSON is the kinetic fit.
type KineticsJSON struct {
	Model         string         `json:"model"`
	RateConstants []RateConstant `json:"rate_constants"`
	// Method is the fit behind rate_constants: profiles, hard-soft or data
	// (--kinetic-fit); every fit made is in Fits.
	Method            string           `json:"method"`
	RateLaw           string           `json:"rate_law"`
	Fitted            string           `json:"fitted"`
	ConcentrationUnit string           `json:"concentration_unit"`
	T0                float64          `json:"t0_s"`
	Map               []KineticMapJSON `json:"map"`
	MapSource         string           `json:"map_source"`
	Correlation       [][]float64      `json:"correlation"`
	Stiff             bool             `json:"stiff"`
	Fits              []KineticFitJSON `json:"fits"`
}

// RateConstant of one step, in the order the steps are written.
type RateConstant struct {
	Step     string  `json:"step"`
	K        float64 `json:"k_per_s"`
	StdErr   float64 `json:"stderr_per_s"`
	HalfLife float64 `json:"half_life_s,omitempty"`
	Unit     string  `json:"unit,omitempty"`
	// HalfLifeNote says which half-life formula applies; Fixed marks a
	// constant held at --k-fixed.
	HalfLifeNote string `json:"half_life_note,omitempty"`
	Fixed        bool   `json:"fixed,omitempty"`
}

// round keeps summary numbers to 10 significant digits, as the CSVs do.
func round(v float64) float64 {
	f, _ := strconv.ParseFloat(output.Float(v), 64)
	return f
}

// MakeSummary fills summary.json's content from a result.
func MakeSummary(r *Result) *Summary {
	n, m := r.D.Dims()
	s := &Summary{
		Tool:                     "bandsolve " + Version,
		RankEstimate:             r.Rank.Estimate,
		Components:               r.Components,
		Mode:                     r.Mode.String(),
		ModeReason:               r.ModeReason,
		LackOfFitPercent:         round(r.LackOfFit),
		ExplainedVariancePercent: round(r.Explained),
		NoiseLackOfFitPercent:    round(r.NoiseLOF),
		NoiseSigma:               round(r.Rank.Sigma),
		NoiseSource:              r.Rank.SigmaSource,
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
		FeasibleBands:            []BandJSON{},
		Advice:                   nonNil(r.Advice),
		Notes:                    nonNil(r.Notes),
		Warnings:                 nonNil(r.Warnings),
	}
	if r.Mode.String() == "species" && r.Settings.Closure != "off" {
		s.Closure = r.Settings.Closure
	}
	for _, e := range r.Experiments {
		s.Experiments = append(s.Experiments, e.Source)
	}
	constraintSummary(r, s)
	for _, c := range r.Rank.Criteria {
		s.RankCriteria = append(s.RankCriteria, CriterionJSON{Name: c.Name, Estimate: c.Estimate, Source: c.Source, Detail: c.Detail})
	}
	if r.DiffRank != nil {
		v := r.DiffRank.Estimate
		s.DifferenceRank = &v
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
	// spectra.csv: axis column named as the input's axis.
	{
		t := output.Table{Header: append([]string{r.AxisName}, r.Names...)}
		for i, x := range r.Axis {
			row := []string{output.Float(x)}
			for j := 0; j < k; j++ {
				row = append(row, output.Float(r.ALS.S.At(i, j)))
			}
			t.Rows = append(t.Rows, row)
		}
		if err := st.Write("spectra.csv", t.CSV()); err != nil {
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
		t := output.Table{Header: append(h, r.Names...)}
		for i, tm := range r.Times {
			var row []string
			if multi {
				row = append(row, strconv.Itoa(r.ExpOfRow[i]+1))
			}
			row = append(row, output.Float(tm))
			for j := 0; j < k; j++ {
				row = append(row, output.Float(r.ALS.C.At(i, j)))
			}
			t.Rows = append(t.Rows, row)
		}
		if err := st.Write("profiles.csv", t.CSV()); err != nil {
			return err
		}
	}
	if err := st.Write("singular_values.csv", singularTable(r.Factors, r.Rank).CSV()); err != nil {
		return err
	}
	if err := st.Write("rank.csv", rankTable(r.Rank).CSV()); err != nil {
		return err
	}
	if r.ALS != nil {
		t := output.Table{Header: []string{"iteration", "lack_of_fit_percent"}}
		for i, v := range r.ALS.History {
			t.Rows = append(t.Rows, []string{strconv.Itoa(i + 1), output.Float(v)})
		}
		if err := st.Write("iterations.csv", t.CSV()); err != nil {
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

func singularTable(f *svd.Factors, rank *svd.RankReport) output.Table {
	t := output.Table{Header: []string{"factor", "singular_value", "above_noise_edge"}}
	for i, v := range f.S {
		above := "no"
		if v > rank.Threshold {
			above = "yes"
		}
		t.Rows = append(t.Rows, []string{strconv.Itoa(i + 1), output.Float(v), above})
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

// PrintTable writes the short human summary to w.
func PrintTable(r *Result, w io.Writer) {
	n, m := r.D.Dims()
	fmt.Fprintf(w, "data           %d spectra × %d points (%s)\n", n, m, r.AxisName)
	fmt.Fprintf(w, "mode           %s\n", r.ModeReason)
	fmt.Fprintf(w, "noise σ        %.3g (%s)\n", r.Rank.Sigma, r.Rank.SigmaSource)
	var crit []string
	for _, c := range r.Rank.Criteria {
		crit = append(crit, fmt.Sprintf("%s %d", c.Name, c.Estimate))
	}
	fmt.Fprintf(w, "rank           %d  (%s)\n", r.Rank.Estimate, strings.Join(crit, ", "))
	if r.DiffRank != nil {
		fmt.Fprintf(w, "rank of ΔA     %d\n", r.DiffRank.Estimate)
	}
	fmt.Fprintf(w, "components     %d\n", r.Components)
	if r.ALS != nil {
		conv := "converged"
		if !r.ALS.Converged {
			conv = "NOT converged"
		}
		fmt.Fprintf(w, "lack of fit    %.4g %%  (noise alone: %.3g %%)\n", r.LackOfFit, r.NoiseLOF)
		fmt.Fprintf(w, "explained      %.6g %%\n", r.Explained)
		fmt.Fprintf(w, "iterations     %d, %s\n", r.ALS.Iterations, conv)
		for j, name := range r.Names {
			col := mat.Col(nil, j, r.ALS.C)
			mx, at := 0.0, 0
			for i, v := range col {
				if v > mx {
					mx, at = v, i
				}
			}
			fmt.Fprintf(w, "  %-12s profile max %.4g at t = %g s\n", name, mx, r.Times[at])
		}
	}
	printConstraints(r, w)
	if r.Kinetics != nil {
		printKinetics(r, w)
	}
	for _, a := range r.Advice {
		fmt.Fprintf(w, "advice: %s\n", a)
	}
	for _, a := range r.Notes {
		fmt.Fprintf(w, "note: %s\n", a)
	}
	for _, a := range r.Warnings {
		fmt.Fprintf(w, "warning: %s\n", a)
	}
}
