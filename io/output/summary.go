package output

import (
	"fmt"
	"math"
)

// The types of summary.json. Key names are part of the public contract
// (CONTRACT.md): add keys freely, never rename or remove one. io/pipeline
// fills them; io/report reads the file back into the same types.

// Summary is summary.json. Key names are part of the public contract.
type Summary struct {
	Tool                     string  `json:"tool"`
	RankEstimate             int     `json:"rank_estimate"`
	Components               int     `json:"components"`
	Mode                     string  `json:"mode"`
	ModeReason               string  `json:"mode_reason"`
	LackOfFitPercent         float64 `json:"lack_of_fit_percent"`
	ExplainedVariancePercent float64 `json:"explained_variance_percent"`
	NoiseLackOfFitPercent    float64 `json:"noise_lack_of_fit_percent"`
	// ResidualToNoise is √(χ²/ν) of the fit at the observed points
	// (ν = observed − k(n + m − k), or noise_degrees_of_freedom), with
	// the noise weights, or without them every point weighted 1/σ² (lack
	// of fit over the lack of fit of noise alone): 1.0 means the model
	// fits to the noise; 0 when no noise level is known.
	ResidualToNoise float64 `json:"residual_to_noise"`
	// NoiseDegreesOfFreedom is ν when it is not that plain count: in
	// reactions mode from single beams every difference spectrum holds
	// the reference's own noise, one pattern the profiles mostly absorb,
	// and ν counts only what of it stays (docs/measurement.md §2). Absent
	// otherwise.
	NoiseDegreesOfFreedom float64 `json:"noise_degrees_of_freedom,omitempty"`
	// ResidualToNoiseLimit is the largest residual_to_noise noise alone
	// stays under at --alpha (the misfit test of io/pipeline/misfit.go);
	// 0 when it was not tested.
	ResidualToNoiseLimit float64 `json:"residual_to_noise_limit,omitempty"`
	// ResidualToNoiseAllowance is g, the rise of a right model's χ² the
	// limit allows for the noise weights' own sampling error, e^{2s²} − 1
	// (s² the variance of the weights' log error); absent when none.
	ResidualToNoiseAllowance float64 `json:"residual_to_noise_allowance,omitempty"`
	// NoiseWeights says how points were weighted: "noise" (1/σ² from the
	// noise model, row × column) or "off".
	NoiseWeights string `json:"noise_weights"`
	// BlindPoints counts the points with no usable light (left out).
	BlindPoints    int             `json:"blind_points"`
	Iterations     int             `json:"iterations"`
	Converged      bool            `json:"converged"`
	NoiseSigma     float64         `json:"noise_sigma"`
	NoiseSource    string          `json:"noise_source"`
	NoiseEdge      float64         `json:"noise_edge"`
	RankReason     string          `json:"rank_reason"`
	RankCriteria   []CriterionJSON `json:"rank_criteria"`
	DifferenceRank *int            `json:"difference_rank_estimate,omitempty"`
	// DifferenceRankReason says how difference_rank_estimate was counted, as
	// rank_reason does rank_estimate's, and why each factor above the noise
	// that it does not count is left out.
	DifferenceRankReason string     `json:"difference_rank_reason,omitempty"`
	SVDMethod            string     `json:"svd_method"`
	Compressed           bool       `json:"compressed_iterations"`
	InitialEstimate      string     `json:"initial_estimate"`
	Closure              string     `json:"closure"`
	Spectra              int        `json:"spectra"`
	Points               int        `json:"points"`
	Axis                 string     `json:"axis"`
	Experiments          []string   `json:"experiments"`
	ComponentNames       []string   `json:"component_names"`
	UniquenessRanges     []BandJSON `json:"uniqueness_ranges"`
	// FeasibleBands is uniqueness_ranges under its old name, written
	// until 1.0 for scripts that read it (CONTRACT.md).
	FeasibleBands []BandJSON    `json:"feasible_bands"`
	Kinetics      *KineticsJSON `json:"kinetics,omitempty"`
	// KineticsNotDone says why --model was not fitted; the resolution is
	// in the folder all the same.
	KineticsNotDone string   `json:"kinetics_not_done,omitempty"`
	EFA             *EFAJSON `json:"efa,omitempty"`
	// Baseline is the baseline model used (off, offset, linear, poly:N);
	// BaselineReason says how it was chosen.
	Baseline       string `json:"baseline"`
	BaselineReason string `json:"baseline_reason,omitempty"`
	// OutlierSpectra are the spectra set aside (weight zero); NuisanceFactors
	// the factors above the noise that are not chemical components.
	OutlierSpectra  []OutlierJSON  `json:"outlier_spectra"`
	NuisanceFactors []NuisanceJSON `json:"nuisance_factors"`
	// SpectrumNoise is, for absorbance or difference input whose spectra
	// were found to differ in noise (so that each is weighted by its own
	// 1/σ²), each experiment's test of equal levels and the range of the
	// levels; absent when every spectrum has the same weight.
	SpectrumNoise []SpectrumNoiseJSON `json:"spectrum_noise,omitempty"`
	// MinorSpecies are minor factors that the refit test counted as species (they
	// left nuisance_factors and raised rank_estimate and components).
	MinorSpecies []NuisanceJSON `json:"minor_species,omitempty"`
	// FactorsAboveNoise counts the factors above the noise threshold that the
	// classification examined, NoiseLikeFactors those of them whose time vector is
	// as white as noise (noise correlated along the axis). Every examined factor is
	// chemical, in nuisance_factors or noise-like, so the report can check that the
	// factors beyond rank_estimate are all accounted for. Nil: not classified, or a
	// folder written before these keys.
	FactorsAboveNoise *int `json:"factors_above_noise,omitempty"`
	NoiseLikeFactors  *int `json:"noise_like_factors,omitempty"`
	// NoiseWhiteFactors counts those of noise_like_factors whose spectrum is
	// white along the axis too: white noise above an edge set from a noise
	// level that reads a little low, not noise correlated along the axis.
	NoiseWhiteFactors int `json:"noise_white_factors,omitempty"`
	// WaterVapour is the check for water-vapour lines that change during
	// the run (nil: written before the check).
	WaterVapour *VapourJSON `json:"water_vapour,omitempty"`
	Advice      []string    `json:"advice"`
	Notes       []string    `json:"notes"`
	Warnings    []string    `json:"warnings"`

	// Constraints, their checks, the bands' note and the bootstrap
	// (constraints.go; keys in docs/constraints.md).
	UniquenessNote   string           `json:"uniqueness_note,omitempty"`
	BandsNote        string           `json:"feasible_bands_note,omitempty"` // old name of uniqueness_note, until 1.0
	Constraints      []string         `json:"constraints,omitempty"`
	ConstraintChecks []ConstraintJSON `json:"constraint_checks,omitempty"`
	Bootstrap        *BootstrapJSON   `json:"bootstrap,omitempty"`
}

// Uniqueness returns the uniqueness ranges, read from the old key
// feasible_bands in folders written before the rename.
func (s Summary) Uniqueness() []BandJSON {
	if len(s.UniquenessRanges) > 0 {
		return s.UniquenessRanges
	}
	return s.FeasibleBands
}

// CriterionJSON is one rank criterion's verdict.
type CriterionJSON struct {
	Name     string `json:"name"`
	Estimate int    `json:"estimate"`
	// AtLeast: the count stopped at the most the criteria count (estimate of
	// them) with more above the noise, so the criterion's own count is larger.
	AtLeast bool   `json:"at_least,omitempty"`
	Source  string `json:"source"`
	Detail  string `json:"detail"`
}

// CriterionText is a rank criterion's count in words, "ind 3", or "noise-floor ≥ 12
// (at most 12 counted)" when the count stopped at the most the criteria count: the
// same on the terminal and in the report. "Examined" is kept for the factors the
// table and classification look at (two more), which the rank reason and notes name.
func CriterionText(name string, estimate int, atLeast bool) string {
	if atLeast {
		return fmt.Sprintf("%s ≥ %d (at most %d counted)", name, estimate, estimate)
	}
	return fmt.Sprintf("%s %d", name, estimate)
}

// FitVerdict says what a residual q times the noise (√(χ²/ν)) means,
// against limit, the largest q noise alone stays under (0: not tested).
// The same words whichever fit it is (the resolution, a kinetic fit), so
// the same ratio never reads as two verdicts. The misfit's own size per
// point is √(q² − 1) noise standard deviations, since independent misfit
// and noise add in variance.
func FitVerdict(q, limit float64) string {
	switch {
	case limit > 0 && q <= limit:
		return fmt.Sprintf("within the noise (noise alone stays under %.3g)", limit)
	case q <= 1:
		return "at the noise"
	}
	own := math.Sqrt(q*q - 1)
	if own < 1 {
		return fmt.Sprintf("a systematic misfit smaller than the noise (%.2g times it per point, as √(q² − 1))", own)
	}
	return fmt.Sprintf("a systematic misfit larger than the noise (%.3g times it per point, as √(q² − 1)): the model does not describe the data fully", own)
}

// BandJSON is one component's uniqueness range: the smallest and largest
// share of the signal, ‖c sᵀ‖ / ‖C Sᵀ‖, over every rotation of the
// solution that fits as well and keeps the constraints (Tauler 2001).
type BandJSON struct {
	Component string  `json:"component"`
	Min       float64 `json:"min"`
	Max       float64 `json:"max"`
	// NotDetermined: the search could not stay within the constraints and
	// the noise allowance, so Min and Max are only the part it reached.
	NotDetermined bool `json:"not_determined,omitempty"`
	// Reason says why, when NotDetermined.
	Reason string `json:"not_determined_reason,omitempty"`
	// MinConverged and MaxConverged say whether the search for each end
	// met its stopping test (false: it stopped on its budget, and the end
	// is only as far out as it got). Nil in a summary written before they
	// were added: unknown, not false.
	MinConverged *bool `json:"min_converged,omitempty"`
	MaxConverged *bool `json:"max_converged,omitempty"`
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
	// DeterminedSum is the reported fit's determined_sum.
	DeterminedSum *DeterminedSum `json:"determined_sum,omitempty"`
	// T0Fit is the reported fit's fitted start time (--fit-t0); t0_s stays
	// the time it started from. Absent when t0 was not fitted.
	T0Fit *T0Fit `json:"t0_fit,omitempty"`
}

// T0Fit is a start time fitted with the rate constants (--fit-t0): the
// value and its standard error in seconds (stderr_s 0 and not_determined
// when the data do not place it), the range it was held within (the last
// spectrum before the change to the first after it) and at_end, "start" or
// "end", when it ran to an end of that range.
type T0Fit struct {
	T0            float64 `json:"t0_s"`
	StdErr        float64 `json:"stderr_s"`
	Lower         float64 `json:"lower_s"`
	Upper         float64 `json:"upper_s"`
	NotDetermined bool    `json:"not_determined,omitempty"`
	AtEnd         string  `json:"at_end,omitempty"`
}

// DeterminedSum is the sum of rate constants the data determine when they
// do not determine its terms (a reversible pair with free spectra: only
// k1 + k2 sets the relaxation). Terms names them by their place in the
// model ("k1 + k2"), Steps by their text.
type DeterminedSum struct {
	Terms  string   `json:"terms"`
	Steps  []string `json:"steps"`
	K      float64  `json:"k_per_s"`
	StdErr float64  `json:"stderr_per_s"`
	Unit   string   `json:"unit,omitempty"`
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
	// NotDetermined says the standard error is not finite (stderr_per_s is then 0, as
	// JSON holds no infinity): the data do not determine this constant.
	NotDetermined bool `json:"not_determined,omitempty"`
}

// KineticMapJSON says which component a species (or step) is.
type KineticMapJSON struct {
	Name      string `json:"name"`
	Component int    `json:"component"`
}

// InitialConcentration of one species in the fit.
type InitialConcentration struct {
	Species string  `json:"species"`
	C0      float64 `json:"c0"`
	StdErr  float64 `json:"stderr"`
	Fitted  bool    `json:"fitted"`
}

// KineticFitJSON is one fit in summary.json's kinetics.fits.
type KineticFitJSON struct {
	Method                string                 `json:"method"`
	RateConstants         []RateConstant         `json:"rate_constants"`
	Correlation           [][]float64            `json:"correlation"`
	InitialConcentrations []InitialConcentration `json:"initial_concentrations"`
	Amplitudes            []float64              `json:"amplitudes,omitempty"`
	RMS                   float64                `json:"rms"`
	Sigma                 float64                `json:"sigma"`
	DegreesOfFreedom      int                    `json:"degrees_of_freedom"`
	Iterations            int                    `json:"iterations"`
	Converged             bool                   `json:"converged"`
	Stiff                 bool                   `json:"stiff"`
	Warnings              []string               `json:"warnings"`
	DeterminedSum         *DeterminedSum         `json:"determined_sum,omitempty"`
	// OrderAlternative: the data cannot tell the order of the rate
	// constants (which step is fast); these are the other order's, per
	// step as rate_constants, which fit as well (the warning says how).
	OrderAlternative []float64 `json:"order_alternative_k_per_s,omitempty"`
	T0Fit            *T0Fit    `json:"t0_fit,omitempty"`
	// OneNoiseLevel, of a data fit whose spectra were weighted each by its
	// own noise, is the same fit with one level for every spectrum.
	OneNoiseLevel        *OneNoiseLevelJSON `json:"one_noise_level,omitempty"`
	EachSpectrumWeighted *EachWeightedJSON  `json:"each_spectrum_weighted,omitempty"`
}

// OneNoiseLevelJSON is a data fit made again with one noise level for
// every spectrum, each constant tested against the reported one.
type OneNoiseLevelJSON struct {
	RateConstants []OneLevelRate `json:"rate_constants"`
	Test          string         `json:"test"`
	// DeterminedSum is the same for the sum of the constants the data
	// determine only together (Step holds its terms, "k1 + k2").
	DeterminedSum *OneLevelRate `json:"determined_sum,omitempty"`
	// Reported: these constants are the fit's own rate_constants, the
	// weights having moved them beyond the noise (EachWeightedJSON then
	// holds the fit with each spectrum weighted by its own level).
	Reported bool `json:"reported"`
}

// EachWeightedJSON is the data fit with each spectrum weighted by its own
// noise level, given when the fit with one level is the one reported.
type EachWeightedJSON struct {
	RateConstants []StepRate `json:"rate_constants"`
	DeterminedSum *StepRate  `json:"determined_sum,omitempty"`
}

// StepRate is one step's rate constant and standard error.
type StepRate struct {
	Step   string  `json:"step"`
	K      float64 `json:"k_per_s"`
	StdErr float64 `json:"stderr_per_s"`
}

// OneLevelRate is one step's constant with one noise level, z and p of its
// difference from the reported constant; NotTested when either is fixed or
// not determined (z and p are then 0).
type OneLevelRate struct {
	Step      string  `json:"step"`
	K         float64 `json:"k_per_s"`
	StdErr    float64 `json:"stderr_per_s"`
	Z         float64 `json:"z"`
	PValue    float64 `json:"p_value"`
	Hausman   bool    `json:"hausman"`
	NotTested bool    `json:"not_tested,omitempty"`
	// LogRatioStdErr, of a step, is the standard error of
	// ln(k_one_level/k_each_weighted) measured directly from both fits
	// (z is that log ratio over it); DifferenceStdErr, of a determined
	// sum, that of the sums' difference. 0 when the test fell back to
	// the variances measured apart.
	LogRatioStdErr   float64 `json:"stderr_of_log_ratio,omitempty"`
	DifferenceStdErr float64 `json:"stderr_of_difference_per_s,omitempty"`
	// DegreesOfFreedom are those of that standard error's estimate
	// (Satterthwaite's), of the Student t p_value is taken from.
	DegreesOfFreedom float64 `json:"degrees_of_freedom,omitempty"`
}

// ConstraintJSON is one constraint check in summary.json.
type ConstraintJSON struct {
	Constraint       string  `json:"constraint"`
	LackOfFitWith    float64 `json:"lack_of_fit_percent_with"`
	LackOfFitWithout float64 `json:"lack_of_fit_percent_without"`
	// WithOfData and WithoutOfData are the same fits over the data as
	// given (the denominator of lack_of_fit_percent and of iterations.csv),
	// where the two above, kept as they were, divide by the data less the
	// fitted baseline; equal to them without a baseline.
	WithOfData    float64  `json:"lack_of_fit_percent_with_of_data,omitempty"`
	WithoutOfData float64  `json:"lack_of_fit_percent_without_of_data,omitempty"`
	Components    []string `json:"components,omitempty"`
}

// ShownWith and ShownWithout are the figures a reader is shown: over the
// data as given when the run wrote them, else (a folder written before
// they existed) the ones it has.
func (c ConstraintJSON) ShownWith() float64 {
	if c.WithOfData > 0 {
		return c.WithOfData
	}
	return c.LackOfFitWith
}

// ShownWithout: see ShownWith.
func (c ConstraintJSON) ShownWithout() float64 {
	if c.WithoutOfData > 0 {
		return c.WithoutOfData
	}
	return c.LackOfFitWithout
}

// BootstrapJSON describes the resampling in summary.json.
type BootstrapJSON struct {
	Method     string  `json:"method"`
	Replicates int     `json:"replicates"`
	Resolved   int     `json:"resolved"`
	Seed       uint64  `json:"seed"`
	Level      float64 `json:"level"`
}

// EFAJSON is the summary's "efa" entry.
type EFAJSON struct {
	Factors     int        `json:"factors"`
	Components  []EFAEntry `json:"components"`
	Method      string     `json:"method"`
	Experiments int        `json:"experiments_joined"`
}

// EFAEntry gives one component's window in seconds (null when not found).
type EFAEntry struct {
	Component  string   `json:"component"`
	AppearS    *float64 `json:"appear_s"`
	DisappearS *float64 `json:"disappear_s"`
}

// VapourJSON is the water-vapour check (docs/measurement.md, "Water
// vapour"): whether the axis was checked (why not), the coherence ratio
// (noise alone about 1) and lines counted, whether a change was detected,
// and then where the largest line is, how much it changed per experiment
// and the resolved spectra that hold the lines.
type VapourJSON struct {
	Checked  bool      `json:"checked"`
	Why      string    `json:"not_checked_because,omitempty"`
	Range    []float64 `json:"range"`
	Detected bool      `json:"detected"`
	Ratio    *float64  `json:"coherence_ratio,omitempty"`
	Lines    *int      `json:"lines,omitempty"`
	// Ranges are all the ranges examined together (range is the first),
	// and LinesPer the lines counted in each.
	Ranges    [][]float64         `json:"ranges,omitempty"`
	LinesPer  []int               `json:"lines_per_range,omitempty"`
	LargestAt float64             `json:"largest_line_at,omitempty"`
	Change    []float64           `json:"line_change,omitempty"`
	Carriers  []VapourCarrierJSON `json:"spectra_with_lines,omitempty"`
	// Subtracted are the --vapour spectra taken out of every spectrum
	// before the check, with the range of their fitted amounts.
	Subtracted []VapourSubtractedJSON `json:"subtracted,omitempty"`
	// CountedComponent is, in a stack of experiments, the component of the
	// count measured to be the vapour's change (its singular value falls to
	// the next one's without the vapour's course), and CountedReaction the
	// same in the differences' count; 0 when none is.
	CountedComponent int `json:"counted_component,omitempty"`
	CountedReaction  int `json:"counted_reaction,omitempty"`
}

// VapourSubtractedJSON is one --vapour spectrum: its file and the
// smallest and largest amount fitted (1: as much as in the file).
type VapourSubtractedJSON struct {
	File      string  `json:"file"`
	AmountMin float64 `json:"amount_min"`
	AmountMax float64 `json:"amount_max"`
}

// VapourCarrierJSON is one resolved spectrum holding the lines: the height
// of the largest line in it.
type VapourCarrierJSON struct {
	Component  string  `json:"component"`
	LineHeight float64 `json:"line_height"`
}

// SpectrumNoiseJSON is one experiment's noise per spectrum: the median σ
// over the channels of its quietest and noisiest spectrum (absorbance), their
// ratio, whether the weights follow them, and the test of equal levels.
type SpectrumNoiseJSON struct {
	Experiment         int     `json:"experiment"`
	WeightsPerSpectrum bool    `json:"weights_per_spectrum"`
	NoiseSDMin         float64 `json:"noise_sd_min"`
	NoiseSDMax         float64 `json:"noise_sd_max"`
	// Unit of noise_sd_min and _max: "absorbance", or the detector's
	// "single-beam units" (counts) for single beams.
	Unit   string  `json:"unit,omitempty"`
	Ratio  float64 `json:"ratio"`
	PValue float64 `json:"p_value"`
	Test   string  `json:"test"`
}

// OutlierJSON is one spectrum set aside.
type OutlierJSON struct {
	Time       float64 `json:"time_s"`
	Experiment string  `json:"experiment"`
	Source     string  `json:"source"`
	Reason     string  `json:"reason"`
}

// NuisanceJSON is one factor above the noise that is not a chemical component.
type NuisanceJSON struct {
	Factor       int       `json:"factor"`
	Kind         string    `json:"kind"`
	Looks        string    `json:"looks_like"`
	SharePercent float64   `json:"share_of_signal_percent"`
	TimesS       []float64 `json:"times_s,omitempty"`
	// Refit is the test of a minor factor as one more component (docs/rank.md).
	Refit *MinorRefitJSON `json:"refit,omitempty"`
}

// MinorRefitJSON is the outcome of refitting with a minor factor as one more component
// under the same constraints (mcr.TestMinorFactor).
type MinorRefitJSON struct {
	Species bool `json:"species"`
	// DropNoiseVariances is RSS_k − RSS_{k+1} in units of the noise variance;
	// NoiseEdge what one more component takes from noise alone in the same units.
	DropNoiseVariances float64 `json:"drop_noise_variances"`
	NoiseEdge          float64 `json:"noise_edge_noise_variances"`
	Significance       float64 `json:"p_value"`
	F                  float64 `json:"f_statistic"`
	// BandShiftPercent: how much of what its spectrum adds to the others is their
	// derivative; EarlyPercent: its profile's energy in the first fifth of the spectra.
	BandShiftPercent float64 `json:"band_shift_percent"`
	EarlyPercent     float64 `json:"profile_early_percent"`
	// InBandPercent: how much of what its spectrum adds lies under the other spectra's
	// bands (a change of band shape when large).
	InBandPercent float64 `json:"in_band_percent"`
	// The part of the drop at channels outside the other spectra's bands (a band of its
	// own lowers the fit there; a change of band shape hardly does), in units of the
	// noise variance, its share of the whole drop, what noise alone gives on those
	// channels, the probability of the drop there under noise alone, and their number.
	OutBandDrop         float64 `json:"out_of_band_drop_noise_variances"`
	OutBandDropPercent  float64 `json:"out_of_band_drop_percent"`
	OutBandEdge         float64 `json:"out_of_band_noise_edge_noise_variances"`
	OutBandSignificance float64 `json:"out_of_band_p_value"`
	OutBandChannels     int     `json:"out_of_band_channels"`
	// OutBandPeakPercent: the largest drop per channel outside the bands in % of the
	// largest anywhere (a band of its own peaks there).
	OutBandPeakPercent float64 `json:"out_of_band_peak_percent"`
	PeakTimeS          float64 `json:"profile_peak_time_s"`
	Looks              string  `json:"looks_like"`
	Verdict            string  `json:"verdict"`
	// SameAsFactor is the earlier factor whose refit ended at the same extra component
	// (spectra and profiles alike to a cosine of 0.99), when one did: one finding.
	SameAsFactor int `json:"same_extra_component_as_factor,omitempty"`
}
