package campaign

import (
	"bytes"
	"encoding/csv"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// A fitted start time (--fit-t0, summary.json's kinetics.t0_fit) gets its
// value and standard error in t0_fitted_s and stderr_t0_s beside the
// rate constants; one the data do not determine is two empty cells and a
// note; a table of folders none of which fitted t0 has no such columns,
// its header as before the option.
func TestCollectFittedT0(t *testing.T) {
	root := t.TempDir()
	fitted := writeSummary(t, filepath.Join(root, "fitted"), `{"kinetics": {"model": "A -> B", "t0_s": 50,
  "rate_constants": [{"step": "A -> B", "k_per_s": 0.004, "stderr_per_s": 4e-7}],
  "t0_fit": {"t0_s": 59.98750591, "stderr_s": 0.00803853883, "lower_s": 30, "upper_s": 60}}}`)
	undetermined := writeSummary(t, filepath.Join(root, "undetermined"), `{"kinetics": {"model": "A -> B", "t0_s": 0,
  "rate_constants": [{"step": "A -> B", "k_per_s": 0.0016, "stderr_per_s": 2e-4}],
  "t0_fit": {"t0_s": 1.9e-10, "stderr_s": 0, "lower_s": 0, "upper_s": 21, "not_determined": true, "at_end": "start"}}}`)
	given := writeSummary(t, filepath.Join(root, "given"), `{"kinetics": {"model": "A -> B", "t0_s": 60,
  "rate_constants": [{"step": "A -> B", "k_per_s": 0.004, "stderr_per_s": 3e-7}]}}`)
	tab, _ := Collect([]string{fitted, undetermined, given})
	rows, err := csv.NewReader(bytes.NewReader(tab.CSV())).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	col := func(name string) int {
		j := slices.Index(rows[0], name)
		if j < 0 {
			t.Fatalf("no column %q in %q", name, rows[0])
		}
		return j
	}
	t0, se, notes := col("t0_fitted_s"), col("stderr_t0_s"), col("notes")
	if rows[1][t0] != "59.98750591" || rows[1][se] != "0.00803853883" {
		t.Errorf("fitted t0 cells %q, %q: want summary.json's 59.98750591 and 0.00803853883", rows[1][t0], rows[1][se])
	}
	if rows[2][t0] != "" || rows[2][se] != "" || !strings.Contains(rows[2][notes], "do not determine the fitted start time") {
		t.Errorf("undetermined t0: cells %q, %q, notes %q: want empty cells and a note", rows[2][t0], rows[2][se], rows[2][notes])
	}
	// docs/campaigns.md: "both empty, with a note, when
	// `t0_fit.not_determined`; a note too when it ran to an end of its
	// range (`at_end`)": the undetermined fit also ran to its start.
	if !strings.Contains(rows[2][notes], "ran to the start of its range") {
		t.Errorf("undetermined t0 at the start of its range: notes %q; want the at_end note too", rows[2][notes])
	}
	if rows[3][t0] != "" || rows[3][se] != "" || rows[3][col("t0_s")] != "60" {
		t.Errorf("given t0: fitted cells %q, %q, t0_s %q: want empty, and t0_s 60", rows[3][t0], rows[3][se], rows[3][col("t0_s")])
	}
	plain, _ := Collect([]string{given})
	if slices.Contains(plain.Header, "t0_fitted_s") || slices.Contains(plain.Header, "stderr_t0_s") {
		t.Errorf("no folder fitted t0, yet the header has its columns: %q", plain.Header)
	}
}
