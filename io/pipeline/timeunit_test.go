package pipeline

import (
	"bytes"
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/mcr"
)

// --time-unit changes what the terminal shows, never the numbers: on the
// demo's resolution, every rate constant printed per minute or per hour is
// the one per second × 60 or × 3600 and every half-life ln 2 / k (first
// order, IUPAC Gold Book "half-life") divided by 60 or 3600 (1 min = 60 s,
// 1 h = 3600 s: SI Brochure, 9th ed., Table 8), to the 4 digits printed;
// the profile maxima and t0 move the same way. The default (auto) and an
// explicit s print the same lines.
func TestTimeUnitOnTheTerminal(t *testing.T) {
	_, r := demoSpecies(t)
	print := func(unit string) string {
		rr, s := *r, *r.Settings
		s.TimeUnit = unit
		rr.Settings = &s
		var b bytes.Buffer
		PrintTable(&rr, &b)
		return b.String()
	}
	auto, sec := print(timeUnitAuto), print("s")
	if auto != sec {
		t.Errorf("auto and s print differently:\n%s\n---\n%s", auto, sec)
	}
	kLine := regexp.MustCompile(`k = ([0-9.e+-]+) ± ([0-9.e+-]+) (\S+), t½ = ([0-9.e+-]+) (\S+)`)
	num := func(s string) float64 {
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatalf("%q: %v", s, err)
		}
		return v
	}
	var ks []float64
	for _, f := range r.Kinetics.Fits {
		ks = append(ks, f.Fit.K...)
	}
	for _, c := range []struct {
		unit string
		div  float64
	}{{"s", 1}, {"min", 60}, {"h", 3600}} {
		out := print(c.unit)
		got := kLine.FindAllStringSubmatch(out, -1)
		if len(got) != len(ks) {
			t.Fatalf("%s: %d rate constants printed, want %d:\n%s", c.unit, len(got), len(ks), out)
		}
		for i, m := range got {
			k, hl := num(m[1]), num(m[4])
			if m[3] != c.unit+"^-1" || m[5] != c.unit {
				t.Errorf("%s: units %q and %q in %q", c.unit, m[3], m[5], m[0])
			}
			if want := ks[i] * c.div; math.Abs(k-want) > 5e-4*want {
				t.Errorf("%s: k printed %g, want %.6g (%.6g /s × %g)", c.unit, k, want, ks[i], c.div)
			}
			if want := math.Ln2 / ks[i] / c.div; math.Abs(hl-want) > 5e-4*want {
				t.Errorf("%s: t½ printed %g, want ln 2/k = %.6g", c.unit, hl, want)
			}
		}
		t0 := strconv.FormatFloat(r.Kinetics.T0/c.div, 'g', 4, 64) + " " + c.unit
		if c.div == 1 {
			t0 = strconv.FormatFloat(r.Kinetics.T0, 'g', -1, 64) + " s"
		}
		if !strings.Contains(out, "t0 = "+t0+",") {
			t.Errorf("%s: no 't0 = %s' in\n%s", c.unit, t0, out)
		}
		for _, l := range strings.Split(out, "\n") {
			// Warnings and notes are summary.json's text, in seconds with
			// the unit said.
			if c.div > 1 && strings.Contains(l, " s^-1") && !strings.HasPrefix(l, "warning:") && !strings.HasPrefix(l, "note:") {
				t.Errorf("%s: a rate still per second: %s", c.unit, l)
			}
		}
	}
}

// The record writes the default as auto, so a rebuilt report can tell it
// from a chosen s; plain numbers in file names are read in seconds then.
func TestTimeUnitDefaultRecorded(t *testing.T) {
	s := NewSettings()
	if got := s.Get("time-unit"); len(got) != 1 || got[0] != "auto" {
		t.Errorf("default time-unit %q, want auto", got)
	}
	if u := inputTimeUnit(s); u != "s" {
		t.Errorf("auto reads names in %q, want s", u)
	}
	for _, u := range []string{"s", "min", "h"} {
		if err := s.Set("time-unit", u); err != nil {
			t.Fatal(err)
		}
		if got := inputTimeUnit(s); got != u {
			t.Errorf("time-unit %s reads names in %q", u, got)
		}
	}
	if err := s.Set("time-unit", "days"); err == nil || !strings.Contains(err.Error(), "use auto, s, min or h") {
		t.Errorf("time-unit days: %v", err)
	}
}

// A largest share above unboundedBand is where the search stopped, reached
// only by components cancelling each other (the run warns so): the
// terminal says "no bound" rather than printing it as the range's end, and
// a bounded range keeps its number.
func TestUnboundedRangeOnTheTerminal(t *testing.T) {
	r := &Result{Names: []string{"reaction_1", "reaction_2"}, Constraints: &ConstraintReport{Bands: &mcr.BandsResult{Bands: []mcr.Band{
		{Min: 0.2504, Max: 0.3799, Value: 0.3799, Feasible: true, MinConverged: true, MaxConverged: true},
		{Min: 0.7564, Max: 2.02e7, Value: 1.0552, Feasible: true},
	}}}}
	var b bytes.Buffer
	printConstraints(r, &b)
	for _, want := range []string{
		"reaction_1   uniqueness range 0.2504 – 0.3799 of the signal (solution 0.3799)\n",
		"reaction_2   uniqueness range 0.7564 – no bound of the signal (solution 1.0552; the search stopped at 2.02e+07)\n",
	} {
		if !strings.Contains(b.String(), want) {
			t.Errorf("no line %q in\n%s", want, b.String())
		}
	}
}

// A ± figure says what it is: GUM (ISO/IEC Guide 98-3, 7.2.2, from memory)
// asks that a result "± u" state that u is a standard uncertainty. The
// kinetics block of the demo says its ± are one standard error, and what
// the * beside a fit marks.
func TestKineticsBlockSaysWhatPlusMinusIs(t *testing.T) {
	_, r := demoSpecies(t)
	var b bytes.Buffer
	PrintTable(r, &b)
	out := b.String()
	if !strings.Contains(out, " ± ") {
		t.Fatalf("no ± in the table:\n%s", out)
	}
	if !strings.Contains(out, "(± one standard error; * the fit reported in summary.json)") {
		t.Errorf("the table does not say what ± and * mean:\n%s", out)
	}
}
