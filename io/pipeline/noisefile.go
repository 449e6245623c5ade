package pipeline

import (
	"fmt"
	"math"

	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/mcr"
)

// writeNoise writes the noise model the fit was weighted with, so that
// every weighted figure can be recomputed from the files: noise.csv holds
// σ_j per channel of a typical spectrum and noise_spectra.csv the factor
// f_i of each spectrum, σ_ij = f_i·σ_j (w_ij = 1/σ²_ij = a_i b_j, the
// factors' median is 1). In reactions mode from single beams noise.csv
// also holds reference_sd, σ_ref,j of each experiment's reference state (the
// share of σ_ij that is one pattern common to its rows; 0 where no
// reference beam was observed), and noise_spectra.csv in_reference marks
// the rows averaged into it: with them residual_to_noise's ν is recomputed
// too (referenceDOF).
func writeNoise(r *Result, st *output.Stage) error {
	if !weighted(r) {
		return nil
	}
	refs := referenceColumns(r)
	sig := r.Weights.ChannelSigma()
	t := output.Table{Header: []string{r.AxisName, "noise_sd"}}
	for e := range refs {
		t.Header = append(t.Header, referenceHeader(e, len(r.Experiments)))
	}
	for j, x := range r.Axis {
		row := []string{output.Float(x), output.Float(sig[j])}
		for _, v := range refs {
			row = append(row, output.Float(finiteSqrt(v[j])))
		}
		t.Rows = append(t.Rows, row)
	}
	if err := st.Write("noise.csv", t.CSV()); err != nil {
		return err
	}
	return writeNoiseSpectra(r, st, refs != nil)
}

// writeNoiseSpectra writes noise_spectra.csv (writeNoise); inRef adds the
// in_reference column.
func writeNoiseSpectra(r *Result, st *output.Stage, inRef bool) error {
	ma := medianOf(r.Weights.Row)
	multi := len(r.Experiments) > 1
	h := []string{"time"}
	if multi {
		h = []string{"experiment", "time"}
	}
	u := output.Table{Header: append(h, "noise_factor", "blind_points")}
	if inRef {
		u.Header = append(u.Header, "in_reference")
	}
	// The spectra's own levels are written when the weights follow them
	// (only then does the file change: equally noisy spectra keep it).
	own, level := weightsPerSpectrum(r), 0.0
	if own {
		u.Header = append(u.Header, "noise_sd")
		level = medianOf(r.Weights.ChannelSigma())
	}
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
		if inRef {
			row = append(row, output.Float(float64(referenceRowFlag(r, i))))
		}
		if own {
			row = append(row, output.Float(sqrtRatio(ma, r.Weights.Row[i])*level))
		}
		u.Rows = append(u.Rows, row)
	}
	return st.Write("noise_spectra.csv", u.CSV())
}

// referenceColumns are the experiments' reference variances when the fit's
// figures count them (referenceDOF), else nil.
func referenceColumns(r *Result) [][]float64 {
	if r.Mode != mcr.Reactions || !anyReferenceVariance(r) {
		return nil
	}
	_, m := r.D.Dims()
	out := make([][]float64, len(r.Experiments))
	for e, ex := range r.Experiments {
		out[e] = make([]float64, m) // none known: 0
		if ex.Assembled != nil && ex.Assembled.ReferenceVariance != nil {
			out[e] = ex.Assembled.ReferenceVariance
		}
	}
	return out
}

// referenceHeader names experiment e's reference column: reference_sd, or
// reference_sd_<e> (from 1) when there are several experiments.
func referenceHeader(e, experiments int) string {
	if experiments == 1 {
		return "reference_sd"
	}
	return fmt.Sprintf("reference_sd_%d", e+1)
}

// finiteSqrt is √v, 0 for a variance that is not finite and positive.
func finiteSqrt(v float64) float64 {
	if !(v > 0) || math.IsInf(v, 0) {
		return 0
	}
	return math.Sqrt(v)
}

// referenceRowFlag is 1 when stacked row i is averaged into its
// experiment's reference.
func referenceRowFlag(r *Result, i int) int {
	e := r.Experiments[r.ExpOfRow[i]]
	for _, l := range e.RefRows {
		if e.FirstRow+l == i {
			return 1
		}
	}
	return 0
}

// sqrtRatio is √(a/b): the noise factor of a row whose weight is b when the
// median weight is a.
func sqrtRatio(a, b float64) float64 {
	if !(b > 0) {
		return 0
	}
	return math.Sqrt(a / b)
}
