package campaign

import (
	"bytes"
	"encoding/csv"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
)

func writeSummary(t *testing.T, dir, text string) string {
	t.Helper()
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	if text != "" {
		if err := os.WriteFile(filepath.Join(dir, SummaryName), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// Each cell is the summary.json value of the key its column is named after
// (keys: CONTRACT.md), a missing key an empty cell, each step's rate
// constant and standard error in their own pair of columns, and a folder
// without a summary keeps its row with the reason.
func TestCollect(t *testing.T) {
	root := t.TempDir()
	full := writeSummary(t, filepath.Join(root, "loading-1"), `{
  "tool": "bandsolve", "rank_estimate": 3, "components": 3, "mode": "species",
  "spectra": 120, "points": 900, "noise_sigma": 0.00021,
  "lack_of_fit_percent": 1.25, "noise_lack_of_fit_percent": 1.0,
  "kinetics": {"model": "A -> B -> C", "rate_constants": [
    {"step": "A -> B", "k_per_s": 0.0042, "stderr_per_s": 1.1e-05},
    {"step": "B -> C", "k_per_s": 0.00093, "stderr_per_s": 4e-06}]},
  "water_vapour": {"checked": true, "range": [3550, 3950], "detected": true, "line_change": [0.0019, 0.027]},
  "warnings": ["one", "two"]}`)
	// An older or partial summary: no noise, no kinetics, no warnings key.
	part := writeSummary(t, filepath.Join(root, "loading-2"), `{"components": 2, "mode": "reactions", "lack_of_fit_percent": 3.5,
  "kinetics": {"model": "A -> C", "rate_constants": [{"step": "A -> C", "k_per_s": 0.01}]}}`)
	none := writeSummary(t, filepath.Join(root, "failed"), "")
	bad := writeSummary(t, filepath.Join(root, "bad"), `[1, 2]`)
	own := writeSummary(t, filepath.Join(root, "weighted"), `{"lack_of_fit_percent": 2, "noise_lack_of_fit_percent": 1, "residual_to_noise": 1.03,
  "water_vapour": {"checked": true, "detected": false, "coherence_ratio": 1.1}}`)
	// Numbers as Go's encoding/json writes a float64 (plain digits from
	// 1e-6 up, an exponent without a leading zero below), as the real run
	// on catalyst-1.00 wrote them.
	goJSON := writeSummary(t, filepath.Join(root, "go-json"), `{"noise_sigma": 0.000434327309,
  "kinetics": {"model": "A -> B", "rate_constants": [
    {"step": "A -> B", "k_per_s": 0.00003710714947, "stderr_per_s": 1.947858933e-7}]},
  "water_vapour": {"checked": true, "detected": true, "line_change": [0.000027, 1e-7]}}`)
	tab, problems := Collect([]string{full, part, none, bad, own, goJSON})
	if len(problems) != 2 || !strings.Contains(problems[0], "failed") || !strings.Contains(problems[1], "bad") {
		t.Errorf("problems = %q, want the folder without and the one with a broken summary", problems)
	}
	rows, err := csv.NewReader(bytes.NewReader(tab.CSV())).ReadAll()
	if err != nil {
		t.Fatalf("the table is not CSV (RFC 4180): %v", err)
	}
	head := rows[0]
	cell := func(r int, col string) string {
		for j, h := range head {
			if h == col {
				return rows[r][j]
			}
		}
		t.Fatalf("no column %q in %q", col, head)
		return ""
	}
	if len(rows) != 7 {
		t.Fatalf("%d rows, want a header and 6", len(rows))
	}
	for _, c := range []struct {
		row       int
		col, want string
	}{
		{1, "folder", full}, {1, "status", "ok"}, {1, "components", "3"}, {1, "mode", "species"},
		{1, "noise_sigma", "0.00021"}, {1, "lack_of_fit_percent", "1.25"}, {1, "kinetics_model", "A -> B -> C"},
		{1, "k_per_s[A -> B]", "0.0042"}, {1, "stderr_per_s[A -> B]", "1.1e-05"},
		{1, "k_per_s[B -> C]", "0.00093"}, {1, "stderr_per_s[B -> C]", "4e-06"},
		{1, "k_per_s[A -> C]", ""}, {1, "warnings", "2"},
		{2, "components", "2"}, {2, "noise_sigma", ""}, {2, "residual_to_noise", ""},
		{2, "k_per_s[A -> C]", "0.01"}, {2, "stderr_per_s[A -> C]", ""}, {2, "k_per_s[A -> B]", ""},
		{2, "warnings", "0"},
		{3, "folder", none}, {3, "components", ""},
		{4, "folder", bad},
		// A summary's own residual_to_noise is taken as written.
		{5, "residual_to_noise", "1.03"},
		// The water-vapour check: the largest of the experiments' changes
		// as written; a run without a change, and one without the check.
		{1, "water_vapour", "changed"}, {1, "vapour_line_change", "0.027"},
		{5, "water_vapour", "no change"}, {5, "vapour_line_change", ""},
		{2, "water_vapour", ""},
		// Every number in one format, printf's %.10g (C standard 7.21.6.1:
		// an exponent when it is below −4, trailing zeros dropped; common
		// practice), whatever the JSON's spelling.
		{6, "k_per_s[A -> B]", "3.710714947e-05"}, {6, "stderr_per_s[A -> B]", "1.947858933e-07"},
		{6, "noise_sigma", "0.000434327309"}, {6, "vapour_line_change", "2.7e-05"},
	} {
		if got := cell(c.row, c.col); got != c.want {
			t.Errorf("row %d, %s = %q, want %q", c.row, c.col, got, c.want)
		}
	}
	if s := cell(3, "status"); !strings.Contains(s, "no summary.json") {
		t.Errorf("status of a folder without summary = %q", s)
	}
	// residual_to_noise recomputed from its definition: the two lack-of-fit
	// percentages of the same data divided.
	if got, err := strconv.ParseFloat(cell(1, "residual_to_noise"), 64); err != nil || got != 1.25/1.0 {
		t.Errorf("residual_to_noise = %q, want 1.25 / 1.0", cell(1, "residual_to_noise"))
	}
	// Steps in the order first met: the first folder's two, then A -> C,
	// right after kinetics_model and before warnings (the columns' places
	// before this version's additions, for scripts that read by place).
	want := []string{"kinetics_model", "k_per_s[A -> B]", "stderr_per_s[A -> B]", "k_per_s[B -> C]", "stderr_per_s[B -> C]", "k_per_s[A -> C]", "stderr_per_s[A -> C]", "warnings", "water_vapour", "vapour_line_change"}
	if got := head[11 : 11+len(want)]; strings.Join(got, "|") != strings.Join(want, "|") {
		t.Errorf("columns 12… %q, want %q", got, want)
	}
	if head[len(head)-1] != "notes" {
		t.Errorf("last column %q, want notes", head[len(head)-1])
	}
}

// The reversible pair of the real catalyst-1.00 series (summary.json of
// bandsolve run … --model 'A -> B; B -> A', trimmed): the data fit leaves
// both constants not determined, with stderr_per_s 0, and determines only
// their sum. A 0 there is not an exact value: the cells must be empty, and
// the notes must say why and give the sum as the summary states it.
func TestCollectNotDetermined(t *testing.T) {
	dir := writeSummary(t, filepath.Join(t.TempDir(), "rev"), `{"kinetics": {"model": "A -> B; B -> A", "method": "data",
  "rate_constants": [
    {"step": "A -> B", "k_per_s": 0.001341710337, "stderr_per_s": 0, "half_life_s": 516.6146235, "unit": "s^-1", "not_determined": true},
    {"step": "B -> A", "k_per_s": 0.0003004426156, "stderr_per_s": 0, "half_life_s": 2307.08676, "unit": "s^-1", "not_determined": true}],
  "determined_sum": {"terms": "k1 + k2", "steps": ["A -> B", "B -> A"], "k_per_s": 0.001642144395, "stderr_per_s": 0.0002100000001, "unit": "s^-1"}}}`)
	tab, problems := Collect([]string{dir})
	if len(problems) != 0 {
		t.Fatal(problems)
	}
	got := map[string]string{}
	for j, h := range tab.Header {
		got[h] = tab.Rows[0][j]
	}
	for _, col := range []string{"k_per_s[A -> B]", "stderr_per_s[A -> B]", "k_per_s[B -> A]", "stderr_per_s[B -> A]"} {
		if v, ok := got[col]; !ok || v != "" {
			t.Errorf("%s = %q (present %v), want an empty cell", col, v, ok)
		}
	}
	want := "data fit: k of A -> B, B -> A not determined by the data (cells left empty), only their sum is: k1 + k2 = 0.001642144395 ± 0.0002100000001 s^-1"
	if got["notes"] != want {
		t.Errorf("notes = %q\nwant %q", got["notes"], want)
	}
}

// TestCollectKeysRatesByFitAndModel: the trial on the real urethane
// series put four different quantities in k_per_s[A -> B]: the data fit's
// and the profile fit's k of 'A -> B' (0.001642 ± 0.000205 and
// 0.001154 ± 0.0000462 s^-1 on catalyst 1.00, summary.json's fits), and
// the first step of 'A -> B -> C'. Keyed by fit and model, each has its
// own column, filled only in the rows that hold it; the context columns
// say which fit the unkeyed columns hold, and the as-run record (syntax:
// docs/command-files.md) gives region and settings_id, equal for two
// records that differ in their data only and different when the region
// differs.
func TestCollectKeysRatesByFitAndModel(t *testing.T) {
	root := t.TempDir()
	fits := func(method string) string {
		return `{"model": "A -> B", "method": "` + method + `", "t0_s": 0, "map": [{"name": "A", "component": 1}, {"name": "B", "component": 2}],
  "rate_constants": [{"step": "A -> B", "k_per_s": 0.001, "stderr_per_s": 0.0001}],
  "fits": [{"method": "profiles", "rate_constants": [{"step": "A -> B", "k_per_s": 0.001154307718, "stderr_per_s": 4.616608256e-05}]},
           {"method": "data", "rate_constants": [{"step": "A -> B", "k_per_s": 0.00164214402, "stderr_per_s": 0.0002046328016}]}]}`
	}
	record := func(data, region string) string {
		return "paths-from ../../runs\ndata " + data + "\nkind absorbance\nregion " + region + "\nexclude ''\nmodel A -> B\nkinetic-fit data\n"
	}
	dataDir := writeSummary(t, filepath.Join(root, "data"), `{"baseline": "poly:3", "closure": "1", "outlier_spectra": [], "kinetics": `+fits("data")+`}`)
	profDir := writeSummary(t, filepath.Join(root, "profiles"), `{"kinetics": `+fits("profiles")+`}`)
	chain := writeSummary(t, filepath.Join(root, "chain"), `{"kinetics": {"model": "A -> B -> C", "method": "data",
  "rate_constants": [{"step": "A -> B", "k_per_s": 0.004, "stderr_per_s": 0.0002}, {"step": "B -> C", "k_per_s": 0.0009, "stderr_per_s": 0.00005}],
  "fits": [{"method": "data", "rate_constants": [{"step": "A -> B", "k_per_s": 0.004, "stderr_per_s": 0.0002}, {"step": "B -> C", "k_per_s": 0.0009, "stderr_per_s": 0.00005}]}]}}`)
	other := writeSummary(t, filepath.Join(root, "other-data"), `{}`)
	narrow := writeSummary(t, filepath.Join(root, "narrow"), `{}`)
	for dir, rec := range map[string]string{dataDir: record("data/catalyst-1.00/", "''"), other: record("data/catalyst-0.01/", "''"),
		narrow: record("data/catalyst-1.00/", "2400:1500")} {
		if err := os.WriteFile(filepath.Join(dir, "as-run.bsr"), []byte(rec), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	tab, problems := Collect([]string{dataDir, profDir, chain, other, narrow})
	if len(problems) != 0 {
		t.Fatal(problems)
	}
	cell := func(r int, col string) string {
		for j, h := range tab.Header {
			if h == col {
				return tab.Rows[r][j]
			}
		}
		t.Fatalf("no column %q in %q", col, tab.Header)
		return ""
	}
	for _, c := range []struct {
		row       int
		col, want string
	}{
		{0, "k_per_s[data | A -> B | A -> B]", "0.00164214402"}, {0, "stderr_per_s[data | A -> B | A -> B]", "0.0002046328016"},
		{0, "k_per_s[profiles | A -> B | A -> B]", "0.001154307718"}, {0, "stderr_per_s[profiles | A -> B | A -> B]", "4.616608256e-05"},
		{1, "k_per_s[data | A -> B | A -> B]", "0.00164214402"}, {1, "k_per_s[profiles | A -> B | A -> B]", "0.001154307718"},
		{2, "k_per_s[data | A -> B; B -> C | A -> B]", "0.004"}, {2, "k_per_s[data | A -> B; B -> C | B -> C]", "0.0009"},
		{2, "k_per_s[data | A -> B | A -> B]", ""}, {0, "k_per_s[data | A -> B; B -> C | A -> B]", ""},
		{0, "kinetic_fit", "data"}, {1, "kinetic_fit", "profiles"}, {2, "kinetic_fit", "data"},
		{0, "t0_s", "0"}, {0, "kinetics_map", "A=1 B=2"}, {0, "baseline", "poly:3"}, {0, "closure", "1"}, {0, "outlier_spectra", "0"},
		{1, "outlier_spectra", ""}, {4, "region", "2400:1500"}, {0, "region", ""}, {0, "settings_id", cell(3, "settings_id")},
	} {
		if got := cell(c.row, c.col); got != c.want {
			t.Errorf("row %d, %s = %q, want %q", c.row, c.col, got, c.want)
		}
	}
	if id := cell(0, "settings_id"); len(id) != 13 || id == cell(4, "settings_id") || cell(1, "settings_id") != "" {
		t.Errorf("settings_id: %q (other data %q, other region %q, no record %q)", id, cell(3, "settings_id"), cell(4, "settings_id"), cell(1, "settings_id"))
	}
}

// TestCollectResidualToNoiseIsOneQuantity: residual_to_noise is √(χ²/ν)
// of the fit as the run weighted it (summary.json's own key; its
// definition in io/output's Summary). Without the key, an unweighted run
// (noise_weights off, or absent: written before weighting existed) has
// exactly lack_of_fit ÷ noise_lack_of_fit (both 100·‖·‖/‖D‖ of the same
// data); a noise-weighted one does not (the trial's catalyst-0.01 run:
// 1.725375137 / 0.7374509075 = 2.3396 against its key's 2.21858278), so
// its cell is empty and the notes say why. A key of 0 means no noise level
// was known: empty too.
func TestCollectResidualToNoiseIsOneQuantity(t *testing.T) {
	root := t.TempDir()
	weighted := writeSummary(t, filepath.Join(root, "weighted"), `{"lack_of_fit_percent": 1.725375137, "noise_lack_of_fit_percent": 0.7374509075, "noise_weights": "noise"}`)
	own := writeSummary(t, filepath.Join(root, "own"), `{"lack_of_fit_percent": 1.725375137, "noise_lack_of_fit_percent": 0.7374509075, "noise_weights": "noise", "residual_to_noise": 2.21858278}`)
	off := writeSummary(t, filepath.Join(root, "off"), `{"lack_of_fit_percent": 1.5, "noise_lack_of_fit_percent": 1.2, "noise_weights": "off"}`)
	zero := writeSummary(t, filepath.Join(root, "zero"), `{"lack_of_fit_percent": 1.5, "noise_lack_of_fit_percent": 0, "residual_to_noise": 0}`)
	tab, _ := Collect([]string{weighted, own, off, zero})
	col := func(name string) int {
		for j, h := range tab.Header {
			if h == name {
				return j
			}
		}
		t.Fatalf("no column %s", name)
		return -1
	}
	rtn, notes := col("residual_to_noise"), col("notes")
	for i, want := range []string{"", "2.21858278", "1.25", ""} {
		if got := tab.Rows[i][rtn]; got != want {
			t.Errorf("row %d: residual_to_noise = %q, want %q", i, got, want)
		}
	}
	if n := tab.Rows[0][notes]; !strings.Contains(n, "2.339647452) is the unweighted ratio") {
		t.Errorf("notes of the weighted run without the key: %q", n)
	}
	if n := tab.Rows[3][notes]; !strings.Contains(n, "no noise level was known") {
		t.Errorf("notes of the run without a noise level: %q", n)
	}
}

// TestCollectSaysWhyAFolderHasNoResults: each slip gets its own cause and
// what to do (DEVELOPERS.md, Errors: what, where, what to do): a folder
// that does not exist, a file given for a folder, and the parent of a
// batch's result folders given for them, with the glob that names them.
func TestCollectSaysWhyAFolderHasNoResults(t *testing.T) {
	root := t.TempDir()
	batch := filepath.Join(root, "batch")
	writeSummary(t, filepath.Join(batch, "r0"), `{"components": 2}`)
	file := filepath.Join(root, "exp1.bsr")
	if err := os.WriteFile(file, []byte("data x\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	empty := writeSummary(t, filepath.Join(root, "empty"), "")
	_, problems := Collect([]string{filepath.Join(root, "nosuch"), file, batch, empty})
	want := []string{
		filepath.Join(root, "nosuch") + ": does not exist; check the folder's path",
		file + ": is a file, not an output folder; give the folder that holds summary.json",
		batch + ": no summary.json here, but its subfolders hold results: give them, e.g. bandsolve collect " + filepath.Join(batch, "*") + "/",
		empty + ": no summary.json (not a bandsolve output folder, or its run failed)",
	}
	if len(problems) != len(want) {
		t.Fatalf("problems %q", problems)
	}
	for i := range want {
		if problems[i] != want[i] {
			t.Errorf("got  %q\nwant %q", problems[i], want[i])
		}
	}
}

// A settings_id is never read as a number by a spreadsheet, which takes a
// cell that parses as a number for one (common practice; strconv.ParseFloat
// accepts what they do here: digits, or digits with an exponent e). The
// records of seed 509 and seed 625 alone hash to SHA-256 prefixes of
// digits only, 351901197280, and of 254417705e29 (2.544e37); the id keeps
// those digits after its letter, so an older table's id is the new one
// less its first letter.
func TestSettingsIDIsNeverANumber(t *testing.T) {
	root := t.TempDir()
	for _, c := range []struct{ seed, digits string }{{"509", "351901197280"}, {"625", "254417705e29"}} {
		dir := writeSummary(t, filepath.Join(root, c.seed), `{}`)
		if err := os.WriteFile(filepath.Join(dir, "as-run.bsr"), []byte("seed "+c.seed+"\n"), 0o644); err != nil {
			t.Fatal(err)
		}
		tab, problems := Collect([]string{dir})
		if len(problems) != 0 {
			t.Fatal(problems)
		}
		id := tab.Rows[0][slices.Index(tab.Header, "settings_id")]
		if _, err := strconv.ParseFloat(id, 64); err == nil || id != "s"+c.digits {
			t.Errorf("seed %s: settings_id %q, want %q, which reads as no number", c.seed, id, "s"+c.digits)
		}
	}
}

// A summary value no run writes (a number past float64's range, 1e400,
// IEEE 754 binary64's largest finite value being about 1.8e308) leaves
// its cell empty, and the row says so in its status and is counted among
// the problems, where it had read "ok" with the cell quietly empty; a
// summary holding no such value reads "ok" (docs/errors.md: what, where,
// what to do). A summary that is no JSON object is described in JSON's
// words, not Go's types.
func TestCollectMarksAValueNoRunWrites(t *testing.T) {
	root := t.TempDir()
	bad := writeSummary(t, filepath.Join(root, "bad"), `{"components": 2, "lack_of_fit_percent": 1e400, "noise_lack_of_fit_percent": 0.5}`)
	good := writeSummary(t, filepath.Join(root, "good"), `{"components": 2, "lack_of_fit_percent": 1.5, "noise_lack_of_fit_percent": 0.5}`)
	list := writeSummary(t, filepath.Join(root, "list"), `[1,2,3]`)
	tab, problems := Collect([]string{bad, good, list})
	status := slices.Index(tab.Header, "status")
	want := "summary.json: lack_of_fit_percent holds 1e400, beyond any number a run writes (its cell is left empty); run the analysis again"
	if got := tab.Rows[0][status]; got != want {
		t.Errorf("status %q, want %q", got, want)
	}
	if got := tab.Rows[1][status]; got != "ok" {
		t.Errorf("a plain summary: status %q", got)
	}
	if got := tab.Rows[2][status]; !strings.Contains(got, "the file holds a list where an object belongs") || strings.Contains(got, "campaign.") {
		t.Errorf("a list for a summary: status %q", got)
	}
	if len(problems) != 2 || !strings.Contains(problems[0], "bad: summary.json: lack_of_fit_percent holds 1e400") {
		t.Errorf("problems %q, want the damaged and the list summaries", problems)
	}
}
