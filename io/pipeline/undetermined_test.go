package pipeline

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/output"
)

// TestRateNotDeterminedSaysSo: the real catalyst-1.00 series (source as urethaneDir) with
// --t0 3400 s leaves three spectra after t0, and 'A -> B' is then not determined by them:
// the data fit's rate constant ran to 3.6e-160 s⁻¹ with a standard error of +Inf, which the
// terminal printed as "± +Inf" and summary.json as 0, an exact value. A standard error that
// is not finite is now said in words on the terminal and in the report, and summary.json
// marks the constant not_determined; nothing printed holds Inf or NaN (IEEE 754 specials are
// not numbers a chemist can quote). With --t0 past the last spectrum the refusal names
// "kinetics" once, not once per layer of the error.
func TestRateNotDeterminedSaysSo(t *testing.T) {
	dir := t.TempDir()
	s := NewSettings()
	s.Data, s.Kind, s.TimesFromName = []string{filepath.Join(urethaneDir, "catalyst-1.00")}, "absorbance", true
	s.Model, s.T0, s.Bands, s.Out = "A -> B", "3400", "off", filepath.Join(dir, "out")
	var out, errs bytes.Buffer
	if _, err := Execute(s, Streams{Out: &out, Err: &errs}); err != nil {
		t.Fatal(err)
	}
	special := regexp.MustCompile(`(?i)\b[+-]?(inf|nan)\b`)
	if m := special.FindString(out.String() + errs.String()); m != "" {
		t.Errorf("the terminal shows %q", m)
	}
	if !strings.Contains(out.String()+errs.String(), "not determined (its standard error is not finite)") {
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
	if !bytes.Contains(html, []byte("not determined by the data (its standard error is not finite)")) {
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
