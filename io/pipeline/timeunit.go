package pipeline

import (
	"strconv"
	"strings"
)

// Times are kept, written and recorded in seconds (profiles.csv,
// kinetics.csv, summary.json: CONTRACT.md). --time-unit only changes how
// they are shown to a person: on the terminal and in the report. Its
// default, auto, shows seconds on the terminal and lets the report's
// figures pick min or h for long runs; s, min or h is a choice, applied to
// every time, half-life and rate constant shown. The as-run record writes
// auto or the choice, so a rebuilt report can tell the two apart.

// timeUnitAuto is --time-unit's default.
const timeUnitAuto = "auto"

// inputTimeUnit is the unit plain numbers in file names are read in: the
// chosen one, else seconds.
func inputTimeUnit(s *Settings) string {
	if s.TimeUnit == "" || s.TimeUnit == timeUnitAuto {
		return "s"
	}
	return s.TimeUnit
}

// shownTime converts seconds into the unit times are shown in.
type shownTime struct {
	Unit string  // s, min or h
	Div  float64 // seconds per Unit
}

// shownTimeUnit is the terminal's time unit for s: the chosen one, else
// seconds.
func shownTimeUnit(s *Settings) shownTime {
	switch s.TimeUnit {
	case "min":
		return shownTime{"min", 60}
	case "h":
		return shownTime{"h", 3600}
	}
	return shownTime{"s", 1}
}

// T writes a time given in seconds as a number in the shown unit: exact
// in seconds (as the files hold it), to 4 significant digits in min or h.
func (u shownTime) T(sec float64) string {
	if u.Div == 1 {
		return strconv.FormatFloat(sec, 'g', -1, 64)
	}
	return strconv.FormatFloat(sec/u.Div, 'g', 4, 64)
}

// Rate converts a rate constant (and its standard error) per second into
// per shown unit, with its unit text: "s^-1" becomes "min^-1"; a
// second-order unit "(M)^-1 s^-1" keeps its concentration part.
func (u shownTime) Rate(k float64, unit string) (float64, string) {
	if u.Div == 1 {
		return k, unit
	}
	if strings.HasSuffix(unit, "s^-1") {
		unit = strings.TrimSuffix(unit, "s^-1") + u.Unit + "^-1"
	}
	return k * u.Div, unit
}

// Text rewrites the per-second units of a note ("per second", "s^-1")
// into the shown unit.
func (u shownTime) Text(note string) string {
	if u.Div == 1 {
		return note
	}
	long := map[string]string{"min": "minute", "h": "hour"}[u.Unit]
	return strings.NewReplacer("per second", "per "+long, " s^-1", " "+u.Unit+"^-1").Replace(note)
}
