package pipeline

import (
	"io"
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The iterations' curve and the constraint checks' table are figures of
// the data too: with a bubble set aside (its row filled with the model, so
// counted it adds nothing to the residual and its share to ‖D‖²), the
// curve's last value and each check's lack of fit with and without its
// constraint are 100 √(Σ w e²/Σ w d²) over the spectra kept (the lack of fit
// of multivariate curve resolution, common practice, in the checks' metric:
// weighted by the noise weights w_ij = a_i b_j), recomputed here from D as
// given (A = −log10(I/I_blank), IUPAC) and the C, S of the resolution and
// of each refit without a constraint.
func TestCurveAndChecksCountTheSpectraKept(t *testing.T) {
	s, rows := bubbleSeries(t, 3)
	series, blank := s.write(t)
	st := NewSettings()
	st.Data, st.Kind, st.Blanks = []string{series}, "single-beam", []string{blank}
	st.Report, st.Bands, st.Baseline = "off", "off", "off"
	r, err := Run(st, io.Discard)
	if err != nil {
		t.Fatal(err)
	}
	if got := asideList(r); !slices.Equal(got, rows) {
		t.Fatalf("set aside %v; want the bubbles %v", got, rows)
	}
	n, m := s.beams.Dims()
	kept := func(c, sp *mat.Dense) float64 {
		var model mat.Dense
		model.Mul(c, sp.T())
		res, tot := 0.0, 0.0
		for i := range n {
			if slices.Contains(rows, i) {
				continue
			}
			for j := range m {
				d := -math.Log10(s.beams.At(i, j) / s.blank[j])
				w := r.Weights.Row[i] * r.Weights.Col[j]
				res += w * sq(d-model.At(i, j))
				tot += w * d * d
			}
		}
		return 100 * math.Sqrt(res/tot)
	}
	want := kept(r.ALS.C, r.ALS.S)
	h := r.ALS.History
	if last := h[len(h)-1]; math.Abs(last-want) > 1e-6*want {
		t.Errorf("last value of the curve %.10g %%; over the %d spectra kept it is %.10g %%", last, n-len(rows), want)
	}
	if r.Constraints == nil || len(r.Constraints.Checks) == 0 {
		t.Fatal("no constraint checks")
	}
	for _, c := range r.Constraints.Checks {
		if math.Abs(c.With-want) > 1e-6*want {
			t.Errorf("%s: with it %.10g %%; over the spectra kept %.10g %%", c.Name, c.With, want)
		}
		if c.ResidualSSWithout < c.ResidualSSWith && c.Freer != nil {
			if w := kept(c.Freer.C, c.Freer.S); math.Abs(c.Without-w) > 1e-6*w {
				t.Errorf("%s: without it %.10g %%; over the spectra kept %.10g %%", c.Name, c.Without, w)
			}
		}
	}
}
