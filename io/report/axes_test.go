package report

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"github.com/bandsolve/bandsolve/io/output"
)

// An axis cut by --exclude 1400:1500 on a 2 cm⁻¹ grid: the one step of
// 102 cm⁻¹ is a gap and the line must break there; uneven steps within a
// factor 3 of the median (an instrument's slightly uneven axis; common
// practice) must not break it.
func TestSplitAtGaps(t *testing.T) {
	x := []float64{1600, 1598, 1596, 1500, 1498, 1496, 1495}
	y := []float64{1, 2, 3, 4, 5, 6, 7}
	gx, gy := splitAtGaps(x, y)
	if len(gx) != 8 || len(gy) != 8 || !math.IsNaN(gx[3]) || !math.IsNaN(gy[3]) || gx[4] != 1500 || gy[4] != 4 {
		t.Fatalf("no single break between 1596 and 1500: %v %v", gx, gy)
	}
	// Every piece between NaNs (what addLine draws as one line) stays
	// within the median step's factor.
	for i := 1; i < len(gx); i++ {
		if !math.IsNaN(gx[i]) && !math.IsNaN(gx[i-1]) && math.Abs(gx[i]-gx[i-1]) > 6 {
			t.Errorf("a drawn piece crosses the gap: %v → %v", gx[i-1], gx[i])
		}
	}
	even := []float64{1, 2, 3.5, 4, 5, 6}
	if gx, _ := splitAtGaps(even, even); len(gx) != len(even) {
		t.Errorf("uneven but unbroken axis split: %v", gx)
	}
}

// Headroom: 5 % of the data's range above its maximum, so a band's top is
// not drawn on the frame (common practice in plotting).
func TestAddHeadroom(t *testing.T) {
	p := plot.New()
	l, err := plotter.NewLine(plotter.XYs{{X: 0, Y: -0.2}, {X: 1, Y: 1.8}})
	if err != nil {
		t.Fatal(err)
	}
	p.Add(l)
	addHeadroom(p)
	if want := 1.8 + 0.05*2.0; math.Abs(p.Y.Max-want) > 1e-12 || p.Y.Min != -0.2 {
		t.Errorf("y axis %g…%g, want -0.2…%g", p.Y.Min, p.Y.Max, want)
	}
}

// The display unit: the input's when the as-run record names min or h;
// else hours beyond 2 h, minutes beyond 2 min, seconds otherwise (the
// thresholds of issue 16). Ticks carry the unit's values at positions in
// seconds.
func TestTimeUnit(t *testing.T) {
	cases := []struct {
		span  float64
		given string
		want  string
	}{
		{90, "", "s"},
		{120, "", "s"},
		{121, "", "min"},
		{7200, "", "min"},
		{7201, "", "h"},
		{86400, "", "h"},
		{90, "min", "min"},
		{86400, "min", "min"},
		{30, "h", "h"},
		{86400, "s", "s"},
	}
	for _, c := range cases {
		if got, _ := timeScale(c.span, c.given); got != c.want {
			t.Errorf("span %g s, given %q: %s, want %s", c.span, c.given, got, c.want)
		}
	}
	f := &Folder{AsRun: &Text{Body: "data  run.csv\ntime-unit        min\n"}}
	if u := f.timeUnit(30); u != "min" {
		t.Errorf("as-run time-unit min shown as %s", u)
	}
	f.AsRun.Body = "time-unit        auto\n"
	if u := f.timeUnit(3 * 3600); u != "h" {
		t.Errorf("a 3 h run with the default unit shown in %s, want h", u)
	}
	f.AsRun.Body = "time-unit        s\n"
	if u := f.timeUnit(3 * 3600); u != "s" {
		t.Errorf("a 3 h run with time-unit s chosen shown in %s, want s", u)
	}
	if got := fmtTime(5400, "h"); got != "1.5 h" {
		t.Errorf("5400 s in hours: %q", got)
	}
	ticks := scaledTicks{div: 60}.Ticks(0, 600)
	found := false
	for _, tk := range ticks {
		if tk.Label == "4" {
			found = tk.Value == 240
		}
	}
	if !found {
		t.Errorf("no tick labelled 4 (min) at 240 s: %+v", ticks)
	}
}

// The shaded uniqueness ranges break at the same gap as the lines.
func TestGapRuns(t *testing.T) {
	x := []float64{1600, 1598, 1596, 1500, 1498, 1496, 1495}
	got := gapRuns(x)
	if len(got) != 2 || got[0] != [2]int{0, 3} || got[1] != [2]int{3, 7} {
		t.Errorf("runs %v, want [0,3) and [3,7)", got)
	}
	if got := gapRuns([]float64{1, 2, 3}); len(got) != 1 || got[0] != [2]int{0, 3} {
		t.Errorf("unbroken axis: %v", got)
	}
}

// Text and tables show rate constants and half-lives in the chosen unit
// (k per min = 60 × k per s, t½ in min = t½ in s / 60: 1 min = 60 s, SI
// Brochure 9th ed. Table 8), in seconds by default; the "times shown in"
// note tells the default (auto) from a chosen unit.
func TestTimeUnitOfTables(t *testing.T) {
	f := &Folder{Summary: &Summary{Kinetics: &Kinetics{RateConstants: []output.RateConstant{
		{Step: "A -> B", K: 0.004, StdErr: 1e-5, HalfLife: math.Ln2 / 0.004},
		{Step: "2 A -> B", K: 0.5, StdErr: 0.01, Unit: "(M)^-1 s^-1"},
	}}}}
	for _, c := range []struct {
		record, unit string
		div          float64
		note         string
	}{
		{"", "s", 1, "--time-unit auto, the default"},
		{"time-unit auto\n", "s", 1, "--time-unit auto, the default"},
		{"time-unit s\n", "s", 1, "s everywhere (--time-unit s)"},
		{"time-unit min\n", "min", 60, "min everywhere (--time-unit min)"},
		{"time-unit h\n", "h", 3600, "h everywhere (--time-unit h)"},
	} {
		f.AsRun = &Text{Body: c.record}
		rs := f.rates()
		if rs[0].K != 0.004*c.div || rs[0].StdErr != 1e-5*c.div || math.Abs(rs[0].HalfLife-math.Ln2/0.004/c.div) > 1e-9 {
			t.Errorf("%q: first order %+v", c.record, rs[0])
		}
		if want := c.unit + "^-1"; rs[0].Unit != want || rs[0].TimeUnit != c.unit {
			t.Errorf("%q: unit %q, time unit %q, want %q", c.record, rs[0].Unit, rs[0].TimeUnit, want)
		}
		if want := "(M)^-1 " + c.unit + "^-1"; rs[1].Unit != want || rs[1].K != 0.5*c.div {
			t.Errorf("%q: second order k = %g %s, want %g %s", c.record, rs[1].K, rs[1].Unit, 0.5*c.div, want)
		}
		if n := f.timeUnitNote(3000); !strings.Contains(n, c.note) {
			t.Errorf("%q: note %q lacks %q", c.record, n, c.note)
		}
	}
	f.AsRun = nil
	if n := f.timeUnitNote(3000); !strings.Contains(n, "figures in min, picked for a run of 50 min") {
		t.Errorf("a 50 min run by default: %q", n)
	}
}

// A largest share above 100 times the whole signal is where the search
// stopped (components cancelling each other), not a bound: the report's
// findings and table say "no bound" and keep the stopping point in words;
// a bounded share keeps its number.
func TestUnboundedShareInTheReport(t *testing.T) {
	if got := shareText(0.3799); got != "0.38" {
		t.Errorf("bounded share: %q", got)
	}
	if got := shareText(2.02e7); got != "no bound (the search stopped at 2.02×10⁷)" {
		t.Errorf("unbounded share: %q", got)
	}
	if got := shareText(unboundedShare); got != "100" {
		t.Errorf("share at the limit: %q", got)
	}
}

// The legend strip under a figure file never lets a label run into the
// next column's sample: each column is at least as wide as the widest
// item (sample, gap, label as the font measures it, gap). The profiles
// figure's eight labels ("species_2 uniqueness range" …) overlapped at a
// fixed three per row.
func TestLegendColumnsFit(t *testing.T) {
	var items []LegendItem
	for _, l := range []string{"species_1 (resolved)", "model fitted to the profiles", "species_2 uniqueness range", "root-mean-square over time"} {
		items = append(items, LegendItem{Label: l})
	}
	short := []LegendItem{{Label: "a"}, {Label: "b"}, {Label: "c"}, {Label: "d"}}
	sty := legendStyle()
	for _, c := range []struct {
		items []LegendItem
		want  int
	}{{items, 2}, {short, 3}} {
		n := legendColumns(c.items, figW)
		if n != c.want {
			t.Errorf("%d columns, want %d", n, c.want)
		}
		colW := (figW - vg.Centimeter) / vg.Length(n)
		for _, it := range c.items {
			if need := swatchW + swatchGap + sty.Width(it.Label) + itemGap; need > colW {
				t.Errorf("%q needs %v, the column is %v", it.Label, need, colW)
			}
		}
	}
}
