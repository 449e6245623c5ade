package pipeline

import (
	"fmt"
	"io"
	"math"
	"strings"
	"testing"
)

// When one spectrum carries most of the misfit the warnings name it before
// a constraint or a missing species. The bubble series with its bubbles
// kept (--keep-outliers) and closure held: the two bubbles are the only
// misfit the data have (the invented truth fits to the noise otherwise),
// so the residual's excess over the noise lies in them, most in row 40,
// whose loss (12 %) and scatter are the larger. The misfit warning must
// name that spectrum with its residual in units of the noise, and no
// warning may advise --closure off: closure holds for every spectrum the
// reaction made (Σ c = 1 of A → B → C, Bateman 1910).
func TestOneSpectrumNamedBeforeTheConstraint(t *testing.T) {
	s, rows := bubbleSeries(t, 3)
	series, blank := s.write(t)
	st := NewSettings()
	st.Data, st.Kind, st.Blanks = []string{series}, "single-beam", []string{blank}
	st.Report, st.Bands = "off", "off"
	st.Baseline, st.KeepOutliers = "off", true
	r, err := Run(st, io.Discard)
	if err != nil {
		t.Fatal(err)
	}
	if r.misfitSpectrum == nil {
		t.Fatalf("no spectrum named as carrying the misfit; warnings: %q", r.Warnings)
	}
	if got := r.misfitSpectrum.Row; got != rows[0] {
		t.Errorf("spectrum %d named; want the larger bubble, row %d", got, rows[0])
	}
	name := fmt.Sprintf("t = %g s", s.times[rows[0]])
	var misfit string
	for _, w := range r.Warnings {
		if strings.HasPrefix(w, "the fit's residual is") {
			misfit = w
		}
		if strings.Contains(w, "--closure off") {
			t.Errorf("a warning advises --closure off while one spectrum carries the misfit: %q", w)
		}
	}
	if !strings.Contains(misfit, name) || !strings.Contains(misfit, "times the noise per point") || strings.Contains(misfit, "a component may be missing") {
		t.Errorf("misfit warning %q; want it to name %s and its residual in units of the noise, not a missing component", misfit, name)
	}
}

// findOneSpectrum against sums of squares made by hand: 10 spectra of
// noise alone leave 1 each (in units of the noise variance times the
// points), one of them 50 more; the fit's q² is then Σ/ν = 60/10 = 6 when
// the points count as the degrees of freedom. That spectrum carries 50 of
// the 50 above the noise, all of it, and its residual is √51 ≈ 7.14 times
// the noise per point (the definition of a root mean square), the median
// spectrum's 1. Spread evenly over five spectra (11 each), none carries
// most of it.
func TestFindOneSpectrumByHand(t *testing.T) {
	ss := []float64{1, 1, 1, 51, 1, 1, 1, 1, 1, 1}
	one, ok := findOneSpectrum(ss, nil, math.Sqrt(6))
	if !ok || one.Row != 3 || math.Abs(one.Share-1) > 1e-12 || math.Abs(one.RMS-math.Sqrt(51)) > 1e-12 || math.Abs(one.Typical-1) > 1e-12 {
		t.Errorf("got %+v, %v; want row 3, share 1, residual √51, median 1", one, ok)
	}
	even := []float64{11, 11, 11, 11, 11, 1, 1, 1, 1, 1}
	if one, ok := findOneSpectrum(even, nil, math.Sqrt(6)); ok {
		t.Errorf("misfit spread over five spectra: %+v named; want none", one)
	}
}
