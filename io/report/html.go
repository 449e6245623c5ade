package report

import (
	"bytes"
	"encoding/json"
	"fmt"
	"html/template"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"sort"
	"strconv"
	"strings"

	"github.com/bandsolve/bandsolve/io/output"
)

// Rebuild reads the output folder dir and writes dir/report.html from its
// files (the `bandsolve report OUT` command). The new report replaces the
// old one in a rename, so a failure leaves the old one whole.
func Rebuild(dir string) error {
	b, err := BuildDir(dir)
	if err != nil {
		return err
	}
	tmp, err := os.CreateTemp(dir, ".report-*.html")
	if err != nil {
		return fmt.Errorf("writing report: %w", err)
	}
	name := tmp.Name()
	if _, err := tmp.Write(b); err != nil {
		tmp.Close()
		os.Remove(name)
		return fmt.Errorf("writing report: %w", err)
	}
	if err := tmp.Close(); err != nil {
		os.Remove(name)
		return fmt.Errorf("writing report: %w", err)
	}
	if err := os.Chmod(name, 0o644); err != nil {
		os.Remove(name)
		return fmt.Errorf("writing report: %w", err)
	}
	if err := os.Rename(name, filepath.Join(dir, "report.html")); err != nil {
		os.Remove(name)
		return fmt.Errorf("writing report: %w", err)
	}
	return nil
}

// BuildDir reads dir and returns its report.html.
func BuildDir(dir string) ([]byte, error) {
	f, err := Load(dir)
	if err != nil {
		return nil, err
	}
	return Build(f)
}

// Build renders the report of a folder. It depends only on the files'
// contents (never on the folder's name, the clock or the host), so the
// same files always give the same bytes.
func Build(f *Folder) ([]byte, error) {
	figs, problems := Figures(f)
	return buildFrom(f, figs, problems)
}

// BuildWithFiles gives both the report and the figure files (FigureFiles)
// from one drawing of the figures: the same bytes as Build and FigureFiles
// called one after the other, in about half the time. The HTML is made
// while the figure files are drawn.
func BuildWithFiles(f *Folder) (html []byte, files map[string][]byte, err error) {
	return BuildWithPredrawn(f, nil)
}

// BuildWithPredrawn is BuildWithFiles taking from pre the figures drawn
// ahead for the same inputs as f gives them (Predrawn): the same bytes.
func BuildWithPredrawn(f *Folder, pre *Predrawn) (html []byte, files map[string][]byte, err error) {
	d := drawFigures(figureJobs(f), true, func(figs []Figure, problems []string) {
		html, err = buildFrom(f, figs, problems)
	}, pre)
	if err != nil {
		return nil, nil, err
	}
	return html, d.files, nil
}

func buildFrom(f *Folder, figs []Figure, problems []string) ([]byte, error) {
	v := view{F: f, S: f.Summary, Problems: append(append([]string{}, f.Problems...), problems...)}
	v.Findings, v.Checks = findings(f)
	groups := []struct {
		title string
		ids   []string
	}{
		{"The data", []string{"fig-absorbance", "fig-input", "fig-map"}},
		{"How many components", []string{"fig-singular", "fig-efa"}},
		{"What was resolved", []string{"fig-spectra", "fig-profiles"}},
		{"How well it fits", []string{"fig-iterations", "fig-residual-map", "fig-residual-spectrum", "fig-vapour"}},
	}
	used := map[string]bool{}
	for _, g := range groups {
		sec := section{Title: g.title}
		for _, id := range g.ids {
			for _, fg := range figs {
				if fg.ID == id {
					sec.Figures = append(sec.Figures, figView(fg))
					used[id] = true
				}
			}
		}
		if len(sec.Figures) > 0 {
			v.Sections = append(v.Sections, sec)
		}
	}
	for _, fg := range figs {
		if !used[fg.ID] {
			v.Sections = append(v.Sections, section{Title: fg.Title, Figures: []figureView{figView(fg)}})
		}
	}
	v.FigureCount = len(figs)
	v.TimeUnit, _ = f.tableTimeUnit()
	v.TimeNote = f.timeUnitNote(f.timeSpan())
	v.Fits = f.fits()
	v.More = f.moreResults(v.TimeUnit)
	if f.AsRun != nil {
		v.AsRun, v.AsRunDropped = dropTimes(f.AsRun.Body)
	}
	if f.Manifest != nil {
		v.ManifestRows, v.ManifestText, v.ManifestDropped = manifestView(f.Manifest)
	}
	// Room for the figures' drawings, which are most of the page, and some
	// more: a buffer grown by doubling from nothing made and copied about
	// twice the page's megabytes, memory new to the writing phase.
	size := 64 << 10
	for _, fg := range figs {
		size += len(fg.SVG)
	}
	var b bytes.Buffer
	b.Grow(size)
	if err := page.Execute(&b, v); err != nil {
		return nil, fmt.Errorf("rendering report: %w", err)
	}
	return b.Bytes(), nil
}

type view struct {
	F               *Folder
	S               *Summary
	Findings        []string
	Checks          []string
	Sections        []section
	FigureCount     int
	Problems        []string
	More            moreView
	AsRun           string
	AsRunDropped    int
	ManifestRows    [][2]string
	ManifestText    string
	ManifestDropped int
	TimeUnit        string    // of text and tables
	TimeNote        string    // which unit, and whether chosen
	Fits            []fitView // kinetic fits, the reported one first, rate constants in TimeUnit
}

type section struct {
	Title   string
	Figures []figureView
}

type figureView struct {
	Figure
	SVGHTML template.HTML
	Items   []legendView
}

type legendView struct {
	Label  string
	Sample template.HTML
}

func figView(f Figure) figureView {
	fv := figureView{Figure: f, SVGHTML: template.HTML(f.SVG)} // drawn by us with escaped text
	for _, it := range f.Legend {
		fv.Items = append(fv.Items, legendView{Label: it.Label, Sample: template.HTML(sample(it))})
	}
	return fv
}

// sample is the little drawing of a legend entry.
func sample(it LegendItem) string {
	c := fmt.Sprintf("#%02x%02x%02x", it.Colour.R, it.Colour.G, it.Colour.B)
	switch {
	case it.Marker:
		return fmt.Sprintf(`<svg class="key" viewBox="0 0 28 10" width="28" height="10"><circle cx="14" cy="5" r="3.2" fill="%s"/></svg>`, c)
	case it.Fill:
		return fmt.Sprintf(`<svg class="key" viewBox="0 0 28 10" width="28" height="10"><rect x="1" y="1" width="26" height="8" fill="%s"/></svg>`, c)
	}
	dash := ""
	if it.Dash != nil {
		var parts []string
		for _, d := range it.Dash {
			parts = append(parts, fmt.Sprintf("%g", d))
		}
		dash = fmt.Sprintf(` stroke-dasharray="%s"`, strings.Join(parts, " "))
	}
	return fmt.Sprintf(`<svg class="key" viewBox="0 0 28 10" width="28" height="10"><line x1="1" y1="5" x2="27" y2="5" stroke="%s" stroke-width="2.2"%s/></svg>`, c, dash)
}

// extraKeys lists summary.json keys the report does not present in its own
// words as rows of a table, sorted by key: nested objects and lists are
// spread into one row per value (key.field, key[1].field), so a reader
// sees values rather than JSON.
func extraKeys(raw map[string]json.RawMessage, skip map[string]bool) [][2]string {
	var keys []string
	for k := range raw {
		if !knownKeys[k] && !skip[k] {
			keys = append(keys, k)
		}
	}
	sort.Strings(keys)
	var out [][2]string
	for _, k := range keys {
		d := json.NewDecoder(bytes.NewReader(raw[k]))
		d.UseNumber()
		var v any
		if err := d.Decode(&v); err != nil {
			continue
		}
		out = flatten(out, k, v, 0)
	}
	return out
}

// flatten adds one row per scalar of v under the path name; lists of
// scalars stay on one row. Deep nesting is shown as compact JSON.
func flatten(out [][2]string, name string, v any, depth int) [][2]string {
	switch x := v.(type) {
	case map[string]any:
		if len(x) == 0 || depth > 3 {
			break
		}
		keys := make([]string, 0, len(x))
		for k := range x {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		for _, k := range keys {
			out = flatten(out, name+"."+k, x[k], depth+1)
		}
		return out
	case []any:
		scalars := true
		for _, e := range x {
			switch e.(type) {
			case map[string]any, []any:
				scalars = false
			}
		}
		if !scalars && depth <= 3 {
			for i, e := range x {
				out = flatten(out, fmt.Sprintf("%s[%d]", name, i+1), e, depth+1)
			}
			return out
		}
		if scalars {
			parts := make([]string, len(x))
			for i, e := range x {
				parts[i] = scalarText(e)
			}
			if len(parts) == 0 {
				return append(out, [2]string{name, "none"})
			}
			return append(out, [2]string{name, strings.Join(parts, ", ")})
		}
	default:
		return append(out, [2]string{name, scalarText(x)})
	}
	b, _ := json.Marshal(v)
	return append(out, [2]string{name, string(b)})
}

func scalarText(v any) string {
	switch x := v.(type) {
	case nil:
		return "–"
	case string:
		return x
	case bool:
		if x {
			return "yes"
		}
		return "no"
	case json.Number:
		return x.String()
	}
	return fmt.Sprint(v)
}

// timestamp matches dates and clock times (RFC 3339 and similar).
var timestamp = regexp.MustCompile(`\d{4}-\d{2}-\d{2}[T ]\d{2}:\d{2}`)

// dropTimes removes lines holding a date or clock time: a rerun differs in
// them only, and the report must be the same bytes for the same results.
func dropTimes(s string) (string, int) {
	var keep []string
	n := 0
	for _, l := range strings.Split(s, "\n") {
		if timestamp.MatchString(l) {
			n++
			continue
		}
		keep = append(keep, l)
	}
	return strings.TrimRight(strings.Join(keep, "\n"), "\n"), n
}

// volatile are manifest keys that change from one rerun to the next.
var volatile = map[string]bool{"start": true, "started": true, "date": true, "time": true, "timestamp": true,
	"elapsed": true, "duration": true, "host": true, "hostname": true, "user": true, "when": true, "end": true, "finished": true}

func isVolatile(key, value string) bool {
	for _, tok := range strings.FieldsFunc(strings.ToLower(key), func(r rune) bool { return r == '_' || r == '.' || r == '-' || r == ' ' }) {
		if volatile[tok] {
			return true
		}
	}
	return timestamp.MatchString(value)
}

// manifestView flattens a JSON manifest into key/value rows (volatile ones
// left out); any other manifest is shown as text.
func manifestView(t *Text) (rows [][2]string, text string, dropped int) {
	var v any
	if err := json.Unmarshal([]byte(t.Body), &v); err != nil {
		text, dropped = dropTimes(t.Body)
		return nil, text, dropped
	}
	// The list of the folder's files is written after the report: left
	// out, `bandsolve report` rebuilds the run's own bytes.
	if m, ok := v.(map[string]any); ok {
		delete(m, output.FilesKey)
	}
	var walk func(prefix string, v any)
	walk = func(prefix string, v any) {
		switch x := v.(type) {
		case map[string]any:
			keys := make([]string, 0, len(x))
			for k := range x {
				keys = append(keys, k)
			}
			sort.Strings(keys)
			for _, k := range keys {
				p := k
				if prefix != "" {
					p = prefix + "." + k
				}
				walk(p, x[k])
			}
		case []any:
			for i, e := range x {
				walk(fmt.Sprintf("%s[%d]", prefix, i), e)
			}
		default:
			b, _ := json.Marshal(x)
			val := strings.Trim(string(b), `"`)
			if isVolatile(prefix, val) {
				dropped++
				return
			}
			rows = append(rows, [2]string{prefix, val})
		}
	}
	walk("", v)
	return rows, "", dropped
}

// noneBelow reports whether no criterion counts fewer than estimate.
func noneBelow(cs []output.CriterionJSON, estimate int) bool {
	for _, c := range cs {
		if c.Estimate < estimate {
			return false
		}
	}
	return true
}

// nuisanceNumbers lists the nuisance factors' numbers in words with their
// verb ("factor 3 is", "factors 3, 5 and 6 are"), or "" when there are none.
func nuisanceNumbers(s *Summary) string {
	var ns []string
	for _, nf := range s.NuisanceFactors {
		ns = append(ns, strconv.Itoa(nf.Factor))
	}
	switch len(ns) {
	case 0:
		return ""
	case 1:
		return "factor " + ns[0] + " is"
	}
	return "factors " + strings.Join(ns[:len(ns)-1], ", ") + " and " + ns[len(ns)-1] + " are"
}

// factorAccount says what the run's classification made of the factors above
// the noise ("of the 14 factors above the noise, 2 are chemistry, factors 3
// and 5 are not chemistry (see the advice) and the other 7 are noise
// correlated along the axis (see the notes)"), or "" when the summary does
// not show every one accounted for: some factor not named, or the
// classification finding more chemical factors than rank_estimate, or a
// folder written before factors_above_noise and noise_like_factors.
func factorAccount(s *Summary) string {
	named := nuisanceNumbers(s)
	if named == "" || s.FactorsAboveNoise == nil || s.NoiseLikeFactors == nil {
		return ""
	}
	above, noise := *s.FactorsAboveNoise, *s.NoiseLikeFactors
	if above-len(s.NuisanceFactors)-noise != s.RankEstimate {
		return ""
	}
	of := fmt.Sprintf("of the %d factors above the noise", above)
	if slices.ContainsFunc(s.RankCriteria, func(c output.CriterionJSON) bool { return c.AtLeast }) {
		// More lie above the noise than the classification examined (the notes say so).
		of = fmt.Sprintf("of the first %d factors above the noise, those examined", above)
	}
	if noise == 0 {
		return fmt.Sprintf("%s, %d are chemistry and %s not chemistry (see the advice)", of, s.RankEstimate, named)
	}
	what := "noise correlated along the axis"
	if s.NoiseWhiteFactors == noise {
		what = "noise"
	} else if s.NoiseWhiteFactors > 0 {
		what = fmt.Sprintf("noise (%d of them correlated along the axis)", noise-s.NoiseWhiteFactors)
	}
	return fmt.Sprintf("%s, %d are chemistry, %s not chemistry (see the advice) and the other %d are %s (see the notes)", of, s.RankEstimate, named, noise, what)
}

// vapourCountFinding says which counted component of a stack the
// water-vapour check measured to be the vapour's change, and what the
// chemistry then has.
func vapourCountFinding(v *output.VapourJSON) string {
	w := fmt.Sprintf("Component %d of the count is the water vapour's change, measured: without the vapour's course its singular value falls to the next one's (see the warnings). The chemistry of the stack has %d component(s)", v.CountedComponent, v.CountedComponent-1)
	if v.CountedReaction > 0 {
		w += fmt.Sprintf(" and %d independent reaction(s)", v.CountedReaction-1)
	}
	return w + "."
}

// findings says in words what was found and how sure it is; checks are
// the warnings the report itself derives from the files.
func findings(f *Folder) (find, checks []string) {
	s := f.Summary
	find = append(find, resolvedFinding(f))
	if s.ModeReason != "" {
		find = append(find, "Mode — "+s.ModeReason+".")
	}
	if len(s.RankCriteria) > 0 {
		find = append(find, rankFinding(s))
	}
	if s.DifferenceRank != nil && s.Mode == "species" {
		if *s.DifferenceRank < s.RankEstimate {
			find = append(find, fmt.Sprintf("The difference spectra have rank %d, below the %d of the absolute absorbance: a rank deficiency from mass balance — %d species take part in %d independent reaction(s).", *s.DifferenceRank, s.RankEstimate, s.RankEstimate, *s.DifferenceRank))
		}
	}
	if v := s.WaterVapour; v != nil && v.CountedComponent > 0 {
		find = append(find, vapourCountFinding(v))
	}
	if s.Components > 0 {
		find = append(find, fitFinding(s))
		if s.Converged {
			find = append(find, fmt.Sprintf("Alternating least squares converged in %d iterations.", s.Iterations))
		} else {
			checks = append(checks, fmt.Sprintf("Alternating least squares did not converge within %d iterations: the last spectra and profiles are shown, but rerun with a higher --max-iter before relying on them.", s.Iterations))
		}
	}
	for _, b := range s.Uniqueness() {
		find, checks = uniquenessFindings(b, find, checks)
	}
	if k := s.Kinetics; k != nil && len(k.RateConstants) > 0 {
		find = append(find, kineticsFinding(f, k))
	}
	if t := f.DemoCheck; t != nil && t.Index("spectrum_cosine") >= 0 {
		sc, pc := t.Col(t.Index("spectrum_cosine")), t.Col(t.Index("profile_cosine"))
		lo, _ := span(sc, pc)
		find = append(find, fmt.Sprintf("Against the invented truth of the demo every resolved spectrum and profile has a cosine of at least %s with the true one (1 = identical shape).", trimFloat(lo, 5)))
	}
	checks = append(checks, derivedChecks(f)...)
	return find, checks
}

// resolvedFinding says what was resolved from how much data.
func resolvedFinding(f *Folder) string {
	s := f.Summary
	what := "species"
	if s.Mode == "reactions" {
		what = "independent reaction(s)"
	}
	return fmt.Sprintf("%d %s resolved from %d spectra × %d points (%s).", s.Components, what, s.Spectra, s.Points, spectralAxis(f.axisName()).Label)
}

// rankFinding weighs the rank's evidence: the criteria agree, or the
// factors the run set aside as not chemistry account for their
// disagreement, or they disagree and the count needs care.
func rankFinding(s *Summary) string {
	agree := 0
	var each []string
	for _, c := range s.RankCriteria {
		if c.Estimate == s.RankEstimate && !c.AtLeast {
			agree++
		}
		each = append(each, output.CriterionText(c.Name, c.Estimate, c.AtLeast))
	}
	if agree == len(s.RankCriteria) {
		return fmt.Sprintf("Rank %d: all %d criteria agree (%s).", s.RankEstimate, len(s.RankCriteria), strings.Join(each, ", "))
	}
	if account := factorAccount(s); account != "" && noneBelow(s.RankCriteria, s.RankEstimate) {
		// The criteria count factors above the noise whatever they are;
		// the run's classification accounted for every one of them.
		return fmt.Sprintf("Rank %d chemical: the criteria count factors above the noise whether chemistry or not (%s); %s.", s.RankEstimate, strings.Join(each, ", "), account)
	}
	return fmt.Sprintf("Rank %d, but the criteria disagree (%s): look at the singular values and treat the count with care.", s.RankEstimate, strings.Join(each, ", "))
}

// fitFinding gives the lack of fit and what the fit's residual against the
// noise (residual_to_noise, the figure the resolution minimises) means, in
// the words the terminal uses for the same ratio (output.FitVerdict).
func fitFinding(s *Summary) string {
	fit := fmt.Sprintf("Lack of fit %s %% (explained variance %s %%)", trimFloat(s.LackOfFitPercent, 4), trimFloat(s.ExplainedVariancePercent, 7))
	if nl := s.NoiseLackOfFitPercent; nl > 0 {
		fit += fmt.Sprintf(" against the %s %% noise alone would give", trimFloat(nl, 3))
	}
	q := s.ResidualToNoise
	if !(q > 0) {
		return fit + "."
	}
	fit += fmt.Sprintf("; residual %s times the noise: %s", trimFloat(q, 3), output.FitVerdict(q, s.ResidualToNoiseLimit))
	if q > s.ResidualToNoiseLimit && q > 1 {
		return fit + "; see the residual map."
	}
	return fit + "."
}

// uniquenessFindings adds what a component's uniqueness range says: not
// determined (a check), essentially unique, or the range of its share;
// and a check when the search stopped on its budget.
func uniquenessFindings(b Band, find, checks []string) ([]string, []string) {
	w := b.Max - b.Min
	if b.NotDetermined {
		why := b.Reason
		if why == "" {
			why = "the search could not stay within the constraints"
		}
		checks = append(checks, fmt.Sprintf("The uniqueness range of %s was not determined: %s (it reached shares of the signal from %s to %s, which bound nothing).", b.Component, why, trimFloat(b.Min, 3), trimFloat(b.Max, 3)))
	} else if w <= 0.05*math.Max(b.Max, 1e-12) {
		find = append(find, fmt.Sprintf("%s is essentially unique within the constraints and the noise: every solution that fits as well gives it a share of the signal between %s and %s.", b.Component, trimFloat(b.Min, 3), trimFloat(b.Max, 3)))
	} else {
		find = append(find, fmt.Sprintf("%s is not unique: solutions that fit the data as well and keep every constraint give it a share of the signal from %s to %s.", b.Component, trimFloat(b.Min, 3), shareText(b.Max)))
	}
	// An unbounded range's search stops on its budget: "no bound"
	// already says more than this would (as on the terminal).
	if ends := unconvergedEnds(b); !b.NotDetermined && ends != "" && b.Max <= unboundedShare {
		checks = append(checks, fmt.Sprintf("The search for the %s of %s stopped on its budget before converging: its range is at least as wide as shown and may be wider.", ends, b.Component))
	}
	return find, checks
}

// kineticsFinding gives the rate constants of every kinetic fit, the
// reported one (summary.json's rate_constants) first and named so, with
// their standard errors and the half-lives of first-order steps: the
// terminal shows every fit, and a warning that sends the reader to the
// data fit's constants must find them here. A model of one step is that
// step: its name would follow the model's text twice.
func kineticsFinding(f *Folder, k *Kinetics) string {
	fits := f.fits()
	if len(fits) == 1 && fits[0].Method == "" {
		return fmt.Sprintf("Kinetic model %s: %s.", k.Model, fitText(fits[0], len(fits[0].Rates) == 1))
	}
	var parts []string
	for i, fv := range fits {
		t := fitText(fv, len(fv.Rates) == 1)
		switch {
		case i == 0:
			parts = append(parts, fmt.Sprintf("Kinetic model %s, %s fit (the one summary.json reports): %s.", k.Model, fv.Method, t))
		default:
			parts = append(parts, fmt.Sprintf("%s fit: %s.", upperFirst(fv.Method), t))
		}
	}
	return strings.Join(parts, " ")
}

// fitText is one fit's constants. A constant the data do not determine has
// no half-life (it would be one of a continuum that fits as well); the sum
// they determine follows.
func fitText(fv fitView, oneStep bool) string {
	var ks []string
	for _, rc := range fv.Rates {
		step := rc.Step + ": "
		if oneStep {
			step = ""
		}
		t := fmt.Sprintf("%sk = %s ± %s %s", step, trimFloat(rc.K, 4), trimFloat(rc.StdErr, 2), unitText(rc.Unit))
		if rc.NotDetermined {
			t = fmt.Sprintf("%sk = %s %s, not determined by the data (no standard error: see the warnings)", step, trimFloat(rc.K, 4), unitText(rc.Unit))
		}
		if rc.HalfLife > 0 {
			t += fmt.Sprintf(" (half-life %s %s)", trimFloat(rc.HalfLife, 3), rc.TimeUnit)
		}
		ks = append(ks, t)
	}
	if d := fv.Sum; d != nil {
		ks = append(ks, fmt.Sprintf("their sum, which the data do determine: %s = %s ± %s %s", d.Step, trimFloat(d.K, 4), trimFloat(d.StdErr, 2), unitText(d.Unit)))
	}
	if t := fv.T0; t != nil {
		ks = append(ks, t0Text(t))
	}
	return strings.Join(ks, "; ")
}

func upperFirst(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

// fitView is one kinetic fit as the report shows it: its method, whether
// it is the one summary.json's rate_constants hold, its constants in the
// report's time unit, and the sum the data determine (Step holds its
// terms), nil when there is none.
type fitView struct {
	Method   string
	Reported bool
	Rates    []rateView
	Sum      *rateView
	// T0 is the fitted start time (--fit-t0) in the report's time unit,
	// nil when t0 was given.
	T0 *t0View
}

// fits are the summary's kinetic fits, the reported one first. A summary
// without fits (older versions) has the reported one only.
func (f *Folder) fits() []fitView {
	if f.Summary == nil || f.Summary.Kinetics == nil {
		return nil
	}
	k := f.Summary.Kinetics
	out := []fitView{{Method: k.Method, Reported: true, Rates: f.ratesOf(k.RateConstants), Sum: f.sumView(k.DeterminedSum), T0: f.t0View(k.T0Fit)}}
	for _, fj := range k.Fits {
		if fj.Method != k.Method {
			out = append(out, fitView{Method: fj.Method, Rates: f.ratesOf(fj.RateConstants), Sum: f.sumView(fj.DeterminedSum), T0: f.t0View(fj.T0Fit)})
		}
	}
	return out
}

func (f *Folder) sumView(d *output.DeterminedSum) *rateView {
	if d == nil {
		return nil
	}
	unit, div := f.tableTimeUnit()
	v := rateView{RateConstant: output.RateConstant{Step: d.Terms}, TimeUnit: unit}
	v.K, v.Unit = rateIn(d.K, d.Unit, unit, div)
	v.StdErr, _ = rateIn(d.StdErr, d.Unit, unit, div)
	return &v
}

// derivedChecks looks at the files for what a chemist should be warned of.
func derivedChecks(f *Folder) []string {
	var out []string
	s := f.Summary
	// A component that vanished: its profile never rises above 1 % of the
	// largest one's.
	if t := f.Profiles; t != nil {
		comps := f.components(t, 1)
		// Each column parsed once: Col parses the whole column, so calling
		// it per row made this step quadratic in the number of spectra.
		cols := make([][]float64, len(comps))
		maxes := make([]float64, len(comps))
		top := 0.0
		for k, j := range comps {
			cols[k] = t.Col(j)
			_, maxes[k] = span(cols[k])
			top = math.Max(top, maxes[k])
		}
		for k, j := range comps {
			if top > 0 && maxes[k] < 0.01*top {
				out = append(out, fmt.Sprintf("%s has vanished: its profile never exceeds 1 %% of the largest one's. Fewer components may describe the data as well (--components %d).", t.Header[j], len(comps)-1))
			}
		}
		// Closure: rows should sum to the total.
		if s.Mode == "species" && s.Closure != "" && s.Closure != "off" {
			var total float64
			if _, err := fmt.Sscan(s.Closure, &total); err == nil && total > 0 && len(comps) > 0 {
				worst := 0.0
				for i := 0; i < t.Rows(); i++ {
					sum := 0.0
					for _, c := range cols {
						sum += c[i]
					}
					worst = math.Max(worst, math.Abs(sum-total)/total)
				}
				if worst > 0.01 {
					out = append(out, fmt.Sprintf("Closure is violated: the concentrations of some spectra sum to a value %s %% away from the total %s. Dilution, sampling or a species without bands can cause this; compare with --closure off.", trimFloat(100*worst, 2), s.Closure))
				}
			}
		}
	}
	// Saturated regions; a run since the check moved into the pipeline
	// already lists it among the summary's warnings.
	if f.Maps != nil && s.Mode == "species" && !hasWarning(s.Warnings, "absorbance exceeds 2") {
		if m := f.Maps.Matrices["data"]; m != nil {
			if w := HighAbsorbanceWarning(f.Maps.Axis, f.axisName(), m.Rows); w != "" {
				out = append(out, strings.ToUpper(w[:1])+w[1:])
			}
		}
	}
	return out
}

func hasWarning(ws []string, part string) bool {
	for _, w := range ws {
		if strings.Contains(strings.ToLower(w), part) {
			return true
		}
	}
	return false
}

// SaturatedAbsorbance: above absorbance 2 under 1 % of the light reaches
// the detector, where noise explodes and bands flatten (common practice;
// the 1 % figure is a rule of thumb, from memory).
const SaturatedAbsorbance = 2.0

// HighAbsorbanceWarning names the axis ranges where some spectrum (a row
// of rows, one value per axis point) exceeds SaturatedAbsorbance, or
// returns "" when none does. The run prints it and the report shows it.
func HighAbsorbanceWarning(axis []float64, axisName string, rows [][]float64) string {
	var ranges []string
	start := -1
	hot := func(j int) bool {
		for _, r := range rows {
			if j < len(r) && r[j] > SaturatedAbsorbance {
				return true
			}
		}
		return false
	}
	for j := 0; j <= len(axis); j++ {
		if j < len(axis) && hot(j) {
			if start < 0 {
				start = j
			}
			continue
		}
		if start >= 0 {
			r := trimFloat(axis[start], 5)
			if j-1 > start {
				r += "–" + trimFloat(axis[j-1], 5)
			}
			ranges = append(ranges, r)
			start = -1
		}
	}
	if len(ranges) == 0 {
		return ""
	}
	unit := spectralAxis(axisName).Unit
	if unit == "" {
		unit = "(" + axisName + ")"
	}
	return fmt.Sprintf("absorbance exceeds 2 (under 1 %% of the light transmitted) at %s %s: such regions are often saturated; consider --exclude LO:HI for them", strings.Join(ranges, ", "), unit)
}

// unboundedShare: a largest share above 100 times the whole signal is
// reached only by components cancelling each other, so it is where the
// search stopped, not a bound (the run warns so; io/pipeline uses the same
// limit).
const unboundedShare = 100

// shareText writes a largest share, or says it is unbounded.
func shareText(v float64) string {
	if v > unboundedShare {
		return "no bound (the search stopped at " + trimFloat(v, 3) + ")"
	}
	return trimFloat(v, 3)
}

// unitText writes a unit with superscript exponents (s^-1 as s⁻¹).
func unitText(u string) string {
	if u == "" {
		u = "s^-1"
	}
	return strings.NewReplacer("^-1", "⁻¹", "^-2", "⁻²", "^2", "²").Replace(u)
}

// rateView is a rate constant as shown: per TimeUnit, half-life in it.
type rateView struct {
	output.RateConstant
	TimeUnit string
}

// rates are the summary's rate constants in the report's time unit.
func (f *Folder) rates() []rateView {
	if f.Summary == nil || f.Summary.Kinetics == nil {
		return nil
	}
	return f.ratesOf(f.Summary.Kinetics.RateConstants)
}

// ratesOf are rate constants in the report's time unit.
func (f *Folder) ratesOf(rcs []output.RateConstant) []rateView {
	unit, div := f.tableTimeUnit()
	var out []rateView
	for _, rc := range rcs {
		v := rateView{RateConstant: rc, TimeUnit: unit}
		v.K, v.Unit = rateIn(rc.K, rc.Unit, unit, div)
		v.StdErr, _ = rateIn(rc.StdErr, rc.Unit, unit, div)
		v.HalfLife = rc.HalfLife / div
		if rc.NotDetermined { // a half-life of an undetermined k is no more determined than k
			v.HalfLife = 0
		}
		out = append(out, v)
	}
	return out
}

func fmtNum(v float64) string { return trimFloat(v, 4) }

// criterionVerdict says whether a rank criterion agrees with the rank: a count
// that stopped at the most the criteria count (AtLeast) is a lower bound, which agrees
// with nothing.
func criterionVerdict(c Criterion, rank int) string {
	if c.Estimate == rank && !c.AtLeast {
		return "agrees"
	}
	return "differs"
}

func yesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}

var page = template.Must(template.New("report").Funcs(template.FuncMap{
	"num":       fmtNum,
	"num7":      func(v float64) string { return trimFloat(v, 7) },
	"yesno":     yesNo,
	"verdict":   criterionVerdict,
	"deref":     func(p *int) int { return *p },
	"sub":       func(a, b float64) float64 { return a - b },
	"unit":      unitText,
	"share":     shareText,
	"perTime":   perTime,
	"tm":        timeText,
	"tx":        timesWithSeconds,
	"figAnchor": func(f figureView) string { return "sec-" + f.ID },
}).Parse(pageTemplate))

// unconvergedEnds names the ends of a range whose search the summary
// records as not converged ("" when both converged or the summary predates
// the record).
func unconvergedEnds(b Band) string {
	return UnconvergedEnds(b.MinConverged == nil || *b.MinConverged, b.MaxConverged == nil || *b.MaxConverged)
}

// UnconvergedEnds names the ends of a range whose search did not converge
// ("" when both did), as the report, the warnings and the terminal say it.
func UnconvergedEnds(minConverged, maxConverged bool) string {
	switch {
	case !minConverged && !maxConverged:
		return "smallest and largest shares"
	case !minConverged:
		return "smallest share"
	case !maxConverged:
		return "largest share"
	}
	return ""
}

// t0View is a fitted start time in the report's time unit.
type t0View struct {
	output.T0Fit
	Unit string
}

// t0View converts a fit's fitted start time to the report's time unit,
// nil when t0 was not fitted.
func (f *Folder) t0View(t *output.T0Fit) *t0View {
	if t == nil {
		return nil
	}
	unit, div := f.tableTimeUnit()
	v := &t0View{T0Fit: *t, Unit: unit}
	v.T0, v.StdErr, v.Lower, v.Upper = t.T0/div, t.StdErr/div, t.Lower/div, t.Upper/div
	return v
}

// t0Text is a fitted start time in words, for the findings.
func t0Text(t *t0View) string {
	rng := fmt.Sprintf("fitted within %s–%s %s", trimFloat(t.Lower, 4), trimFloat(t.Upper, 4), t.Unit)
	if t.NotDetermined {
		return fmt.Sprintf("start time t0 not determined by the data (%s; see the warnings)", rng)
	}
	end := ""
	if t.AtEnd != "" {
		end = fmt.Sprintf(", ran to the %s of that range", t.AtEnd)
	}
	return fmt.Sprintf("start time t0 = %s ± %s %s (%s%s)", trimFloat(t.T0, 6), trimFloat(t.StdErr, 2), t.Unit, rng, end)
}
