package pipeline

import (
	"encoding/csv"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// TestVapourWarningOnRealSeries runs the trimmed copies of the urethane ATR
// series (source as urethaneDir; every second spectrum, 3500–4000 cm⁻¹) as
// a user would. At catalyst loading 0.01 water-vapour lines grow during the
// run (seen in the data: the last spectrum less the first is a forest of
// lines there, about 0.05 absorbance high): the warning fires, names the
// resolved spectra holding the lines, and vapour.csv gives the height per
// spectrum, whose range is summary.json's line_change (recomputed here from
// the file). At 1.00 there is no warning and no vapour.csv.
func TestVapourWarningOnRealSeries(t *testing.T) {
	for _, tc := range []struct {
		run  string
		want bool
	}{{"vapour-catalyst-0.01", true}, {"vapour-catalyst-1.00", false}} {
		s := NewSettings()
		s.Data, s.Kind, s.TimesFromName = []string{filepath.Join(urethaneDir, tc.run)}, "absorbance", true
		s.Bands, s.Checks, s.Report = "off", "off", "off"
		s.Out, s.Quiet = t.TempDir(), true
		r, err := Execute(s, Streams{Out: new(strings.Builder), Err: new(strings.Builder)})
		if err != nil {
			t.Fatal(err)
		}
		warned := false
		for _, w := range r.Warnings {
			warned = warned || strings.HasPrefix(w, "water vapour: ")
		}
		b, err := os.ReadFile(filepath.Join(s.Out, "summary.json"))
		if err != nil {
			t.Fatal(err)
		}
		var sum struct {
			Vapour struct {
				Checked, Detected bool
				Change            []float64 `json:"line_change"`
				With              []struct {
					Component string
				} `json:"spectra_with_lines"`
			} `json:"water_vapour"`
		}
		if err := json.Unmarshal(b, &sum); err != nil {
			t.Fatal(err)
		}
		_, statErr := os.Stat(filepath.Join(s.Out, "vapour.csv"))
		if warned != tc.want || sum.Vapour.Detected != tc.want || !sum.Vapour.Checked || (statErr == nil) != tc.want {
			t.Fatalf("%s: warned %v, detected %v, checked %v, vapour.csv %v; want %v\n%s", tc.run, warned, sum.Vapour.Detected, sum.Vapour.Checked, statErr, tc.want, r.Warnings)
		}
		if !tc.want {
			continue
		}
		if len(sum.Vapour.With) == 0 {
			t.Errorf("%s: no resolved spectrum holds the lines", tc.run)
		}
		lo, hi := vapourColumnRange(t, filepath.Join(s.Out, "vapour.csv"), len(r.Times))
		if len(sum.Vapour.Change) != 1 || math.Abs(sum.Vapour.Change[0]-(hi-lo)) > 1e-9*(hi-lo) {
			t.Errorf("%s: line_change %v, vapour.csv's range %.10g", tc.run, sum.Vapour.Change, hi-lo)
		}
	}
}

// vapourColumnRange reads vapour.csv's line_height column (rows rows) and
// returns its smallest and largest value.
func vapourColumnRange(t *testing.T, path string, rows int) (lo, hi float64) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) != rows+1 || strings.Join(recs[0], ",") != "time,line_height" {
		t.Fatalf("vapour.csv: %d rows, header %v; want %d and time,line_height", len(recs)-1, recs[0], rows)
	}
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, rec := range recs[1:] {
		v, err := strconv.ParseFloat(rec[1], 64)
		if err != nil {
			t.Fatal(err)
		}
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	return lo, hi
}
