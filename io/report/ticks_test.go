package report

import (
	"encoding/json"
	"math"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/plot"
)

// The PNG figures print tick labels with the raster font, which has no
// superscript minus: 8×10⁻⁵ printed as 8×10⁵. For the PNG every labelled
// tick must read back as its own value (definition of the tick: its label
// names its position), sign of the exponent included; the SVG keeps the
// typeset form.
func TestPNGTickLabelsKeepTheExponentSign(t *testing.T) {
	for _, c := range []struct{ lo, hi float64 }{
		{-8e-5, 8e-5}, // the demo's residual spectrum
		{0, 3e-3},
		{1e5, 9e5},
		{-2.5e-7, 0},
	} {
		p := newPlot("x", "y")
		svg := p.Y.Tick.Marker.Ticks(c.lo, c.hi)
		undo := plainMinus([]*plot.Plot{p, nil})
		png := p.Y.Tick.Marker.Ticks(c.lo, c.hi)
		undo()
		back := p.Y.Tick.Marker.Ticks(c.lo, c.hi)
		labelled := 0
		for i, tk := range png {
			if tk.Label == "" {
				continue
			}
			labelled++
			if strings.ContainsAny(tk.Label, "⁻⁰¹²³⁴⁵⁶⁷⁸⁹") {
				t.Errorf("[%g, %g]: PNG tick %q still typeset", c.lo, c.hi, tk.Label)
			}
			v, err := strconv.ParseFloat(tk.Label, 64)
			if err != nil {
				t.Errorf("[%g, %g]: PNG tick %q is not a plain number: %v", c.lo, c.hi, tk.Label, err)
				continue
			}
			// Two significant digits are printed: the value must agree to them.
			if math.Abs(v-tk.Value) > 0.05*math.Abs(tk.Value)+1e-300 {
				t.Errorf("[%g, %g]: PNG tick %q reads %g, sits at %g", c.lo, c.hi, tk.Label, v, tk.Value)
			}
			if svg[i].Label != back[i].Label {
				t.Errorf("SVG label %q not restored (%q)", svg[i].Label, back[i].Label)
			}
		}
		if labelled < 2 {
			t.Errorf("[%g, %g]: %d labelled ticks, want several", c.lo, c.hi, labelled)
		}
	}
	// The typeset label that went wrong in the PNG, for the record.
	if got := tickLabel(8e-5); got != "8×10⁻⁵" {
		t.Errorf("tickLabel(8e-5) = %q, want 8×10⁻⁵ (SVG and HTML)", got)
	}
	if got := plainExponent(tickLabel(8e-5)); got != "8e-5" {
		t.Errorf("PNG form of 8×10⁻⁵ = %q, want 8e-5", got)
	}
}

// "More results" shows values, not JSON: nested keys are spread into one
// row per value (the dotted path names it), lists of numbers stay on a row.
func TestExtraKeysAsTable(t *testing.T) {
	raw := map[string]json.RawMessage{
		"residual_to_noise": json.RawMessage(`1.02`),
		"baseline":          json.RawMessage(`{"model":"linear","terms":[0.1,2e-5]}`),
		"outlier_spectra":   json.RawMessage(`[{"time_s":30,"reason":"spike"}]`),
		"rank_estimate":     json.RawMessage(`3`), // shown elsewhere
	}
	got := map[string]string{}
	for _, r := range extraKeys(raw, nil) {
		got[r[0]] = r[1]
		if strings.ContainsAny(r[1], "{[\"") {
			t.Errorf("row %s shows JSON: %q", r[0], r[1])
		}
	}
	want := map[string]string{"residual_to_noise": "1.02", "baseline.model": "linear", "baseline.terms": "0.1, 2e-5",
		"outlier_spectra[1].time_s": "30", "outlier_spectra[1].reason": "spike"}
	for k, v := range want {
		if got[k] != v {
			t.Errorf("%s = %q, want %q (all rows %v)", k, got[k], v, got)
		}
	}
	if _, ok := got["rank_estimate"]; ok || len(got) != len(want) {
		t.Errorf("rows %v, want exactly %v", got, want)
	}
}
