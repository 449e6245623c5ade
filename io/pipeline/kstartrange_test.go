package pipeline

import (
	"errors"
	"strings"
	"testing"
)

// Rate constants and starting concentrations the fit cannot represent are
// refused before anything is read (exit 2, one line with the range): the
// fit works in ln k and stops at |ln k| > 700 (exp(700) ≈ 1.0e304, near the
// float64 limit of about 1.8e308, IEEE 754), so --k-start 1=1e308 once
// ended a whole run with "levenberg-marquardt: … log rate constant out of
// range", exit 1; a starting concentration of 1e300 could not be evaluated.
func TestRateConstantsOutsideTheFitRefused(t *testing.T) {
	for _, c := range []struct {
		name, value string
		ok          bool
	}{
		{"k-start", "1=1e308", false}, {"k-start", "1=1e-310", false}, {"k-fixed", "2=1e301", false},
		{"k-start", "1=4e-3", true}, {"k-fixed", "2=0", true}, {"k-start", "1=1e12", true},
		{"c0", "A=1e300", false}, {"c0", "A=1e-200", false}, {"c0", "A=1,B=0", true},
	} {
		s := NewSettings()
		s.Data = []string{"d.csv"}
		s.Model = "A -> B -> C"
		if err := s.Set(c.name, c.value); err != nil {
			t.Fatal(err)
		}
		err := checkKineticsSettings(s)
		if c.ok != (err == nil) {
			t.Errorf("%s %s: %v", c.name, c.value, err)
		}
		if err != nil && (!errors.As(err, new(*UsageError)) || !strings.Contains(err.Error(), "outside the")) {
			t.Errorf("%s %s: %v, want a usage error naming the range", c.name, c.value, err)
		}
	}
}
