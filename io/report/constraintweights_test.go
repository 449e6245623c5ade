package report

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestConstraintTableSaysWeighted: with noise weights the constraint checks
// compare the weighted lack of fit, 100·√(Σ w r² / Σ w d²), not the
// unweighted one the Summary's row shows (the reference run of
// catalyst-0.01: 0.5244 % beside 0.7301 %), so the table's heading says so,
// as the terminal's "weighted lack of fit" does; without weights the
// heading stays "lack of fit" (the same measure as the Summary's, by its
// definition 100·‖R‖/‖D‖, common practice).
func TestConstraintTableSaysWeighted(t *testing.T) {
	for _, c := range []struct {
		weights string
		want    string
		absent  string
	}{
		{"noise", "<th>weighted lack of fit with it / %</th>", "<th>lack of fit with it / %</th>"},
		{"off", "<th>lack of fit with it / %</th>", "weighted"},
	} {
		dir := fixture(t, false)
		p := filepath.Join(dir, "summary.json")
		raw, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		var s map[string]any
		if err := json.Unmarshal(raw, &s); err != nil {
			t.Fatal(err)
		}
		s["noise_weights"] = c.weights
		s["constraint_checks"] = []map[string]any{{"constraint": "closure", "lack_of_fit_percent_with": 0.5244, "lack_of_fit_percent_without": 0.5241}}
		if raw, err = json.Marshal(s); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, raw, 0o644); err != nil {
			t.Fatal(err)
		}
		b, err := BuildDir(dir)
		if err != nil {
			t.Fatal(err)
		}
		h := string(b)
		i := strings.Index(h, "What each constraint cost")
		if i < 0 {
			t.Fatalf("noise_weights %s: no constraint table", c.weights)
		}
		table := h[i:]
		table = table[:strings.Index(table, "</p>")]
		if !strings.Contains(table, c.want) || strings.Contains(table, c.absent) {
			t.Errorf("noise_weights %s: the constraint table reads %q; want %q, without %q", c.weights, table, c.want, c.absent)
		}
	}
}
