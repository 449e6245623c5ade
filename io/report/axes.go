package report

import (
	"fmt"
	"image/color"
	"math"
	"strings"

	"gonum.org/v1/plot"
)

// gapFactor: a step along the spectral axis more than this many times the
// median step is a cut (--exclude, or regions kept apart), drawn as a gap
// rather than a straight line across it. Instrument axes are uniform or
// nearly so (common practice), so 3 leaves room for a slightly uneven one.
const gapFactor = 3

// splitAtGaps returns x and y with a NaN pair inserted wherever the axis
// step jumps, so addLine breaks the line there.
func splitAtGaps(x, y []float64) ([]float64, []float64) { return splitAt(x, y, gapsOf(x)) }

// gapsOf are the places where splitAtGaps breaks a line along x: the
// indices i with a step from x[i−1] larger than gapFactor times the median
// step (none when x has fewer than three points or the median step is not
// positive). A figure of many lines along one axis finds them once.
func gapsOf(x []float64) []int {
	if len(x) < 3 {
		return nil
	}
	steps := make([]float64, 0, len(x)-1)
	for i := 1; i < len(x); i++ {
		steps = append(steps, math.Abs(x[i]-x[i-1]))
	}
	med := medianOfSorted(steps)
	if !(med > 0) {
		return nil
	}
	var gaps []int
	for i := 1; i < len(x); i++ {
		if steps[i-1] > gapFactor*med {
			gaps = append(gaps, i)
		}
	}
	return gaps
}

// medianOfSorted is the element at len(v)/2 of v sorted as sort.Float64s
// sorts it (NaNs first), found by selection (kth) on a copy rather than by
// sorting one.
func medianOfSorted(v []float64) float64 {
	a := make([]float64, 0, len(v))
	for _, s := range v {
		if !math.IsNaN(s) {
			a = append(a, s)
		}
	}
	k := len(v)/2 - (len(v) - len(a)) // the NaNs come first
	if k < 0 {
		return math.NaN()
	}
	return kth(a, k)
}

// splitAt returns x and y with a NaN pair inserted before x[i] for each i
// in gaps (gapsOf(x)); x and y as they are when there are none.
func splitAt(x, y []float64, gaps []int) ([]float64, []float64) {
	if len(gaps) == 0 {
		return x, y
	}
	ox := make([]float64, 0, len(x)+len(gaps))
	oy := make([]float64, 0, min(len(x), len(y))+len(gaps))
	for i := range x {
		if len(gaps) > 0 && gaps[0] == i {
			ox, oy = append(ox, math.NaN()), append(oy, math.NaN())
			gaps = gaps[1:]
		}
		ox = append(ox, x[i])
		if i < len(y) {
			oy = append(oy, y[i])
		}
	}
	return ox, oy
}

// headroomFraction of the data's range is left above its maximum, so the
// highest band is not drawn on the frame.
const headroomFraction = 0.05

// addHeadroom raises the top of p's y axis once all data are added (plot.Add
// has widened the axis to the data by then).
func addHeadroom(p *plot.Plot) {
	if r := p.Y.Max - p.Y.Min; r > 0 && !math.IsInf(r, 0) {
		p.Y.Max += headroomFraction * r
	}
}

// timeScale picks the unit times are shown in: the one the data came in
// when known (s, min or h), else from the run's length in seconds: hours
// beyond 2 h, minutes beyond 2 min, seconds otherwise. div converts
// seconds into that unit.
func timeScale(span float64, given string) (unit string, div float64) {
	switch given {
	case "min":
		return "min", 60
	case "h":
		return "h", 3600
	case "s":
		return "s", 1
	}
	switch {
	case span > 2*3600:
		return "h", 3600
	case span > 2*60:
		return "min", 60
	}
	return "s", 1
}

// scaledTicks places and labels ticks in the display unit (value/div)
// while the data stay in seconds, so every curve, band and fit on a
// time axis follows without being converted.
type scaledTicks struct{ div float64 }

func (s scaledTicks) Ticks(min, max float64) []plot.Tick {
	ts := niceTicks{}.Ticks(min/s.div, max/s.div)
	for i := range ts {
		ts[i].Value *= s.div
	}
	return ts
}

// fmtTime writes t (seconds) in the unit timeScale chose.
func fmtTime(t float64, unit string) string {
	_, div := timeScale(0, unit)
	return trimFloat(t/div, 4) + " " + unit
}

// chosenTimeUnit is the --time-unit the run's as-run record names when one
// was chosen (s, min or h); "" for the default auto, or with no record.
func (f *Folder) chosenTimeUnit() string {
	if f.AsRun == nil {
		return ""
	}
	for _, line := range strings.Split(f.AsRun.Body, "\n") {
		if w := strings.Fields(line); len(w) >= 2 && w[0] == "time-unit" {
			switch w[1] {
			case "s", "min", "h":
				return w[1]
			}
		}
	}
	return ""
}

// timeUnitView is the part of the as-run record the figures read, the
// chosen --time-unit, as a record of that line alone (nil without one).
func (f *Folder) timeUnitView() *Text {
	if u := f.chosenTimeUnit(); u != "" {
		return TimeUnitRecord(u)
	}
	return nil
}

// TimeUnitRecord is an as-run record of the --time-unit line alone, the
// part of the record the figures read: a caller that builds figures before
// the record is written (Folder.AsRun) hands this in its place.
func TimeUnitRecord(unit string) *Text { return &Text{Body: "time-unit " + unit} }

// timeUnit is the unit the figures show times of a run spanning span
// seconds in: the chosen --time-unit, else one picked from the span.
func (f *Folder) timeUnit(span float64) string {
	unit, _ := timeScale(span, f.chosenTimeUnit())
	return unit
}

// tableTimeUnit is the unit of times, half-lives and rate constants in
// the report's text and tables: the chosen --time-unit, else seconds, as
// on the terminal and in the files.
func (f *Folder) tableTimeUnit() (unit string, div float64) {
	if u := f.chosenTimeUnit(); u != "" {
		return timeScale(0, u)
	}
	return "s", 1
}

// timeUnitNote says in which unit the report shows times and why, so a
// reader can tell the default from a choice.
func (f *Folder) timeUnitNote(span float64) string {
	if u := f.chosenTimeUnit(); u != "" {
		return fmt.Sprintf("%s everywhere (--time-unit %s); the files hold seconds", u, u)
	}
	if u := f.timeUnit(span); u != "s" {
		return fmt.Sprintf("s in text and tables; figures in %s, picked for a run of %s (--time-unit auto, the default; s, min or h chooses one); the files hold seconds", u, fmtTime(span, u))
	}
	return "s (--time-unit auto, the default; s, min or h chooses one); the files hold seconds"
}

// timeSpan is the run's length in seconds, from profiles.csv (0 without).
func (f *Folder) timeSpan() float64 {
	if f.Profiles == nil || f.Profiles.Index("time") < 0 {
		return 0
	}
	lo, hi := span(f.Profiles.Col(f.Profiles.Index("time")))
	return hi - lo
}

// rateIn converts a rate constant per second (and its unit text) into per
// unit: s^-1 becomes min^-1 or h^-1; a concentration part is kept.
func rateIn(k float64, unit, to string, div float64) (float64, string) {
	if unit == "" {
		unit = "s^-1"
	}
	if div == 1 || !strings.HasSuffix(unit, "s^-1") {
		return k, unit
	}
	return k * div, strings.TrimSuffix(unit, "s^-1") + to + "^-1"
}

// timeAxis sets a's ticks and label for times in seconds spanning lo…hi.
func (f *Folder) timeAxis(a *plot.Axis, lo, hi float64) {
	unit, div := timeScale(0, f.timeUnit(hi-lo))
	if div != 1 {
		a.Tick.Marker = scaledTicks{div: div}
	}
	a.Label.Text = "time / " + unit
}

// spectralBand shades lo…hi along a spectral axis piece by piece, so an
// excluded range is left blank as the lines are.
func spectralBand(p *plot.Plot, x, lo, hi []float64, c color.RGBA) {
	for _, r := range gapRuns(x) {
		band(p, x[r[0]:r[1]], lo[r[0]:r[1]], hi[r[0]:r[1]], c)
	}
}

// gapRuns returns the [start, end) index runs of x between the gaps a line
// along x is broken at (gapsOf), as indices into x itself.
func gapRuns(x []float64) [][2]int {
	var runs [][2]int
	start := 0
	for _, g := range gapsOf(x) {
		runs = append(runs, [2]int{start, g})
		start = g
	}
	return append(runs, [2]int{start, len(x)})
}

// perTime rewrites the per-second units of a note ("per second", "s^-1")
// into unit.
func perTime(note, unit string) string {
	long := map[string]string{"min": "minute", "h": "hour"}[unit]
	if long == "" {
		return note
	}
	return strings.NewReplacer("per second", "per "+long, " s^-1", " "+unit+"^-1").Replace(note)
}
