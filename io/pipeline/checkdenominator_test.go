package pipeline

import (
	"bytes"
	"fmt"
	"math"
	"strings"
	"testing"
)

// The constraint checks' "with" is the resolution itself: its residual over
// the data as given, the denominator of every lack of fit the run shows
// (docs/measurement.md §2), must be the last value of the iterations' curve
// (iterations.csv), whatever share of the data the fitted baseline took. The
// drifting A → B series (Bateman 1910, an offset and a slope per spectrum)
// gives a baseline that takes a visible share: 1.199 % against 1.333 % on
// the real catalyst-0.01 series before.
func TestConstraintTableOverTheDataAsGiven(t *testing.T) {
	s := driftingBateman(t, 2)
	series, blank := s.write(t)
	st := NewSettings()
	st.Data, st.Kind, st.Blanks, st.Pre = []string{series}, "single-beam", []string{blank}, 3
	st.Bands = "off"
	r, err := Run(st, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.BaselineOrder < 0 || r.Constraints == nil || len(r.Constraints.Checks) == 0 {
		t.Fatalf("baseline %d, checks %v: the case needs both", r.BaselineOrder, r.Constraints)
	}
	last := r.ALS.History[len(r.ALS.History)-1]
	t.Logf("iterations end %.6g %%, the checks' own with %.6g %%", last, r.Constraints.Checks[0].With)
	for _, c := range r.Constraints.Checks {
		if got := asGiven(r, c.With); math.Abs(got-last) > 1e-6*last {
			t.Errorf("%s: with it %.6g %%, the iterations end at %.6g %%", c.Name, got, last)
		}
	}
	var b bytes.Buffer
	PrintTable(r, &b)
	if want := fmt.Sprintf("(with: %.4g %%)", last); !strings.Contains(b.String(), want) {
		t.Errorf("the table lacks %q:\n%s", want, b.String())
	}
}
