package report

import (
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
