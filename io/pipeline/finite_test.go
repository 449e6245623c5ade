package pipeline

import (
	"errors"
	"strings"
	"testing"
)

// No setting takes a value that is not a finite number. strconv.ParseFloat
// reads "NaN", "Inf", "-Inf" and "infinity" (Go's documented syntax) and
// gives ±Inf for 1e999, past the largest float64 (IEEE 754 binary64,
// about 1.8e308); none means a time, a range, a weight or a level, and a
// t0 of NaN once ran the whole resolution and was written into the record
// and summary. Each is refused when set, naming the value (the rule: bad
// input gets one clear line, what, where and what to do; no NaN in any
// output).
func TestNonFiniteNumbersRefused(t *testing.T) {
	cases := []struct{ name, value string }{
		{"t0", "NaN"}, {"t0", "Inf"}, {"t0", "-Inf"}, {"t0", "1e999"}, {"t0", "infinity"},
		{"region", "-inf:inf"}, {"region", "1000:NaN"}, {"exclude", "nan:5"},
		{"zero-window", "1=0:inf"}, {"zero-region", "2=NaN:1800"},
		{"alpha", "NaN"}, {"tolerance", "Inf"}, {"unimodal-tolerance", "NaN"},
		{"closure", "inf"}, {"closure", "1,NaN"}, {"closure-weights", "NaN,1"},
		{"known-spectrum", "1=pure.csv:NaN"},
	}
	for _, c := range cases {
		err := NewSettings().Set(c.name, c.value)
		if err == nil || !strings.Contains(err.Error(), "not a finite number") || !strings.Contains(err.Error(), "want") {
			t.Errorf("%s %s: %v", c.name, c.value, err)
		}
	}
	// The rate constants and initial concentrations are read with the model.
	for _, c := range []struct{ name, value string }{
		{"k-start", "1=NaN"}, {"k-fixed", "1=Inf"}, {"c0", "A=NaN"}, {"c0", "A=1e999"},
	} {
		s := NewSettings()
		s.Data = []string{"d.csv"}
		if err := s.Set("model", "A -> B"); err != nil {
			t.Fatal(err)
		}
		if err := s.Set(c.name, c.value); err != nil {
			t.Fatal(err)
		}
		err := checkKineticsSettings(s)
		if err == nil || !strings.Contains(err.Error(), "not a finite number; want") || !errors.As(err, new(*UsageError)) {
			t.Errorf("%s %s: %v", c.name, c.value, err)
		}
	}
	// A command file goes through the same parsing, with its line.
	err := loadRecord("f.bsr", []byte("data s.csv\nregion -inf:inf\n"), NewSettings())
	if err == nil || !strings.Contains(err.Error(), `f.bsr:2:8: "-inf:inf": "-inf" is not a finite number; want`) {
		t.Errorf("command file: %v", err)
	}
}
