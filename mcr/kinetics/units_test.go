package kinetics

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestUnitsSaid: the values a fit's warnings and errors print carry the
// units FitOptions names, and none when it names none.
func TestUnitsSaid(t *testing.T) {
	// Of the times only 6 follows t0 = 5: no rate can show (spanAfter's rule).
	obs := mat.NewDense(3, 1, []float64{1, 1, 1})
	sch, err := ParseScheme("A -> B")
	if err != nil {
		t.Fatal(err)
	}
	for unit, want := range map[string]string{"s": "after t0 = 5 s", "": "after t0 = 5"} {
		_, err := FitProfiles(sch, []float64{0, 1, 6}, obs, []int{0}, FitOptions{T0: 5, TimeUnit: unit})
		if err == nil || !strings.HasSuffix(err.Error(), want) {
			t.Errorf("time unit %q: error %v, want it to end %q", unit, err, want)
		}
	}

	// C starts at 0 and d[C]/dt = −k2[C] keeps it there, so no profile
	// depends on k2 (analytic solution): it is held at its start, and the
	// warning says the start with the step's unit.
	two, err := ParseScheme("A -> B; C -> D")
	if err != nil {
		t.Fatal(err)
	}
	times := []float64{0, 5, 10, 20, 40, 80}
	ab := mat.NewDense(len(times), 2, nil)
	for i, tt := range times {
		a := math.Exp(-0.1 * tt) // [A] = e^{−kt}, [B] = 1 − [A] (first order, [A]0 = 1)
		ab.Set(i, 0, a)
		ab.Set(i, 1, 1-a)
	}
	opt := FitOptions{InitialK: []float64{0.1, 0.05}, C0: []float64{1, 0, 0, 0}, RateUnits: []string{"s^-1", "min^-1"}}
	res, err := FitProfiles(two, times, ab, []int{0, 1}, opt)
	if err != nil {
		t.Fatal(err)
	}
	w := strings.Join(res.Warnings, "\n")
	if !strings.Contains(w, `step "C -> D" is not determined by the data`) || !strings.Contains(w, "at 0.05 min^-1, where this fit started") {
		t.Errorf("warnings %q; want k2 held at its start 0.05 min^-1", w)
	}
	opt.RateUnits = nil
	if res, err = FitProfiles(two, times, ab, []int{0, 1}, opt); err != nil {
		t.Fatal(err)
	}
	if w := strings.Join(res.Warnings, "\n"); !strings.Contains(w, "at 0.05, where this fit started") {
		t.Errorf("no units given: warnings %q; want the start 0.05 without a unit", w)
	}
}
