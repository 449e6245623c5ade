package pipeline

import (
	"math"

	"github.com/bandsolve/bandsolve/io/output"
)

// writeNoise writes the noise model the fit was weighted with, so that
// every weighted figure can be recomputed from the files: noise.csv holds
// σ_j per channel of a typical spectrum and noise_spectra.csv the factor
// f_i of each spectrum, σ_ij = f_i·σ_j (w_ij = 1/σ²_ij = a_i b_j, the
// factors' median is 1).
func writeNoise(r *Result, st *output.Stage) error {
	if !weighted(r) {
		return nil
	}
	sig := r.Weights.ChannelSigma()
	t := output.Table{Header: []string{r.AxisName, "noise_sd"}}
	for j, x := range r.Axis {
		t.Rows = append(t.Rows, []string{output.Float(x), output.Float(sig[j])})
	}
	if err := st.Write("noise.csv", t.CSV()); err != nil {
		return err
	}
	ma := medianOf(r.Weights.Row)
	multi := len(r.Experiments) > 1
	h := []string{"time"}
	if multi {
		h = []string{"experiment", "time"}
	}
	u := output.Table{Header: append(h, "noise_factor", "blind_points")}
	for i, tm := range r.Times {
		var row []string
		if multi {
			row = append(row, output.Float(float64(r.ExpOfRow[i]+1)))
		}
		blind := 0
		if r.Blind != nil {
			blind = len(r.Blind.Rows[i])
		}
		row = append(row, output.Float(tm), output.Float(sqrtRatio(ma, r.Weights.Row[i])), output.Float(float64(blind)))
		u.Rows = append(u.Rows, row)
	}
	return st.Write("noise_spectra.csv", u.CSV())
}

// sqrtRatio is √(a/b): the noise factor of a row whose weight is b when the
// median weight is a.
func sqrtRatio(a, b float64) float64 {
	if !(b > 0) {
		return 0
	}
	return math.Sqrt(a / b)
}
