package kinetics

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// referenceSeries is A → B → C seen as difference spectra against a
// reference (reactions mode): the extents ξ(t) times two step spectra, with
// each spectrum's own error x_ij (sd σ_j, larger in the middle of the axis
// as under a solvent band) less the reference's, the mean of x over the
// rows ref: ΔA_i = ξ_i Sᵀ + x_i − mean_{l∈ref} x_l. The reaction is still
// running at the last spectrum, so the reference's pattern is not taken in
// by the fitted spectra and moves the rate constants.
func referenceSeries(rng *rand.Rand, s *Scheme, times []float64, t0 float64, ref []int, scale float64) (d *mat.Dense, sd []float64) {
	const m = 30
	n := len(times)
	sim, err := s.Simulate([]float64{0.004, 0.0012}, []float64{1, 0, 0}, times, t0)
	if err != nil {
		panic(err)
	}
	sd = make([]float64, m)
	d = mat.NewDense(n, m, nil)
	for j := 0; j < m; j++ {
		u := float64(j) / (m - 1)
		s1 := 0.3*math.Exp(-0.5*sq((u-0.25)/0.07)) - 0.2*math.Exp(-0.5*sq((u-0.6)/0.08))
		s2 := 0.25*math.Exp(-0.5*sq((u-0.75)/0.06)) - 0.15*math.Exp(-0.5*sq((u-0.45)/0.05))
		sd[j] = scale * (1 + 3*math.Exp(-0.5*sq((u-0.5)/0.15)))
		x := make([]float64, n)
		mean := 0.0
		for i := range x {
			x[i] = sd[j] * rng.NormFloat64()
		}
		for _, l := range ref {
			mean += x[l] / float64(len(ref))
		}
		for i := 0; i < n; i++ {
			d.Set(i, j, sim.Extents.At(i, 0)*s1+sim.Extents.At(i, 1)*s2+x[i]-mean)
		}
	}
	return d, sd
}

// TestCommonErrorIsLinearPropagation checks the reference's share of the
// rate constants' standard errors against its definition, linear error
// propagation (the delta method: var k = Σ (∂k/∂z)² var z over independent
// error sources z; Seber & Wild, Nonlinear Regression, 1989, §2.1, from
// memory), with ∂k/∂z taken by refitting perturbed data, not from the
// Jacobian the fit uses. Per channel j the sources are each row's own error
// x_ij; a row's difference holds x_ij − mean_{l∈R} x_lj, so the pattern's
// share (the variance beyond that of independent rows, σ²_ref,j = σ²_j/|R|)
// is σ²_ref,j (G_j² − 2 G_j H_j), G_j = ∂k/∂ε for the perturbation ε on
// every row of channel j and H_j the same on the rows R alone. Rows R hold
// two spectra after the start, so the cross term counts; row and column
// weights as the pipeline's.
func TestCommonErrorIsLinearPropagation(t *testing.T) {
	s := mustParse(t, "A -> B -> C")
	times := linspace(0, 1200, 40)
	ref := []int{0, 1, 2}
	d, sd := referenceSeries(rand.New(rand.NewPCG(3, 9)), s, times, 20, ref, 1e-5)
	n, m := d.Dims()
	rowW, colW := make([]float64, n), make([]float64, m)
	variance := make([]float64, m)
	for i := range rowW {
		rowW[i] = 1 + 0.5*math.Sin(float64(i))
	}
	for j := range colW {
		colW[j] = 1 / sq(sd[j])
		variance[j] = sq(sd[j]) / float64(len(ref))
	}
	all := make([]int, n)
	for i := range all {
		all[i] = i
	}
	opt := FitOptions{T0: 20, UseExtents: true, InitialK: []float64{0.004, 0.0012}, RowWeights: rowW, ColWeights: colW}
	base, _, err := FitData(s, times, d, opt)
	if err != nil {
		t.Fatal(err)
	}
	with := opt
	with.Common = []CommonError{{Rows: all, Within: ref, Variance: variance}}
	fit, _, err := FitData(s, times, d, with)
	if err != nil {
		t.Fatal(err)
	}
	// ∂k/∂ε by central differences of refits started at the fit.
	const eps = 1e-6
	refit := func(j int, rows []int, e float64) []float64 {
		p := mat.DenseCopyOf(d)
		for _, i := range rows {
			p.Set(i, j, p.At(i, j)+e)
		}
		o := opt
		o.InitialK = base.K
		f, _, err := FitData(s, times, p, o)
		if err != nil {
			t.Fatal(err)
		}
		return f.K
	}
	want := make([]float64, 2)
	for j := 0; j < m; j++ {
		gu, gd := refit(j, all, eps), refit(j, all, -eps)
		hu, hd := refit(j, ref, eps), refit(j, ref, -eps)
		for a := range want {
			g, h := (gu[a]-gd[a])/(2*eps), (hu[a]-hd[a])/(2*eps)
			want[a] += variance[j] * (g*g - 2*g*h)
		}
	}
	for a := range want {
		got := fit.CommonKStdErr[a]
		t.Logf("k%d: reference's share %.4g (refits %.4g), other errors %.4g, combined %.4g", a+1, got, math.Sqrt(want[a]), base.KStdErr[a], fit.KStdErr[a])
		if !(want[a] > 0) || math.Abs(got-math.Sqrt(want[a])) > 0.02*math.Sqrt(want[a]) {
			t.Errorf("k%d: reference's share of the standard error %.4g, linear propagation by refits %.4g", a+1, got, math.Sqrt(want[a]))
		}
		if c := math.Hypot(base.KStdErr[a], got); math.Abs(fit.KStdErr[a]-c) > 1e-12*c {
			t.Errorf("k%d: standard error %.6g, not the other errors %.6g and the reference's %.6g combined in quadrature", a+1, fit.KStdErr[a], base.KStdErr[a], got)
		}
	}
}

// TestReferenceNoiseInStandardErrors: a standard error is by definition the
// spread of the estimate over repeated experiments. Over 300 draws of
// difference spectra against the first spectrum (each row's own error
// minus the first row's, the trade's reactions mode), the spread of each
// fitted rate constant over its mean reported standard error must lie
// within 0.85–1.18 (the ratio's own relative sd is about 1/√(2·300) =
// 0.04). Without the reference's pattern in the errors it is 1.40 and 1.25.
func TestReferenceNoiseInStandardErrors(t *testing.T) {
	s := mustParse(t, "A -> B -> C")
	times := linspace(0, 1200, 40)
	rng := rand.New(rand.NewPCG(21, 4))
	const draws = 300
	var ks, ses [2][]float64
	for r := 0; r < draws; r++ {
		d, sd := referenceSeries(rng, s, times, 20, []int{0}, 2e-3)
		n, m := d.Dims()
		colW, variance := make([]float64, m), make([]float64, m)
		for j := range colW {
			colW[j] = 1 / (2 * sq(sd[j])) // a difference's variance: its own and the reference's
			variance[j] = sq(sd[j])
		}
		all := make([]int, n)
		for i := range all {
			all[i] = i
		}
		opt := FitOptions{T0: 20, UseExtents: true, InitialK: []float64{0.004, 0.0012}, ColWeights: colW,
			Common: []CommonError{{Rows: all, Within: []int{0}, Variance: variance}}}
		fit, _, err := FitData(s, times, d, opt)
		if err != nil {
			t.Fatal(err)
		}
		for a := range ks {
			ks[a] = append(ks[a], fit.K[a])
			ses[a] = append(ses[a], fit.KStdErr[a])
		}
	}
	for a := range ks {
		meanK, meanSE := 0.0, 0.0
		for i := range ks[a] {
			meanK += ks[a][i] / draws
			meanSE += ses[a][i] / draws
		}
		v := 0.0
		for _, k := range ks[a] {
			v += sq(k-meanK) / (draws - 1)
		}
		ratio := math.Sqrt(v) / meanSE
		t.Logf("k%d: mean %.5g, spread %.3g, mean SE %.3g, ratio %.3f", a+1, meanK, math.Sqrt(v), meanSE, ratio)
		if ratio < 0.85 || ratio > 1.18 {
			t.Errorf("k%d: spread over mean standard error %.3f, want 0.85–1.18", a+1, ratio)
		}
	}
}
