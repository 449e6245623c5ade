package campaign

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/bandsolve/bandsolve/io/output"
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
// stderr_per_s[STEP], then warnings (how many), then water_vapour and
// vapour_line_change (vapourCells), then notes. A key a summary lacks is
// an empty cell; a folder without a readable summary.json keeps its row,
// with the reason in status, and is listed in problems. Numbers are
// written as output.Float writes every result file's: encoding/json,
// which wrote summary.json, gives 0.00003710714947 beside 1.947858933e-7
// in one column of rate constants and their errors.
//
// A rate constant the data do not determine (not_determined) is an empty
// cell with no standard error, and notes says so with the sum the data do
// determine: the value the fit ended at is one of a continuum that fits
// as well, not a measurement.
//
// residual_to_noise is the summary's own key when the run wrote one (the
// noise-weighted fit), else lack_of_fit_percent ÷ noise_lack_of_fit_percent:
// both are 100·‖·‖/‖D‖ of the same data, so the ratio is the root mean
// square residual over the noise level (1 = the model fits to the noise).
func Collect(folders []string) (t output.Table, problems []string) {
	var rows []row
	var steps []string
	seen := map[string]bool{}
	for _, dir := range folders {
		r, err := collectRow(dir)
		if err != nil {
			problems = append(problems, fmt.Sprintf("%s: %v", dir, err))
		}
		for _, st := range r.order {
			if !seen[st] {
				seen[st] = true
				steps = append(steps, st)
			}
		}
		rows = append(rows, r)
	}
	t.Header = append([]string(nil), fixedColumns...)
	for _, st := range steps {
		t.Header = append(t.Header, "k_per_s["+st+"]", "stderr_per_s["+st+"]")
	}
	t.Header = append(t.Header, trailingColumns...)
	for _, r := range rows {
		var cells []string
		for _, k := range fixedColumns {
			cells = append(cells, r.cells[k])
		}
		for _, st := range steps {
			p := r.steps[st]
			cells = append(cells, p[0], p[1])
		}
		for _, k := range trailingColumns {
			cells = append(cells, r.cells[k])
		}
		t.Rows = append(t.Rows, cells)
	}
	return t, problems
}

// trailingColumns follow the rate constants.
var trailingColumns = []string{"warnings", "water_vapour", "vapour_line_change", "notes"}

// row is one folder's cells: fixed and trailing columns by name, and the
// reported fit's rate constant and standard error by step, in the order
// the steps are written.
type row struct {
	cells map[string]string
	steps map[string][2]string
	order []string
	notes []string
}

func collectRow(dir string) (row, error) {
	r := row{cells: map[string]string{"folder": dir}, steps: map[string][2]string{}}
	s, err := readSummary(dir)
	if err != nil {
		r.cells["status"] = err.Error()
		return r, err
	}
	r.cells["status"] = "ok"
	for _, k := range fixedColumns[2:] {
		if v, ok := s.scalar(k); ok {
			r.cells[k] = v
		}
	}
	if v, ok := s.scalar("residual_to_noise"); ok {
		r.cells["residual_to_noise"] = v
	} else if q := s.ratio("lack_of_fit_percent", "noise_lack_of_fit_percent"); q != "" {
		r.cells["residual_to_noise"] = q
	}
	if kin := s.object("kinetics"); kin != nil {
		r.kinetics(kin)
	}
	r.cells["warnings"] = strconv.Itoa(len(s.list("warnings")))
	r.cells["water_vapour"], r.cells["vapour_line_change"] = vapourCells(s.object("water_vapour"))
	r.cells["notes"] = strings.Join(r.notes, "; ")
	return r, nil
}

// kinetics fills the model and the reported fit's rate constants.
func (r *row) kinetics(kin object) {
	if v, ok := kin.scalar("model"); ok {
		r.cells["kinetics_model"] = v
	}
	rcs := kin.list("rate_constants")
	for _, rc := range rcs {
		step, _ := rc.scalar("step")
		k, _ := rc.scalar("k_per_s")
		se, _ := rc.scalar("stderr_per_s")
		if notDetermined(rc) {
			k, se = "", ""
		}
		r.order = append(r.order, step)
		r.steps[step] = [2]string{k, se}
	}
	method, _ := kin.scalar("method")
	if n := undeterminedNote(method, rcs, kin.object("determined_sum")); n != "" {
		r.notes = append(r.notes, n)
	}
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
	p := filepath.Join(dir, SummaryName)
	st, err := os.Stat(p)
	switch {
	case err != nil:
		return nil, fmt.Errorf("no %s (not a bandsolve output folder, or its run failed)", SummaryName)
	case !st.Mode().IsRegular():
		return nil, fmt.Errorf("%s is not a regular file", SummaryName)
	case st.Size() > maxSummary:
		return nil, fmt.Errorf("%s is %d bytes, more than a summary can be (%d)", SummaryName, st.Size(), maxSummary)
	}
	f, err := os.Open(p)
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
		return nil, fmt.Errorf("%s is not a JSON object: %v", SummaryName, err)
	}
	return o, nil
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
