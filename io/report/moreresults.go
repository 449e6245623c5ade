package report

import (
	"fmt"
	"regexp"
	"strconv"
	"strings"

	"github.com/bandsolve/bandsolve/io/output"
)

// plainKeys are the summary keys "More results" shows in its own tables with
// plain labels; the ones of their fields without a plain meaning to a reader
// (the refit test's intermediate sums, the vapour check's coherence) stay in
// summary.json only. Keys in neither set are listed under their JSON names.
var plainKeys = map[string]bool{"residual_to_noise": true, "noise_degrees_of_freedom": true, "noise_weights": true,
	"residual_to_noise_allowance": true,
	"blind_points":                true, "efa": true, "baseline": true, "baseline_reason": true, "outlier_spectra": true,
	"nuisance_factors": true, "minor_species": true, "factors_above_noise": true, "noise_like_factors": true,
	"water_vapour": true, "uniqueness_note": true}

// moreView is "More results": labelled rows, the EFA windows and the
// factors above the noise that are not components, times in the report's
// unit; Raw are summary keys the report has no words for yet.
type moreView struct {
	Rows    [][2]string
	EFA     []efaRow
	EFANote string
	Factors []factorRow
	Raw     [][2]string
}

type efaRow struct{ Component, From, To string }

type factorRow struct{ Factor, What, Share, Times, Looks, Refit string }

func (v moreView) Empty() bool {
	return len(v.Rows) == 0 && len(v.EFA) == 0 && len(v.Factors) == 0 && len(v.Raw) == 0
}

func (f *Folder) moreResults(unit string) moreView {
	s := f.Summary
	var v moreView
	has := func(k string) bool { _, ok := f.SummaryRaw[k]; return ok }
	add := func(label, value string) { v.Rows = append(v.Rows, [2]string{label, value}) }
	if has("baseline") {
		add("baseline fitted to each spectrum beside the components", baselineModelWords(s.Baseline, s.BaselineReason))
	}
	if has("residual_to_noise") && s.ResidualToNoise > 0 {
		add("residual over the noise (1 = fits to within the noise)", trimFloat(s.ResidualToNoise, 3))
	}
	if s.NoiseDegreesOfFreedom > 0 {
		add("independent points the residual counts (degrees of freedom)", trimFloat(s.NoiseDegreesOfFreedom, 6))
	}
	if s.ResidualToNoiseAllowance > 0 {
		add("rise of χ² the misfit test allows for the noise levels' own sampling error", trimFloat(100*s.ResidualToNoiseAllowance, 2)+" %")
	}
	if has("noise_weights") {
		add("points weighted by their noise", map[bool]string{true: "yes, each by 1/σ² of its noise", false: "no, all alike"}[s.NoiseWeights == "noise"])
	}
	if has("blind_points") {
		add("points with no usable light (left out)", strconv.Itoa(s.BlindPoints))
	}
	if has("outlier_spectra") && len(s.OutlierSpectra) == 0 {
		add("spectra set aside as unlike the rest", "none")
	}
	if s.FactorsAboveNoise != nil {
		add("factors above the noise examined", strconv.Itoa(*s.FactorsAboveNoise))
	}
	if s.NoiseLikeFactors != nil {
		add("of them noise correlated along the axis", strconv.Itoa(*s.NoiseLikeFactors-s.NoiseWhiteFactors))
		if s.NoiseWhiteFactors > 0 {
			add("of them white noise (the noise level reads a little low)", strconv.Itoa(s.NoiseWhiteFactors))
		}
	}
	v.Rows = append(v.Rows, vapourRows(s.WaterVapour, f.axisName())...)
	if s.UniquenessNote != "" {
		add("uniqueness ranges", timesInText(s.UniquenessNote, unit))
	}
	v.EFA, v.EFANote = efaRows(s.EFA, unit)
	for _, nf := range s.NuisanceFactors {
		v.Factors = append(v.Factors, factorView(nf, unit))
	}
	for _, nf := range s.MinorSpecies {
		v.Factors = append(v.Factors, factorView(nf, unit))
	}
	skip := map[string]bool{}
	for k := range plainKeys {
		skip[k] = true
	}
	v.Raw = extraKeys(f.SummaryRaw, skip)
	return v
}

// baselineModelWords names the baseline model as a chemist would (off, offset,
// linear, poly:N) with how it was chosen.
func baselineModelWords(model, reason string) string {
	w := model
	switch {
	case model == "off":
		w = "none"
	case model == "offset":
		w = "a constant offset"
	case model == "linear":
		w = "a straight line along the axis"
	case strings.HasPrefix(model, "poly:"):
		w = "a polynomial of order " + strings.TrimPrefix(model, "poly:") + " along the axis"
	}
	if reason != "" {
		w += " — " + reason
	}
	return w
}

// efaRows are the EFA windows in unit. EFA's window ends where the
// component's backward singular value sinks below the noise threshold of
// the EFA curves (Maeder 1987), which is not where it is gone: a remnant
// below that threshold stays in the data and in the resolved profile.
func efaRows(e *output.EFAJSON, unit string) ([]efaRow, string) {
	if e == nil || len(e.Components) == 0 {
		return nil, ""
	}
	at := func(p *float64, none string) string {
		if p == nil {
			return none
		}
		return timeText(*p, unit)
	}
	var rows []efaRow
	for _, c := range e.Components {
		rows = append(rows, efaRow{Component: c.Component, From: at(c.AppearS, "not seen"), To: at(c.DisappearS, "not seen")})
	}
	note := fmt.Sprintf("From the %s SVD of the spectra up to and from each time, %d factor(s)", e.Method, e.Factors)
	if e.Experiments > 1 {
		note += fmt.Sprintf(", %d experiments joined", e.Experiments)
	}
	note += ". A window starts where the component rises above what EFA can see and ends where it falls below it (the noise threshold of the EFA curves): a component can remain below that level after its window ends, so compare its concentration profile."
	return rows, note
}

// nuisanceWhat says in words what kind of factor the run found.
var nuisanceWhat = map[string]string{
	"baseline":          "a baseline change",
	"outlier":           "a few spectra unlike the rest",
	"reference-pattern": "the reference spectrum's own noise",
	"band-shift":        "a band shift or change of band shape",
	"minor":             "a minor change, not counted as a component",
	"species":           "counted as a minor species",
}

func factorView(nf output.NuisanceJSON, unit string) factorRow {
	r := factorRow{Factor: strconv.Itoa(nf.Factor), What: nf.Kind, Share: trimFloat(nf.SharePercent, 3), Looks: timesInText(nf.Looks, unit)}
	if w, ok := nuisanceWhat[nf.Kind]; ok {
		r.What = w
	}
	var ts []string
	for _, t := range nf.TimesS {
		ts = append(ts, timeText(t, unit))
	}
	r.Times = strings.Join(ts, ", ")
	if rf := nf.Refit; rf != nil {
		r.Refit = timesInText(rf.Verdict, unit)
		if rf.Looks != "" {
			r.Refit += "; " + timesInText(rf.Looks, unit)
		}
	}
	return r
}

// vapourRows are the water-vapour check's findings in words; the axis
// positions are in the axis's own unit, but in cm⁻¹ on a wavelength axis,
// which the check reads converted to wavenumber.
func vapourRows(w *output.VapourJSON, axis string) [][2]string {
	if w == nil {
		return nil
	}
	var rows [][2]string
	add := func(label, value string) { rows = append(rows, [2]string{label, value}) }
	unit := spectralAxis(axis).Unit
	if unit == "nm" {
		unit = "cm⁻¹"
	}
	if !w.Checked {
		return append(rows, [2]string{"water-vapour lines checked", "no — " + w.Why})
	}
	if len(w.Range) == 2 {
		add("water-vapour lines looked for in", fmt.Sprintf("%s–%s %s", trimFloat(w.Range[0], 6), trimFloat(w.Range[1], 6), unit))
	}
	add("water-vapour lines that change during the run", map[bool]string{true: "found", false: "not found"}[w.Detected])
	if w.Lines != nil {
		add("lines seen", strconv.Itoa(*w.Lines))
	}
	if w.Detected && w.LargestAt != 0 {
		add("largest line at", trimFloat(w.LargestAt, 6)+" "+unit)
	}
	for _, c := range w.Carriers {
		add("vapour lines in the resolved spectrum of "+c.Component, "line height "+trimFloat(c.LineHeight, 3)+" absorbance")
	}
	for _, sb := range w.Subtracted {
		add("recorded vapour spectrum subtracted", fmt.Sprintf("%s, amount %s to %s", sb.File, trimFloat(sb.AmountMin, 4), trimFloat(sb.AmountMax, 4)))
	}
	return rows
}

// unitDiv is the seconds in one unit (s, min or h).
func unitDiv(unit string) float64 {
	_, div := timeScale(0, unit)
	return div
}

// timeText is t (seconds) as a number in unit: seconds as the files write
// them, other units to four digits.
func timeText(t float64, unit string) string {
	div := unitDiv(unit)
	if div == 1 {
		return strconv.FormatFloat(t, 'g', -1, 64)
	}
	return trimFloat(t/div, 4)
}

// secondsInText finds times in seconds in the run's sentences ("t = 10092 s",
// "at 22 s", "(0–95 s)"): a number, optionally a range, then " s" as a word.
var secondsInText = regexp.MustCompile(`(^|[^\w.×⁰¹²³⁴⁵⁶⁷⁸⁹⁻])(\d+(?:\.\d+)?(?:e[+-]?\d+)?)(?:(–)(\d+(?:\.\d+)?(?:e[+-]?\d+)?))? s\b`)

// timesInText rewrites the times in seconds of a sentence the run wrote
// (summary.json keeps seconds) into the report's unit.
func timesInText(s, unit string) string { return rewriteSeconds(s, unit, false) }

// timesWithSeconds is timesInText keeping the seconds beside each time, for
// warnings, advice and notes: their spectrum times are what --drop takes.
func timesWithSeconds(s, unit string) string { return rewriteSeconds(s, unit, true) }

func rewriteSeconds(s, unit string, keep bool) string {
	if unit == "s" || unit == "" {
		return s
	}
	div := unitDiv(unit)
	conv := func(num string) string {
		x, err := strconv.ParseFloat(num, 64)
		if err != nil {
			return num
		}
		return trimFloat(x/div, 4)
	}
	return secondsInText.ReplaceAllStringFunc(s, func(m string) string {
		p := secondsInText.FindStringSubmatch(m)
		out, secs := p[1]+conv(p[2]), p[2]
		if p[3] != "" {
			out += p[3] + conv(p[4])
			secs += p[3] + p[4]
		}
		out += " " + unit
		if keep {
			out += " (" + secs + " s)"
		}
		return out
	})
}
