package pipeline

import (
	"errors"
	"strconv"
	"strings"
	"testing"
)

// --drop that leaves too few spectra is refused before anything is
// computed, saying how many remain and the least needed: one spectrum shows
// no change in time (a difference needs a reference and a later spectrum,
// the definition of a difference spectrum), and with none kept the spectra
// set aside would be filled in from nothing. Dropping all 101 spectra once
// ran to the end, exit 0, "data 101 spectra". The rule: bad input gets one
// clear line, exit 2 for usage.
func TestDropLeavingTooFewRefused(t *testing.T) {
	truth, dir := writeDemo(t)
	cases := []struct {
		drop       int
		components string
		want       string
	}{
		{len(truth.Times), "auto", "0 remain, and a resolution needs at least 2"},
		{len(truth.Times) - 1, "auto", "1 remain, and a resolution needs at least 2"},
		{len(truth.Times) - 2, "3", "leaves 2 spectra, fewer than the 3 components asked for"},
	}
	for _, c := range cases {
		s := demoSettings(dir, true)
		s.Model, s.T0, s.Components = "", "", c.components
		for _, tm := range truth.Times[:c.drop] {
			s.Drops = append(s.Drops, strconv.FormatFloat(tm, 'g', -1, 64))
		}
		_, err := Run(s, nil)
		var ue *UsageError
		if !errors.As(err, &ue) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("drop %d of %d, components %s: %v, want a usage error with %q", c.drop, len(truth.Times), c.components, err, c.want)
		}
	}
}
