package campaign

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/bandsolve/bandsolve/io/output"

	"github.com/bandsolve/bandsolve/internal/regular"
)

// SummaryName is the file of an output folder Collect reads.
const SummaryName = "summary.json"

// maxSummary bounds what is read of a summary.json: a real one is a few
// kB, and a folder from elsewhere is not trusted to be one.
const maxSummary = 16 << 20

// The fixed columns of the collected table, each a key of summary.json
// (CONTRACT.md) except folder and status.
var fixedColumns = []string{"folder", "status", "components", "rank_estimate", "mode", "spectra", "points",
	"noise_sigma", "lack_of_fit_percent", "noise_lack_of_fit_percent", "residual_to_noise", "kinetics_model"}

// Collect reads summary.json of every folder and returns one table: a row
// per folder in the order given, the fixed columns, then for each kinetic
// step met (in order of first appearance) the pair k_per_s[STEP],
// stderr_per_s[STEP] of the reported fit, then warnings (how many), then
// water_vapour and vapour_line_change (vapourCells), then the context
// columns that say whether two rows are the same analysis (contextColumns,
// from the summary and the as-run record), then the rate constants of
// every fit keyed by fit, model and step (keyedStep), then notes. A key a
// summary lacks is an empty cell; a folder without a readable summary.json
// keeps its row, with the reason in status, and is listed in problems.
// Numbers are written as output.Float writes every result file's:
// encoding/json, which wrote summary.json, gives 0.00003710714947 beside
// 1.947858933e-7 in one column of rate constants and their errors.
//
// A rate constant the data do not determine (not_determined) is an empty
// cell with no standard error, and notes says so with the sum the data do
// determine: the value the fit ended at is one of a continuum that fits
// as well, not a measurement.
//
// residual_to_noise is always the run's own √(χ²/ν) (residualToNoise).
func Collect(folders []string) (t output.Table, problems []string) {
	var rows []row
	var steps, keyed columnSet
	var t0 []string
	for _, dir := range folders {
		r, err := collectRow(dir)
		if err != nil {
			problems = append(problems, fmt.Sprintf("%s: %v", dir, err))
		}
		steps.add(r.steps.order...)
		keyed.add(r.keyed.order...)
		if r.t0Fitted {
			t0 = t0Columns
		}
		rows = append(rows, r)
	}
	t.Header = append([]string(nil), fixedColumns...)
	t.Header = append(t.Header, steps.header()...)
	t.Header = append(t.Header, t0...)
	t.Header = append(t.Header, middleColumns...)
	t.Header = append(t.Header, contextColumns...)
	t.Header = append(t.Header, keyed.header()...)
	t.Header = append(t.Header, "notes")
	for _, r := range rows {
		cells := r.pick(fixedColumns)
		cells = append(cells, r.steps.cells(steps.order)...)
		cells = append(cells, r.pick(t0)...)
		cells = append(cells, r.pick(middleColumns)...)
		cells = append(cells, r.pick(contextColumns)...)
		cells = append(cells, r.keyed.cells(keyed.order)...)
		t.Rows = append(t.Rows, append(cells, r.cells["notes"]))
	}
	return t, problems
}

// t0Columns, the reported fit's fitted start time and its standard error
// (summary.json's kinetics.t0_fit), follow its rate constants when some
// folder fitted t0 (--fit-t0); a table of folders that all gave t0 has
// none, as before the option. Both cells are empty, with a note, when the
// data do not determine it; t0_s (a context column) stays the time given.
var t0Columns = []string{"t0_fitted_s", "stderr_t0_s"}

// middleColumns follow the reported fit's rate constants.
var middleColumns = []string{"warnings", "water_vapour", "vapour_line_change"}

// contextColumns say what a chemist comparing rows must know to call two
// rows the same analysis: which fit the k_per_s[STEP] columns hold and the
// settings that change what a rate constant means (summaryContext,
// recordContext), and settings_id over all the settings but the inputs.
var contextColumns = []string{"kinetic_fit", "t0_s", "kinetics_map", "baseline", "closure", "noise_weights", "outlier_spectra",
	"region", "exclude", "drop", "hard_model", "c0", "fit_c0", "k_fixed", "settings_id"}

// columnSet is a list of column keys in the order first met.
type columnSet struct {
	order []string
	seen  map[string]bool
}

func (c *columnSet) add(keys ...string) {
	if c.seen == nil {
		c.seen = map[string]bool{}
	}
	for _, k := range keys {
		if !c.seen[k] {
			c.seen[k] = true
			c.order = append(c.order, k)
		}
	}
}

// header names each key's pair of columns: k_per_s[KEY], stderr_per_s[KEY].
func (c *columnSet) header() []string {
	var h []string
	for _, k := range c.order {
		h = append(h, "k_per_s["+k+"]", "stderr_per_s["+k+"]")
	}
	return h
}

// ratePairs are one row's rate constants and standard errors by key.
type ratePairs struct {
	order []string
	val   map[string][2]string
}

func (p *ratePairs) set(key, k, se string) {
	if p.val == nil {
		p.val = map[string][2]string{}
	}
	if _, ok := p.val[key]; !ok {
		p.order = append(p.order, key)
	}
	p.val[key] = [2]string{k, se}
}

func (p *ratePairs) cells(keys []string) []string {
	var c []string
	for _, k := range keys {
		v := p.val[k]
		c = append(c, v[0], v[1])
	}
	return c
}

// row is one folder's cells: the named columns, the reported fit's rate
// constants by step, and every fit's by keyedStep.
type row struct {
	cells        map[string]string
	asked        map[string]string // settings of the as-run record (recordContext), by keyword
	steps, keyed ratePairs
	notes        []string
	t0Fitted     bool
}

func (r *row) pick(names []string) []string {
	var c []string
	for _, n := range names {
		c = append(c, r.cells[n])
	}
	return c
}

// KineticsNotDone is the status of a folder whose run resolved the data
// but did not fit the model asked for (summary.json's kinetics_not_done).
const KineticsNotDone = "kinetics not done"

func collectRow(dir string) (row, error) {
	r := row{cells: map[string]string{"folder": dir}}
	s, err := readSummary(dir)
	if err != nil {
		r.cells["status"] = err.Error()
		return r, err
	}
	r.cells["status"] = "ok"
	if why, ok := s.scalar("kinetics_not_done"); ok && why != "" {
		// The resolution stands, but the run failed (exit 1 or 2): a
		// row that read "ok" with empty rate constants looked like a
		// run without --model.
		r.cells["status"] = KineticsNotDone
		r.notes = append(r.notes, "kinetics not done: "+why)
	}
	var bad error
	for _, k := range fixedColumns[2:] {
		if v, ok := s.scalar(k); ok {
			r.cells[k] = v
		} else if raw, ok := s[k]; ok && bad == nil && outOfRange(raw) {
			bad = fmt.Errorf("%s: %s holds %s, beyond any number a run writes (its cell is left empty); run the analysis again", SummaryName, k, clipRaw(raw))
		}
	}
	if bad != nil {
		// A number no run writes is a damaged summary: its row must not
		// read "ok" with the cell quietly empty.
		r.cells["status"] = bad.Error()
	}
	r.residualToNoise(s)
	if kin := s.object("kinetics"); kin != nil {
		r.kinetics(kin)
	}
	r.cells["warnings"] = strconv.Itoa(len(s.list("warnings")))
	r.cells["water_vapour"], r.cells["vapour_line_change"] = vapourCells(s.object("water_vapour"))
	r.summaryContext(s)
	r.recordContext(dir)
	if r.cells["kinetics_model"] == "" {
		r.cells["kinetics_model"] = r.asked["model"] // the model asked for, fitted or not
	}
	r.cells["notes"] = strings.Join(r.notes, "; ")
	return r, bad
}

// outOfRange says a summary's value is a JSON number that float64 cannot
// hold (1e400): scalar leaves it out, as no run writes one.
func outOfRange(raw json.RawMessage) bool {
	var n json.Number
	if json.Unmarshal(raw, &n) != nil {
		return false
	}
	_, err := n.Float64()
	return err != nil
}

// clipRaw is a raw JSON value for a message, cut to 40 bytes.
func clipRaw(raw json.RawMessage) string {
	if len(raw) > 40 {
		return string(raw[:40]) + "…"
	}
	return string(raw)
}

// residualToNoise fills residual_to_noise with the summary's own key: √(χ²/ν)
// of the fit, weighted as the run weighted it (noise_weights). A summary
// written before the key (before noise weighting existed, so unweighted,
// noise_weights absent or off) gets lack_of_fit_percent ÷
// noise_lack_of_fit_percent, which is the same quantity for an unweighted
// fit: both are 100·‖·‖/‖D‖ of the same data, so the ratio is the RMS
// residual per degree of freedom over the noise σ (io/pipeline's
// residualToNoise computes the key so). For a noise-weighted fit that
// ratio is another quantity (the trial's catalyst-0.01 run: 2.3396
// unweighted against its key's 2.2186), so the cell stays empty with a
// note; so does a key of 0, which says no noise level was known.
func (r *row) residualToNoise(s object) {
	delete(r.cells, "residual_to_noise") // the fixed columns' loop copied the key as written
	if v, ok := s.number("residual_to_noise"); ok {
		if v > 0 {
			r.cells["residual_to_noise"] = output.Float(v)
		} else {
			r.notes = append(r.notes, "residual_to_noise: no noise level was known (summary.json has 0)")
		}
		return
	}
	q := s.ratio("lack_of_fit_percent", "noise_lack_of_fit_percent")
	if q == "" {
		return
	}
	if w, ok := s.scalar("noise_weights"); ok && w != "off" {
		r.notes = append(r.notes, fmt.Sprintf("residual_to_noise: not in summary.json; lack_of_fit_percent ÷ noise_lack_of_fit_percent (%s) is the unweighted ratio, not the residual of this %s-weighted fit over the noise, so it is left out", q, w))
		return
	}
	r.cells["residual_to_noise"] = q
}

// kinetics fills the model, the reported fit's rate constants by step and
// every fit's by keyedStep. A summary without fits (older versions) has
// the reported fit only.
func (r *row) kinetics(kin object) {
	if v, ok := kin.scalar("model"); ok {
		r.cells["kinetics_model"] = v
	}
	method, _ := kin.scalar("method")
	for _, rc := range kin.list("rate_constants") {
		step, k, se := rateCells(rc)
		r.steps.set(step, k, se)
	}
	fits := kin.list("fits")
	if len(fits) == 0 {
		reported := object{}
		for key, v := range kin {
			reported[key] = v
		}
		if method == "" {
			reported["method"] = json.RawMessage(`"reported"`)
		}
		fits = []object{reported}
	}
	for _, f := range fits {
		r.fit(f)
	}
	r.t0Fit(kin.object("t0_fit"))
}

// t0Fit fills the fitted start time's columns (t0Columns) from the
// reported fit's t0_fit, nil when t0 was not fitted.
func (r *row) t0Fit(t object) {
	if t == nil {
		return
	}
	r.t0Fitted = true
	if v, _ := t.scalar("not_determined"); v == "true" {
		r.notes = append(r.notes, "t0: the data do not determine the fitted start time")
	} else {
		r.cells["t0_fitted_s"], _ = t.scalar("t0_s")
		r.cells["stderr_t0_s"], _ = t.scalar("stderr_s")
	}
	// An end of its range reached is said either way (docs/campaigns.md:
	// "a note too").
	if end, ok := t.scalar("at_end"); ok {
		r.notes = append(r.notes, "t0: the fitted start time ran to the "+end+" of its range")
	}
}

// fit adds one fit's rate constants, and its determined sum, under keys
// that hold the fit and the model, so that different fits and models never
// share a column; and a note when some constant is not determined.
func (r *row) fit(f object) {
	method, _ := f.scalar("method")
	rcs := f.list("rate_constants")
	var steps []string
	for _, rc := range rcs {
		st, _ := rc.scalar("step")
		steps = append(steps, st)
	}
	model := strings.Join(steps, "; ")
	for _, rc := range rcs {
		step, k, se := rateCells(rc)
		r.keyed.set(keyedStep(method, model, step), k, se)
	}
	sum := f.object("determined_sum")
	if sum != nil {
		terms, _ := sum.scalar("terms")
		k, _ := sum.scalar("k_per_s")
		se, _ := sum.scalar("stderr_per_s")
		r.keyed.set(keyedStep(method, model, terms), k, se)
	}
	if n := undeterminedNote(method, rcs, sum); n != "" {
		r.notes = append(r.notes, n)
	}
	r.oneLevel(method, model, f.object("one_noise_level"))
	r.eachWeighted(method, model, f.object("each_spectrum_weighted"))
}

// eachWeightedFit names the data fit with each spectrum weighted by its own
// noise level (summary.json's each_spectrum_weighted) in the keyed columns
// when the fit with one level is the one reported: both stay side by side.
const eachWeightedFit = " with each spectrum weighted"

// eachWeighted adds a fit's each_spectrum_weighted rate constants under the
// key of the fit with eachWeightedFit after its name.
func (r *row) eachWeighted(method, model string, ew object) {
	if ew == nil {
		return
	}
	r.keyedRates(method+eachWeightedFit, model, ew)
}

// oneLevelFit names the data fit made again with one noise level for every
// spectrum (summary.json's one_noise_level) in the keyed columns, beside
// the fit it repeats: a chemist comparing rate constants across a series
// sees at once which of them the spectra's weights move.
const oneLevelFit = " with one noise level"

// oneLevel adds a fit's one_noise_level rate constants under the key of
// the fit with oneLevelFit after its name (the run's warning, counted in
// warnings, says when they differ beyond the noise).
func (r *row) oneLevel(method, model string, ol object) {
	if ol == nil {
		return
	}
	r.keyedRates(method+oneLevelFit, model, ol)
}

// keyedRates adds the rate constants of fit object f, and its determined
// sum, under the key of fit.
func (r *row) keyedRates(fit, model string, f object) {
	for _, rc := range f.list("rate_constants") {
		step, k, se := rateCells(rc)
		r.keyed.set(keyedStep(fit, model, step), k, se)
	}
	if sum := f.object("determined_sum"); sum != nil {
		step, k, se := rateCells(sum)
		r.keyed.set(keyedStep(fit, model, step), k, se)
	}
}

// keyedStep is the key of a rate constant that no other fit or model
// shares: "FIT | STEPS | STEP", STEPS being the model as its steps in the
// order written ("A -> B; B -> C" for 'A -> B -> C'). " | " cannot occur
// in a reaction scheme, so the three parts read back unambiguously.
func keyedStep(fit, model, step string) string {
	return fit + " | " + model + " | " + step
}

// rateCells are a rate constant's step, value and standard error as
// written; both cells empty when the data do not determine it.
func rateCells(rc object) (step, k, se string) {
	step, _ = rc.scalar("step")
	k, _ = rc.scalar("k_per_s")
	se, _ = rc.scalar("stderr_per_s")
	if notDetermined(rc) {
		k, se = "", ""
	}
	return step, k, se
}

// summaryContext fills the context columns summary.json holds.
func (r *row) summaryContext(s object) {
	for _, k := range []string{"baseline", "closure", "noise_weights"} {
		r.cells[k], _ = s.scalar(k)
	}
	if _, ok := s["outlier_spectra"]; ok {
		r.cells["outlier_spectra"] = strconv.Itoa(len(s.list("outlier_spectra")))
	}
	kin := s.object("kinetics")
	if kin == nil {
		return
	}
	r.cells["kinetic_fit"], _ = kin.scalar("method")
	r.cells["t0_s"], _ = kin.scalar("t0_s")
	var m []string
	for _, e := range kin.list("map") {
		name, _ := e.scalar("name")
		comp, _ := e.scalar("component")
		m = append(m, name+"="+comp)
	}
	r.cells["kinetics_map"] = strings.Join(m, " ")
}

func notDetermined(rc object) bool {
	v, _ := rc.scalar("not_determined")
	return v == "true"
}

// undeterminedNote says which of a fit's rate constants the data do not
// determine, and the sum they do when the summary gives one; "" when all
// are determined.
func undeterminedNote(method string, rcs []object, sum object) string {
	var steps []string
	for _, rc := range rcs {
		if notDetermined(rc) {
			st, _ := rc.scalar("step")
			steps = append(steps, st)
		}
	}
	if len(steps) == 0 {
		return ""
	}
	fit := "the kinetic fit"
	if method != "" {
		fit = method + " fit"
	}
	n := fmt.Sprintf("%s: k of %s not determined by the data (cells left empty)", fit, strings.Join(steps, ", "))
	if sum != nil {
		terms, _ := sum.scalar("terms")
		k, _ := sum.scalar("k_per_s")
		se, _ := sum.scalar("stderr_per_s")
		unit, _ := sum.scalar("unit")
		n += fmt.Sprintf(", only their sum is: %s = %s ± %s %s", terms, k, se, unit)
	}
	return n
}

// vapourCells are the water-vapour check of a summary: changed, no change
// or not checked (empty for a summary without the check), and when
// changed the largest line_change of its experiments, as written.
func vapourCells(v object) (state, change string) {
	if v == nil {
		return "", ""
	}
	if checked, _ := v.scalar("checked"); checked != "true" {
		return "not checked", ""
	}
	if detected, _ := v.scalar("detected"); detected != "true" {
		return "no change", ""
	}
	var changes []json.Number
	if raw, ok := v["line_change"]; ok {
		d := json.NewDecoder(bytes.NewReader(raw))
		d.UseNumber()
		_ = d.Decode(&changes) // a malformed list leaves the cell empty
	}
	best, bestV := "", math.Inf(-1)
	for _, c := range changes {
		if f, err := c.Float64(); err == nil && f > bestV {
			best, bestV = output.Float(f), f
		}
	}
	return "changed", best
}

// object is a JSON object read loosely: any key may be missing or of
// another type than expected, and is then simply absent.
type object map[string]json.RawMessage

func readSummary(dir string) (object, error) {
	if err := checkFolder(dir); err != nil {
		return nil, err
	}
	p := filepath.Join(dir, SummaryName)
	st, err := os.Stat(p)
	switch {
	case err != nil && holdsResults(dir):
		return nil, fmt.Errorf("no %s here, but its subfolders hold results: give them, e.g. bandsolve collect %s", SummaryName, filepath.Join(dir, "*")+string(filepath.Separator))
	case err != nil:
		return nil, fmt.Errorf("no %s (not a bandsolve output folder, or its run failed)", SummaryName)
	case !st.Mode().IsRegular():
		return nil, fmt.Errorf("%s is not a regular file", SummaryName)
	case st.Size() > maxSummary:
		return nil, fmt.Errorf("%s is %d bytes, more than a summary can be (%d)", SummaryName, st.Size(), maxSummary)
	}
	f, _, err := regular.Open(p)
	if err != nil {
		return nil, fmt.Errorf("cannot read %s: %v", SummaryName, err)
	}
	defer f.Close()
	raw, err := io.ReadAll(io.LimitReader(f, maxSummary+1))
	if err != nil {
		return nil, fmt.Errorf("cannot read %s: %v", SummaryName, err)
	}
	var o object
	if err := json.Unmarshal(raw, &o); err != nil {
		return nil, fmt.Errorf("%s is not the summary bandsolve writes: %s; run the analysis again into a new --out, or leave this folder out", SummaryName, output.JSONFault(err))
	}
	return o, nil
}

// checkFolder says in the user's terms why dir cannot hold results: it
// does not exist, or it is a file.
func checkFolder(dir string) error {
	st, err := os.Stat(dir)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return errors.New("does not exist; check the folder's path")
	case err != nil:
		var pe *fs.PathError
		if errors.As(err, &pe) {
			err = pe.Err
		}
		return fmt.Errorf("cannot read: %v", err)
	case !st.IsDir():
		return errors.New("is a file, not an output folder; give the folder that holds summary.json")
	}
	return nil
}

// holdsResults says whether a folder without summary.json has a subfolder
// with one: the parent of a batch's results, given for the results (a
// slip of the glob).
func holdsResults(dir string) bool {
	ents, err := os.ReadDir(dir)
	if err != nil {
		return false
	}
	for _, e := range ents {
		if e.IsDir() {
			if st, err := os.Stat(filepath.Join(dir, e.Name(), SummaryName)); err == nil && st.Mode().IsRegular() {
				return true
			}
		}
	}
	return false
}

// scalar gives a string, number or boolean value as its text, a number as
// output.Float writes it (one beyond float64's range: absent).
func (o object) scalar(key string) (string, bool) {
	raw, ok := o[key]
	if !ok {
		return "", false
	}
	d := json.NewDecoder(bytes.NewReader(raw))
	d.UseNumber()
	var v any
	if d.Decode(&v) != nil {
		return "", false
	}
	switch x := v.(type) {
	case string:
		return x, true
	case json.Number:
		f, err := x.Float64()
		if err != nil {
			return "", false
		}
		return output.Float(f), true
	case bool:
		return strconv.FormatBool(x), true
	}
	return "", false
}

func (o object) number(key string) (float64, bool) {
	var v float64
	raw, ok := o[key]
	if !ok || json.Unmarshal(raw, &v) != nil {
		return 0, false
	}
	return v, true
}

// ratio is a/b when both are present and positive, else "".
func (o object) ratio(a, b string) string {
	x, ok1 := o.number(a)
	y, ok2 := o.number(b)
	if !ok1 || !ok2 || !(x >= 0) || !(y > 0) {
		return ""
	}
	return output.Float(x / y)
}

func (o object) object(key string) object {
	var v object
	if raw, ok := o[key]; !ok || json.Unmarshal(raw, &v) != nil {
		return nil
	}
	return v
}

func (o object) list(key string) []object {
	var raws []json.RawMessage
	if raw, ok := o[key]; !ok || json.Unmarshal(raw, &raws) != nil {
		return nil
	}
	var out []object
	for _, r := range raws {
		var v object
		if json.Unmarshal(r, &v) == nil {
			out = append(out, v)
		} else {
			out = append(out, object{}) // a warning is a string: counted all the same
		}
	}
	return out
}
