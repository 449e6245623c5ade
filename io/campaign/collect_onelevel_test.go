package campaign

import (
	"bytes"
	"encoding/csv"
	"path/filepath"
	"slices"
	"testing"
)

// The data fit made again with one noise level (summary.json's
// kinetics.fits[].one_noise_level) has its rate constants in keyed columns
// of their own, "data with one noise level | STEPS | STEP", the values as
// summary.json writes them; a folder without it leaves them empty, and the
// reported fit's columns keep their values.
func TestCollectOneNoiseLevel(t *testing.T) {
	root := t.TempDir()
	with := writeSummary(t, filepath.Join(root, "with"), `{"kinetics": {"model": "A -> B", "method": "data",
  "rate_constants": [{"step": "A -> B", "k_per_s": 0.001278687388, "stderr_per_s": 0.0001427693697}],
  "fits": [{"method": "data", "rate_constants": [{"step": "A -> B", "k_per_s": 0.001278687388, "stderr_per_s": 0.0001427693697}],
    "one_noise_level": {"rate_constants": [{"step": "A -> B", "k_per_s": 0.001641260346, "stderr_per_s": 0.0002046185968, "z": 2.473551095, "p_value": 0.0133777673, "hausman": true}], "test": "t"}}]}}`)
	without := writeSummary(t, filepath.Join(root, "without"), `{"kinetics": {"model": "A -> B", "method": "data",
  "rate_constants": [{"step": "A -> B", "k_per_s": 0.004, "stderr_per_s": 3e-7}],
  "fits": [{"method": "data", "rate_constants": [{"step": "A -> B", "k_per_s": 0.004, "stderr_per_s": 3e-7}]}]}}`)
	tab, _ := Collect([]string{with, without})
	rows, err := csv.NewReader(bytes.NewReader(tab.CSV())).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	k := slices.Index(rows[0], "k_per_s[data with one noise level | A -> B | A -> B]")
	se := slices.Index(rows[0], "stderr_per_s[data with one noise level | A -> B | A -> B]")
	own := slices.Index(rows[0], "k_per_s[data | A -> B | A -> B]")
	if k < 0 || se < 0 || own < 0 {
		t.Fatalf("header %q: want the one-level and the data fit's keyed columns", rows[0])
	}
	if rows[1][k] != "0.001641260346" || rows[1][se] != "0.0002046185968" || rows[1][own] != "0.001278687388" {
		t.Errorf("cells %q, %q, %q: want summary.json's 0.001641260346, 0.0002046185968 and 0.001278687388", rows[1][k], rows[1][se], rows[1][own])
	}
	if rows[2][k] != "" || rows[2][se] != "" || rows[2][own] != "0.004" {
		t.Errorf("folder without it: cells %q, %q, own %q", rows[2][k], rows[2][se], rows[2][own])
	}
}

// When the fit with one level is the one reported (one_noise_level.reported,
// the weights having moved the constants beyond the noise), the fit with each
// spectrum weighted keeps keyed columns of its own, "data with each spectrum
// weighted | STEPS | STEP", the values as summary.json writes them (those of
// the real catalyst-1.00 series), beside the reported ones.
func TestCollectEachSpectrumWeighted(t *testing.T) {
	root := t.TempDir()
	dir := writeSummary(t, filepath.Join(root, "switched"), `{"kinetics": {"model": "A -> B", "method": "data",
  "rate_constants": [{"step": "A -> B", "k_per_s": 0.001641260346, "stderr_per_s": 0.0002046185968}],
  "fits": [{"method": "data", "rate_constants": [{"step": "A -> B", "k_per_s": 0.001641260346, "stderr_per_s": 0.0002046185968}],
    "one_noise_level": {"rate_constants": [{"step": "A -> B", "k_per_s": 0.001641260346, "stderr_per_s": 0.0002046185968, "z": 2.473551095, "p_value": 0.0133777673, "hausman": true}], "test": "t", "reported": true},
    "each_spectrum_weighted": {"rate_constants": [{"step": "A -> B", "k_per_s": 0.001278687388, "stderr_per_s": 0.0001427693697}]}}]}}`)
	tab, _ := Collect([]string{dir})
	rows, err := csv.NewReader(bytes.NewReader(tab.CSV())).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	k := slices.Index(rows[0], "k_per_s[data with each spectrum weighted | A -> B | A -> B]")
	se := slices.Index(rows[0], "stderr_per_s[data with each spectrum weighted | A -> B | A -> B]")
	own := slices.Index(rows[0], "k_per_s[data | A -> B | A -> B]")
	if k < 0 || se < 0 || own < 0 {
		t.Fatalf("header %q: want the each-weighted and the data fit's keyed columns", rows[0])
	}
	if rows[1][k] != "0.001278687388" || rows[1][se] != "0.0001427693697" || rows[1][own] != "0.001641260346" {
		t.Errorf("cells %q, %q, %q: want summary.json's 0.001278687388, 0.0001427693697 and 0.001641260346", rows[1][k], rows[1][se], rows[1][own])
	}
}

// A determined sum (constants the data fix only together, "k1 + k2") has
// keyed columns in both the fit with one level and the fit with each
// spectrum weighted, under its terms, the values as summary.json writes them.
func TestCollectOneLevelDeterminedSum(t *testing.T) {
	root := t.TempDir()
	dir := writeSummary(t, filepath.Join(root, "pair"), `{"kinetics": {"model": "A -> B; B -> A", "method": "data",
  "rate_constants": [{"step": "A -> B", "k_per_s": 0.0012, "stderr_per_s": 0, "not_determined": true}, {"step": "B -> A", "k_per_s": 0.0003, "stderr_per_s": 0, "not_determined": true}],
  "fits": [{"method": "data", "rate_constants": [{"step": "A -> B", "k_per_s": 0.0012, "stderr_per_s": 0, "not_determined": true}, {"step": "B -> A", "k_per_s": 0.0003, "stderr_per_s": 0, "not_determined": true}],
    "determined_sum": {"terms": "k1 + k2", "steps": ["A -> B", "B -> A"], "k_per_s": 0.0015248, "stderr_per_s": 0.000162, "unit": "s^-1"},
    "one_noise_level": {"rate_constants": [], "determined_sum": {"step": "k1 + k2", "k_per_s": 0.0015248, "stderr_per_s": 0.000162, "z": 2.4, "p_value": 0.016, "hausman": true}, "test": "t", "reported": true},
    "each_spectrum_weighted": {"rate_constants": [], "determined_sum": {"step": "k1 + k2", "k_per_s": 0.0012589, "stderr_per_s": 0.000127}}}]}}`)
	tab, _ := Collect([]string{dir})
	rows, err := csv.NewReader(bytes.NewReader(tab.CSV())).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	for key, want := range map[string]string{
		"k_per_s[data with one noise level | A -> B; B -> A | k1 + k2]":        "0.0015248",
		"k_per_s[data with each spectrum weighted | A -> B; B -> A | k1 + k2]": "0.0012589",
		"k_per_s[data | A -> B; B -> A | k1 + k2]":                             "0.0015248",
	} {
		c := slices.Index(rows[0], key)
		if c < 0 || rows[1][c] != want {
			t.Errorf("%s: column %d, header %q; want %s", key, c, rows[0], want)
		}
	}
}
