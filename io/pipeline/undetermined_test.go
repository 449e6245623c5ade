package pipeline

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
)

// TestRateNotDeterminedSaysSo: the real catalyst-1.00 series (source as urethaneDir) with
// --t0 3500 s leaves two spectra after t0, and 'A -> B' is then not determined by them
// (with --t0 3400 s and three spectra it was, until each spectrum was weighted by its own
// noise, which lets the three determine it): the data fit's rate constant ran to
// 3.6e-160 s⁻¹ with a standard error of +Inf, which the
// terminal printed as "± +Inf" and summary.json as 0, an exact value. A standard error that
// is not finite is now said in words on the terminal and in the report, and summary.json
// marks the constant not_determined; nothing printed holds Inf or NaN (IEEE 754 specials are
// not numbers a chemist can quote). With --t0 past the last spectrum the refusal names
// "kinetics" once, not once per layer of the error.
func TestRateNotDeterminedSaysSo(t *testing.T) {
	dir := t.TempDir()
	s := NewSettings()
	s.Data, s.Kind, s.TimesFromName = []string{filepath.Join(urethaneDir, "catalyst-1.00")}, "absorbance", true
	s.Model, s.T0, s.Bands, s.Out = "A -> B", "3500", "off", filepath.Join(dir, "out")
	var out, errs bytes.Buffer
	if _, err := Execute(s, Streams{Out: &out, Err: &errs}); err != nil {
		t.Fatal(err)
	}
	special := regexp.MustCompile(`(?i)\b[+-]?(inf|nan)\b`)
	if m := special.FindString(out.String() + errs.String()); m != "" {
		t.Errorf("the terminal shows %q", m)
	}
	// Which words depend on where the fit ended: a standard error not
	// finite, or one so large the data do not see the constant (since the
	// spectra's noise levels take the running median of five, 3.6e-160 with
	// an infinite error became 5.8e-158 with one 1.5e152 times it).
	if !regexp.MustCompile(`k not determined \((its standard error is not finite|the fit ended at)`).MatchString(out.String() + errs.String()) {
		t.Errorf("the terminal does not say the constant is not determined:\n%s", out.String())
	}
	b, err := os.ReadFile(filepath.Join(dir, "out", "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	var sum output.Summary
	if err := json.Unmarshal(b, &sum); err != nil {
		t.Fatal(err)
	}
	if sum.Kinetics == nil || len(sum.Kinetics.RateConstants) != 1 || !sum.Kinetics.RateConstants[0].NotDetermined {
		t.Errorf("summary.json does not mark the rate constant not determined: %s", b)
	}
	html, err := os.ReadFile(filepath.Join(dir, "out", "report.html"))
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Contains(html, []byte("not determined by the data (no standard error")) {
		t.Errorf("the report does not say the constant is not determined")
	}

	s.T0, s.Out = "5000", filepath.Join(dir, "out2")
	_, err = Execute(s, Streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}})
	if err == nil {
		t.Fatal("--t0 past the last spectrum: kinetics were done")
	}
	if n := strings.Count(err.Error(), "kinetics"); n != 1 {
		t.Errorf("the refusal names kinetics %d times: %s", n, err)
	}
}

// TestReversiblePairReportedAsSum: for A -> B, B -> A from [A]0 = 1,
// [A] = (k2 + k1 e^{−(k1+k2)t})/(k1 + k2) (the reversible first-order
// solution; common practice), so with free spectra the data fit's columns
// span {1, e^{−(k1+k2)t}}, the span of A -> B's columns with k = k1 + k2:
// the data fix k1 + k2 and not its terms. On the real catalyst-1.00 series
// (source as urethaneDir) the Jacobian had rank 1, yet summary.json gave
// B -> A = 4.383e-4 ± 2.4e-5 with no flag. Both constants must now be
// marked not determined with no error, and the terminal must give the sum,
// equal to the 'A -> B' fit's k of the same data within 1e-4 (the same
// least-squares problem).
func TestReversiblePairReportedAsSum(t *testing.T) {
	var revOut string
	run := func(model string) (*Result, string) {
		s := NewSettings()
		s.Data, s.Kind, s.TimesFromName = []string{filepath.Join(urethaneDir, "catalyst-1.00")}, "absorbance", true
		s.Model, s.Bands, s.Checks, s.Out = model, "off", "off", filepath.Join(t.TempDir(), "out")
		revOut = s.Out
		var out bytes.Buffer
		r, err := Execute(s, Streams{Out: &out, Err: &out})
		if err != nil {
			t.Fatal(err)
		}
		return r, out.String()
	}
	rev, text := run("A -> B; B -> A")
	sum := readSummaryFile(t, revOut)
	one, _ := run("A -> B")
	fr, k := rev.Kinetics.Fits[rev.Kinetics.Primary].Fit, one.Kinetics.Fits[one.Kinetics.Primary].Fit.K[0]
	t.Logf("k %v ± %v; sum %.6g ± %.3g; A -> B alone %.6g", fr.K, fr.KStdErr, fr.SumK, fr.SumKStdErr, k)
	for j := range 2 {
		if !notDetermined(fr, j) || fr.KStdErr[j] != 0 {
			t.Errorf("k%d = %.4g ± %.3g reported as determined", j+1, fr.K[j], fr.KStdErr[j])
		}
	}
	if math.Abs(fr.SumK/k-1) > 1e-4 {
		t.Errorf("k1 + k2 = %.6g, A -> B's k %.6g", fr.SumK, k)
	}
	if !strings.Contains(text, "k not determined") || !strings.Contains(text, "k1 + k2") {
		t.Errorf("the terminal does not say k1, k2 not determined and give their sum:\n%s", text)
	}
	// summary.json carries the sum as a key, for the reported fit and for
	// the data fit among the fits, with the fit's own numbers (rounded to
	// 10 digits as every number of the file).
	d := sum.Kinetics.DeterminedSum
	if d == nil || d.Terms != "k1 + k2" || strings.Join(d.Steps, "|") != "A -> B|B -> A" || d.Unit != "s^-1" ||
		d.K != round(fr.SumK) || d.StdErr != round(fr.SumKStdErr) || !(d.StdErr > 0) {
		t.Errorf("kinetics.determined_sum = %+v, want k1 + k2 = %.10g ± %.10g s^-1", d, fr.SumK, fr.SumKStdErr)
	}
	for _, f := range sum.Kinetics.Fits {
		if f.Method == "data" && !reflect.DeepEqual(f.DeterminedSum, d) {
			t.Errorf("the data fit's determined_sum = %+v, want %+v", f.DeterminedSum, d)
		}
	}
}

func readSummaryFile(t *testing.T, dir string) output.Summary {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(dir, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	var sum output.Summary
	if err := json.Unmarshal(b, &sum); err != nil {
		t.Fatal(err)
	}
	return sum
}
