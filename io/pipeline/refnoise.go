package pipeline

import (
	"math"
	"slices"

	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/mcr/kinetics"
	"gonum.org/v1/gonum/mat"
)

// The reference's noise in the fit's noise-alone figures (docs/measurement.md
// §2, "Lack of fit and residual to noise"). In reactions mode every
// difference spectrum of an experiment, ΔA_i = −log10(I_i/I_ref), carries the
// error of the one reference beam: a fixed pattern common to all its rows.
// The noise model counts its variance σ²_ref,j at every point, as if each
// row had its own, but the fitted profiles absorb most of a pattern that is
// the same in every row (a reaction that has run nearly to its end is
// nearly a constant column of C), so the residual holds little of it. ν, the
// χ² noise alone leaves, is therefore taken with the reference's share as
// what it is: one pattern, of which only the part outside the profiles'
// column space stays in the residual.

// referenceDOF is what ν (observed points − k(n + m − k), every point's
// whole variance counted as independent) must change by to count each
// experiment's reference noise as its common pattern: 0 unless reactions
// mode from single beams with noise weights. With C and S the fitted
// profiles and spectra, P the projector onto the column space of √A C and
// h^C_i, h^S_j the leverages of √A C and √B S, the residual of a bilinear
// fit is to first order (I − P) Ẽ (I − P_S) for the scaled noise Ẽ, and
// for each experiment
//
//	Δν = Σ_j b_j σ²_ref,j (1 − h^S_j) · ( ‖(I−P)u‖² − 2 ((I−P)u)ᵀ((I−P)s) − Σ_i a_i (1 − h^C_i) )
//
// with u = √A 1 over the experiment's rows and s the same over the rows
// averaged into its reference (none for a reference file): the last sum is
// the share ν counted as independent, the first two what the common
// pattern leaves (the cross term because a row inside the reference holds
// that pattern's own noise with the opposite sign: the first spectrum's
// difference is exactly zero). Each channel's term is scaled by the share
// of the experiment's rows observed there (blind points hold no data). A
// spectrum set aside is no observation: its row weight counts as zero.
func referenceDOF(r *Result, c, s *mat.Dense) float64 {
	if r.Mode != mcr.Reactions || !weighted(r) || !anyReferenceVariance(r) {
		return 0
	}
	rowW := r.Weights.Row
	if aside := asideRows(r); aside != nil {
		rowW = slices.Clone(rowW)
		for i, a := range aside {
			if a {
				rowW[i] = 0
			}
		}
	}
	qc := weightedBasis(c, rowW)
	qs := weightedBasis(s, r.Weights.Col)
	if qc == nil || qs == nil {
		return 0
	}
	hc, hs := leverages(qc), leverages(qs)
	total := 0.0
	for _, e := range r.Experiments {
		total += experimentReferenceDOF(r, e, rowW, qc, hc, hs)
	}
	return total
}

// ReferenceNoiseDOF is ν when the reference's noise changed it, else 0
// (summary.json's noise_degrees_of_freedom).
func (r *Result) ReferenceNoiseDOF() float64 {
	if r.ReferenceShift == 0 {
		return 0
	}
	return r.NoiseDOF
}

// referenceScale is √(plain count / ν), the factor that turns a residual
// measured per plain degree of freedom into one measured against what noise
// alone leaves with the reference's noise as one pattern; 1 when it is not.
func referenceScale(r *Result) float64 {
	plain := r.NoiseDOF - r.ReferenceShift
	if r.ReferenceShift == 0 || !(plain > 0) || !(r.NoiseDOF > 0) {
		return 1
	}
	return math.Sqrt(plain / r.NoiseDOF)
}

func anyReferenceVariance(r *Result) bool {
	for _, e := range r.Experiments {
		if e.Assembled != nil && e.Assembled.ReferenceVariance != nil {
			return true
		}
	}
	return false
}

// experimentReferenceDOF is referenceDOF's term of experiment e.
func experimentReferenceDOF(r *Result, e *Experiment, rowW []float64, qc *mat.Dense, hc, hs []float64) float64 {
	if e.Assembled == nil || e.Assembled.ReferenceVariance == nil {
		return 0
	}
	n, _ := r.D.Dims()
	u, s := make([]float64, n), make([]float64, n)
	counted := 0.0
	for i := e.FirstRow; i < e.FirstRow+e.Rows; i++ {
		a := rowW[i]
		u[i] = math.Sqrt(a)
		counted += a * (1 - hc[i])
	}
	for _, l := range e.RefRows {
		s[e.FirstRow+l] = u[e.FirstRow+l]
	}
	mu, ms := kinetics.OffSpan(qc, u), kinetics.OffSpan(qc, s)
	left := dot(mu, mu) - 2*dot(mu, ms)
	lit := litShare(r, e)
	sum := 0.0
	for j, v := range e.Assembled.ReferenceVariance {
		if !(v > 0) || math.IsInf(v, 0) {
			continue // no reference beam observed: the channel is blind
		}
		sum += r.Weights.Col[j] * v * (1 - hs[j]) * lit[j]
	}
	return sum * (left - counted)
}

// weightedBasis returns an orthonormal basis of the column space of
// diag(√w) x, from its thin SVD: directions whose singular value is below
// 1e-10 of the largest are no part of it (a component the fit left empty
// spans nothing). nil when x has none.
func weightedBasis(x *mat.Dense, w []float64) *mat.Dense {
	r, k := x.Dims()
	y := mat.NewDense(r, k, nil)
	for i := 0; i < r; i++ {
		f := math.Sqrt(w[i])
		for l := 0; l < k; l++ {
			y.Set(i, l, f*x.At(i, l))
		}
	}
	var svd mat.SVD
	if !svd.Factorize(y, mat.SVDThin) {
		return nil
	}
	sv := svd.Values(nil)
	var u mat.Dense
	svd.UTo(&u)
	keep := 0
	for _, v := range sv {
		if v > 1e-10*sv[0] {
			keep++
		}
	}
	if keep == 0 {
		return nil
	}
	return mat.DenseCopyOf(u.Slice(0, r, 0, keep))
}

// leverages are the squared row norms of an orthonormal basis q: the
// diagonal of its projector.
func leverages(q *mat.Dense) []float64 {
	r, _ := q.Dims()
	h := make([]float64, r)
	for i := range h {
		row := q.RawRowView(i)
		h[i] = dot(row, row)
	}
	return h
}

func dot(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}

// litShare is, per channel, the share of experiment e's rows kept that are
// not blind there.
func litShare(r *Result, e *Experiment) []float64 {
	_, m := r.D.Dims()
	blind := make([]int, m)
	rows := e.Rows
	for i := e.FirstRow; i < e.FirstRow+e.Rows; i++ {
		if setAside(r.SetAside, i) {
			rows--
			continue
		}
		if r.Blind != nil && r.Blind.Count > 0 {
			for _, j := range r.Blind.Rows[i] {
				blind[j]++
			}
		}
	}
	out := make([]float64, m)
	for j := range out {
		if rows > 0 {
			out[j] = float64(rows-blind[j]) / float64(rows)
		}
	}
	return out
}

// referenceErrors are the experiments' reference errors as common error
// patterns of the data fit's rows (keptRows), whose share of the rate
// constants' covariance kinetics.FitData adds (docs/measurement.md §2, "The
// reference's noise in the rate constants"): in reactions mode from single
// beams every row of an experiment holds its reference's error, σ²_ref,j
// per channel, and the rows averaged into the reference hold it with their
// own. nil in species mode (a blank's pattern lies in the span of closed
// profiles) or without the reference's variance.
func referenceErrors(r *Result) []kinetics.CommonError {
	if r.Mode != mcr.Reactions || !anyReferenceVariance(r) {
		return nil
	}
	at := make(map[int]int) // row of r.D → row of the data fit
	for a, i := range keptRows(r) {
		at[i] = a
	}
	var out []kinetics.CommonError
	for _, e := range r.Experiments {
		if e.Assembled == nil || e.Assembled.ReferenceVariance == nil {
			continue
		}
		ce := kinetics.CommonError{Variance: e.Assembled.ReferenceVariance}
		for i := e.FirstRow; i < e.FirstRow+e.Rows; i++ {
			if a, ok := at[i]; ok {
				ce.Rows = append(ce.Rows, a)
			}
		}
		for _, l := range e.RefRows {
			if a, ok := at[e.FirstRow+l]; ok {
				ce.Within = append(ce.Within, a)
			}
		}
		out = append(out, ce)
	}
	return out
}
