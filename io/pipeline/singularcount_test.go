package pipeline

import (
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/svd"
)

// floorCount reads the count of the noise floor's evidence: "N singular values
// exceed" or "N of the M singular values computed exceed".
var floorCount = regexp.MustCompile(`^(?:at least )?(\d+) (?:of the \d+ )?singular values (?:computed )?exceed`)

// The rank text counts the singular values with the baseline taken out, and
// singular_values.csv keeps the data as given in its first columns: the new
// columns hold the values the text counted, so the text's count is the number
// of "yes" there (a count above a threshold, by definition), and the data as
// given differ from it by at most the baseline's order + 1 (Cauchy's
// interlacing theorem for a matrix times a projector of rank m − order − 1:
// Horn & Johnson, Matrix Analysis, the interlacing of singular values of a
// submatrix; from memory). On the trimmed urethane series (its README) the
// baseline is chosen automatically.
func TestSingularValuesCSVSaysWhatTheRankCounted(t *testing.T) {
	r := runTrimmedUrethane(t)
	if r.BaselineOrder < 0 {
		t.Fatal("no baseline chosen on the trimmed urethane series; the test needs one")
	}
	var detail string
	for _, c := range r.Rank.Criteria {
		if c.Name == svd.CriterionNoiseFloor {
			detail = c.Detail
		}
	}
	m := floorCount.FindStringSubmatch(detail)
	if m == nil || !strings.Contains(detail, "counted with the baseline ("+baselineName(r.BaselineOrder)+") taken out") {
		t.Fatalf("noise floor evidence %q: no count, or not labelled as counted without the baseline", detail)
	}
	text, _ := strconv.Atoi(m[1])
	tab := singularTable(r.Factors, r.Rank, r.BaselineOrder)
	col := map[string]int{}
	for i, h := range tab.Header {
		col[h] = i
	}
	given, without, moved := 0, 0, 0
	for _, row := range tab.Rows {
		a, _ := strconv.ParseFloat(row[col["singular_value"]], 64)
		b, _ := strconv.ParseFloat(row[col["singular_value_without_baseline"]], 64)
		if math.Abs(a-b) > 1e-6*a {
			moved++
		}
		if row[col["above_noise_edge"]] == "yes" {
			given++
		}
		if row[col["above_noise_edge_without_baseline"]] == "yes" {
			without++
		}
		v, err := strconv.ParseFloat(row[col["singular_value_without_baseline"]], 64)
		if err == nil && (v > r.Rank.Threshold) != (row[col["above_noise_edge_without_baseline"]] == "yes") {
			t.Errorf("row %s: %g against threshold %g marked %s", row[0], v, r.Rank.Threshold, row[col["above_noise_edge_without_baseline"]])
		}
	}
	t.Logf("text %d, without baseline %d, as given %d (threshold %.4g, baseline %s)", text, without, given, r.Rank.Threshold, baselineName(r.BaselineOrder))
	if moved == 0 {
		t.Error("the values without the baseline are those of the data as given: the projection was not written")
	}
	if without != text {
		t.Errorf("the text counts %d, the column without baseline marks %d", text, without)
	}
	if d := given - without; d < -(r.BaselineOrder+1) || d > r.BaselineOrder+1 {
		t.Errorf("as given %d and without baseline %d differ by more than order + 1 = %d", given, without, r.BaselineOrder+1)
	}
}
