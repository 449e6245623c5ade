package report

import (
	"encoding/json"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
)

// TestKineticsFindingNamesEachStepOnce: a model of one step is said once,
// "Kinetic model A -> B: k = …", not followed by its only step's name; a
// model of several names each step before its constant. Half-lives are
// ln 2 / k for first-order steps (the definition: 69.3 s at k = 0.01 s⁻¹,
// 139 s at 0.005 s⁻¹).
func TestKineticsFindingNamesEachStepOnce(t *testing.T) {
	ab := output.RateConstant{Step: "A -> B", K: 0.01, StdErr: 0.0002, HalfLife: 69.31471806}
	bc := output.RateConstant{Step: "B -> C", K: 0.005, StdErr: 0.0001, HalfLife: 138.6294361}
	for _, c := range []struct {
		model string
		rates []output.RateConstant
		want  string
	}{
		{"A -> B", []output.RateConstant{ab}, "Kinetic model A -> B: k = 0.01 ± 0.0002 s⁻¹ (half-life 69.3 s)."},
		{"A -> B -> C", []output.RateConstant{ab, bc},
			"Kinetic model A -> B -> C: A -> B: k = 0.01 ± 0.0002 s⁻¹ (half-life 69.3 s); B -> C: k = 0.005 ± 0.0001 s⁻¹ (half-life 139 s)."},
	} {
		k := &Kinetics{Model: c.model, RateConstants: c.rates}
		if got := kineticsFinding(&Folder{Summary: &Summary{Kinetics: k}}, k); got != c.want {
			t.Errorf("%s:\n got %q\nwant %q", c.model, got, c.want)
		}
	}
	// The rendered report of the fixture's A -> B says it so too.
	b, err := BuildDir(fixture(t, true))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(b), "Kinetic model A -&gt; B: k = 0.01") {
		t.Errorf("report.html does not say %q", "Kinetic model A -&gt; B: k = 0.01")
	}
}

// TestKineticsFindingUndeterminedHasNoHalfLife: the reversible pair of the
// real catalyst-1.00 series (its summary.json, trimmed): the data fit
// leaves k1 and k2 not determined and determines k1 + k2. ln 2 / k of an
// undetermined k is no more determined than k (definition of the
// half-life), so the headline gives none, and it gives the sum with its
// standard error, as summary.json's determined_sum states it (in s⁻¹: the
// folder has no times to choose another unit from).
func TestKineticsFindingUndeterminedHasNoHalfLife(t *testing.T) {
	k := &Kinetics{Model: "A -> B; B -> A", Method: "data", RateConstants: []output.RateConstant{
		{Step: "A -> B", K: 0.001341710337, HalfLife: 516.6146235, Unit: "s^-1", NotDetermined: true},
		{Step: "B -> A", K: 0.0003004426156, HalfLife: 2307.08676, Unit: "s^-1", NotDetermined: true}},
		DeterminedSum: &output.DeterminedSum{Terms: "k1 + k2", Steps: []string{"A -> B", "B -> A"}, K: 0.001642144395, StdErr: 0.00021, Unit: "s^-1"}}
	f := &Folder{Summary: &Summary{Kinetics: k}}
	got := kineticsFinding(f, k)
	if strings.Contains(got, "half-life") {
		t.Errorf("the headline gives a half-life of an undetermined constant: %q", got)
	}
	if !strings.Contains(got, "k1 + k2 = 0.001642 ± 0.00021 s⁻¹") {
		t.Errorf("the headline does not give the determined sum: %q", got)
	}
	for _, r := range f.rates() {
		if r.HalfLife != 0 {
			t.Errorf("the kinetics table gives %s a half-life %g", r.Step, r.HalfLife)
		}
	}
}

// TestKineticsFindingShowsEveryFit: the trial's 'A -> B' on the real
// catalyst-1.00 series (its summary.json's kinetics, trimmed) has a data
// fit, the one reported, k = 0.00164214402 ± 0.0002046328016 s⁻¹, and a
// profile fit, k = 0.001154307718 ± 0.00004616608256 s⁻¹, whose warning
// says the data fit's are the ones to quote. The terminal shows both with
// which is which; so must the headline and the kinetics table, the
// reported fit first (numbers rounded as trimFloat rounds: 4 significant
// digits for k, 2 for its error, 3 for the half-life ln 2 / k = 422 s).
func TestKineticsFindingShowsEveryFit(t *testing.T) {
	data := []output.RateConstant{{Step: "A -> B", K: 0.00164214402, StdErr: 0.0002046328016, HalfLife: 422.0988975, Unit: "s^-1"}}
	prof := []output.RateConstant{{Step: "A -> B", K: 0.001154307718, StdErr: 0.00004616608256, HalfLife: 600.4873482, Unit: "s^-1"}}
	k := &Kinetics{Model: "A -> B", Method: "data", RateConstants: data,
		Fits: []output.KineticFitJSON{{Method: "profiles", RateConstants: prof}, {Method: "data", RateConstants: data}}}
	got := kineticsFinding(&Folder{Summary: &Summary{Kinetics: k}}, k)
	want := "Kinetic model A -> B, data fit (the one summary.json reports): k = 0.001642 ± 0.0002 s⁻¹ (half-life 422 s). " +
		"Profiles fit: k = 0.001154 ± 4.6×10⁻⁵ s⁻¹ (half-life 600 s)."
	if got != want {
		t.Errorf("headline\n got %q\nwant %q", got, want)
	}
	dir := fixture(t, true)
	p := filepath.Join(dir, "summary.json")
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	kin, err := json.Marshal(k)
	if err != nil {
		t.Fatal(err)
	}
	b = regexp.MustCompile(`"kinetics": \{[^\n]*\]\},`).ReplaceAll(b, append(append([]byte(`"kinetics": `), kin...), ','))
	if err := os.WriteFile(p, b, 0o644); err != nil {
		t.Fatal(err)
	}
	html, err := BuildDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, row := range []string{"<td>data (reported)</td><td>A -&gt; B</td><td class=\"n\">0.001642", "<td>profiles</td><td>A -&gt; B</td><td class=\"n\">0.001154"} {
		if !strings.Contains(string(html), row) {
			t.Errorf("the kinetics table has no row %q", row)
		}
	}
	if !strings.Contains(string(html), "Profiles fit: k = 0.001154") {
		t.Errorf("report.html does not give the profile fit's k")
	}
}
