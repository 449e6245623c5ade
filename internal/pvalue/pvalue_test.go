package pvalue

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

// tails is testdata/pvalue/tails.json, made by make_reference.py there.
type tails struct {
	FSF []struct{ F, D1, D2, P float64 } `json:"f_sf"`
}

// FUpper against mpmath at 50 digits (testdata/pvalue/tails.json, made by
// make_reference.py there): within 1e-6 relatively wherever the tail is
// above 1e-300, from 0.99999 down to 3e-200, and below Smallest where it is
// not. 1 − CDF, the computation it replaces, gives 0 or 1.1e-16 for every
// tail below 1e-16. What is left of the error (2.5e-9 at d2 = 1e7) is the
// rounding of x = d2/(d2 + d1 f) near 1, raised to the power d1/2.
func TestFUpperAsMpmath(t *testing.T) {
	raw, err := os.ReadFile("../../testdata/pvalue/tails.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref tails
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	tiny := 0
	for _, c := range ref.FSF {
		got := FUpper(c.F, c.D1, c.D2)
		switch {
		case c.P == 0:
			if got >= Smallest {
				t.Errorf("F(%g; %g, %g): %g, the tail is below 1e-300", c.F, c.D1, c.D2, got)
			}
		case math.Abs(got-c.P) > 1e-6*c.P:
			t.Errorf("F(%g; %g, %g): %.12g, mpmath %.12g", c.F, c.D1, c.D2, got, c.P)
		case c.P < 1e-16:
			tiny++
		}
	}
	if tiny < 5 {
		t.Fatalf("only %d reference tails below 1e-16: the file does not test the far tail", tiny)
	}
}

// The edges of FUpper: the whole mass above f ≤ 0, none above +Inf, NaN for
// degrees of freedom that are not positive (definitions).
func TestFUpperEdges(t *testing.T) {
	if p := FUpper(0, 3, 7); p != 1 {
		t.Errorf("P(F > 0) = %g, want 1", p)
	}
	if p := FUpper(math.Inf(1), 3, 7); p != 0 {
		t.Errorf("P(F > ∞) = %g, want 0", p)
	}
	if p := FUpper(2, 0, 7); !math.IsNaN(p) {
		t.Errorf("d1 = 0: %g, want NaN", p)
	}
}

func TestText(t *testing.T) {
	for _, c := range []struct {
		p    float64
		want string
	}{{0.032, "p = 0.032"}, {4.67e-8, "p = 4.7e-08"}, {1e-300, "p = 1e-300"}, {9e-301, "p < 1e-300"}, {0, "p < 1e-300"}, {1, "p = 1"}} {
		if got := Text(c.p); got != c.want {
			t.Errorf("Text(%g) = %q, want %q", c.p, got, c.want)
		}
	}
}
