package spectra

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// StepOwnNoise is, for each step of rows lo+1 … hi−1 of d, the noise standard deviation
// of the two spectra it joins in the units StepToNoise measures the step in (1 when they
// are as noisy as the weights say): κ_i. A series need not be equally noisy throughout:
// an instrument that co-adds scans for the whole interval between spectra gives noisier
// spectra where they come fast, and a step between two of them is larger than the series'
// noise without anything having changed. So κ_i is read from the step itself, where no
// chemistry reaches: its fourth difference along the axis, Δ⁴z_j = z_{j−2} − 4z_{j−1} +
// 6z_j − 4z_{j+1} + z_{j+2} with z_j = step_j·√b_j / √(1/a_i + 1/a_{i−1}), cancels a cubic
// over five channels, so a band many channels wide (and a baseline) leaves nothing there,
// while noise leaves a fixed share of itself. That share is the noise's colour along the
// axis (70 in variance for white noise, far less for noise an instrument smoothed or
// interpolated): c is the median over the rows lo0+1 … hi0−2 of med_j|Δ⁴q_j| / med_j|q_j|,
// q the second differences in time, which cancel a change linear in time and so hold the
// noise alone, and κ_i = med_j|Δ⁴z_ij| / (c · med|N(0,1)|). A five-channel run with a
// point unobserved (blind, zero weight, a spectrum set aside) is left out; κ_i is 0 when
// none is left, and the result nil when the colour cannot be read (fewer than three rows
// or five channels, or no noise in them).
func StepOwnNoise(d *mat.Dense, lo, hi, lo0, hi0 int, w *Weights, blind *Blind) []float64 {
	return StepOwnNoiseRows(d, rowSpan(lo, hi), lo0, hi0, w, blind)
}

// StepOwnNoiseRows is StepOwnNoise of the steps StepToNoiseRows measures: each of rows[1:]
// from the one before it in rows.
func StepOwnNoiseRows(d *mat.Dense, rows []int, lo0, hi0 int, w *Weights, blind *Blind) []float64 {
	if w == nil || len(rows) < 2 {
		return nil
	}
	c := noiseColour(d, lo0, hi0, w, blind)
	if !(c > 0) {
		return nil
	}
	out := make([]float64, len(rows)-1)
	m := len(w.Col)
	z, use := make([]float64, m), make([]bool, m)
	var buf []float64
	for k := 1; k < len(rows); k++ {
		h, i := rows[k-1], rows[k]
		if !(w.Row[i] > 0 && w.Row[h] > 0) {
			continue
		}
		a, b := d.RawRowView(h), d.RawRowView(i)
		va := 1/w.Row[i] + 1/w.Row[h]
		for j, bj := range w.Col {
			use[j] = bj > 0 && !blind.Has(i, j) && !blind.Has(h, j)
			z[j] = (b[j] - a[j]) * math.Sqrt(bj/va)
		}
		buf = fourthDiffs(z, use, buf[:0])
		if len(buf) > 0 {
			out[k-1] = madScale * medianInPlace(buf) / c
		}
	}
	return out
}

// noiseColour is c of StepOwnNoise: how much of the noise a fourth difference along the
// axis keeps, median |Δ⁴q| over median |q|, from the second differences in time q of rows
// lo … hi−1 (a row's median ratio, then the median over rows, so that rows noisier than
// others do not weigh more). 0 when none can be read.
func noiseColour(d *mat.Dense, lo, hi int, w *Weights, blind *Blind) float64 {
	m := len(w.Col)
	q, use := make([]float64, m), make([]bool, m)
	var ratios, buf, abs []float64
	for i := lo + 1; i+1 < hi; i++ {
		if !(w.Row[i-1] > 0 && w.Row[i] > 0 && w.Row[i+1] > 0) {
			continue
		}
		a, b, e := d.RawRowView(i-1), d.RawRowView(i), d.RawRowView(i+1)
		abs = abs[:0]
		for j, bj := range w.Col {
			use[j] = bj > 0 && !blind.Has(i-1, j) && !blind.Has(i, j) && !blind.Has(i+1, j)
			q[j] = (e[j] - 2*b[j] + a[j]) * math.Sqrt(bj)
			if use[j] {
				abs = append(abs, math.Abs(q[j]))
			}
		}
		buf = fourthDiffs(q, use, buf[:0])
		if len(buf) == 0 {
			continue
		}
		if s := medianInPlace(abs); s > 0 {
			ratios = append(ratios, medianInPlace(buf)/s)
		}
	}
	if len(ratios) == 0 {
		return 0
	}
	return medianInPlace(ratios)
}

// fourthDiffs appends to buf the absolute fourth differences of x along the axis over
// every run of five channels all in use.
func fourthDiffs(x []float64, use []bool, buf []float64) []float64 {
	for j := 2; j+2 < len(x); j++ {
		if !(use[j-2] && use[j-1] && use[j] && use[j+1] && use[j+2]) {
			continue
		}
		buf = append(buf, math.Abs(x[j-2]-4*x[j-1]+6*x[j]-4*x[j+1]+x[j+2]))
	}
	return buf
}
