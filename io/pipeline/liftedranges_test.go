package pipeline

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// liftedSettings resolves s's single beams with a quadratic baseline and
// the uniqueness ranges on (the constraint checks off: they are not what
// these tests look at).
func liftedSettings(t *testing.T, s *synth) *Settings {
	t.Helper()
	series, blank := s.write(t)
	st := NewSettings()
	st.Data, st.Kind, st.Blanks, st.Pre = []string{series}, "single-beam", []string{blank}, 3
	st.Baseline, st.Checks = "poly:2", "off"
	return st
}

// liftedData: the analytic A → B → C solution of makeBateman measured
// with noise constant in counts and a baseline that drifts by an offset, a
// slope and a curvature per spectrum.
func liftedData(t *testing.T) *synth {
	s := makeBateman(t, 6e-3, 2e-3, 0, 1, 3)
	n := len(s.times)
	lo, hi := s.axis[len(s.axis)-1], s.axis[0]
	countsNoise(s, 20, 5, func(i, j int) float64 {
		x := 2*(s.axis[j]-lo)/(hi-lo) - 1
		f := float64(i) / float64(n-1)
		return 0.03*f + 0.02*math.Sin(3*f)*x + 0.01*f*f*x*x
	})
	return s
}

func liftWarning(r *Result) string {
	for _, w := range r.Warnings {
		if strings.HasPrefix(w, "spectra poorly determined with a fitted baseline") {
			return w
		}
	}
	return ""
}

// TestBaselineRangesWarnOfTheLift: three species of the analytic A → B → C
// solution (Bateman 1910) with closure and a drifting baseline fitted as
// poly:2. A polynomial added to one species' spectrum and taken off the
// baseline, s_k + Pβ with B − c_k βᵀ, gives the same model exactly
// (algebra: C Sᵀ + B Pᵀ is unchanged), so a rotation whose spectra dip
// below zero is feasible once lifted. The test builds one such
// alternative from the resolution (profiles of C partly moved into B's:
// T row-stochastic, so C T ≥ 0 and C T 1 = 1; spectra S T⁻ᵀ lifted by
// their minima) and checks that it fits the same and keeps every
// constraint while its share lies outside the reported uniqueness range:
// the ranges leave it out, and the run must say so.
func TestBaselineRangesWarnOfTheLift(t *testing.T) {
	s := liftedData(t)
	n := len(s.times)
	r, err := Run(liftedSettings(t, s), nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.BaselineShapes == nil || r.Components != 3 || r.Constraints == nil || r.Constraints.Bands == nil {
		t.Fatalf("want 3 species with a fitted baseline and uniqueness ranges; got %d components, baseline %v", r.Components, r.BaselineShapes != nil)
	}
	c, sp := r.ALS.C, r.ALS.S
	m, _ := sp.Dims()
	const eps = 0.3
	tr := mat.NewDense(3, 3, []float64{1, 0, 0, 0, 1, 0, 0, eps, 1 - eps})
	var c2, tinv, s2 mat.Dense
	c2.Mul(c, tr)
	if err := tinv.Inverse(tr); err != nil {
		t.Fatal(err)
	}
	s2.Mul(sp, tinv.T()) // S T⁻ᵀ
	// The share the ranges measure is that of the rotated spectrum before
	// its lift (the lift is the split's, not the rotation's).
	var fit mat.Dense
	fit.Mul(c, sp.T())
	share := math.Sqrt(colNormSq(&c2, 2)*colNormSq(&s2, 2)) / mat.Norm(&fit, 2)
	p := r.BaselineShapes
	b2 := mat.DenseCopyOf(r.BaselineProfiles)
	p0 := p.At(0, 0) // Legendre P₀: a constant column
	for k := 0; k < 3; k++ {
		low := math.Inf(1)
		for i := 0; i < m; i++ {
			low = math.Min(low, s2.At(i, k))
		}
		if low >= 0 {
			continue
		}
		delta := -low / p0 // s_k + P₀·delta, B₀ − c_k·delta
		for i := 0; i < m; i++ {
			s2.Set(i, k, s2.At(i, k)+p.At(i, 0)*delta)
		}
		for i := 0; i < n; i++ {
			b2.Set(i, 0, b2.At(i, 0)-c2.At(i, k)*delta)
		}
	}
	var before, after, bp mat.Dense
	before.Mul(c, sp.T())
	bp.Mul(r.BaselineProfiles, p.T())
	before.Add(&before, &bp)
	after.Mul(&c2, s2.T())
	bp.Mul(b2, p.T())
	after.Add(&after, &bp)
	var diff mat.Dense
	diff.Sub(&after, &before)
	// The same model to rounding (algebra above).
	if d := mat.Norm(&diff, 2) / mat.Norm(&before, 2); d > 1e-12 {
		t.Fatalf("the lifted rotation changes the model by %.3g of it; the identity says 0", d)
	}
	for i := 0; i < n; i++ {
		sum := 0.0
		for k := 0; k < 3; k++ {
			if c2.At(i, k) < 0 {
				t.Fatalf("profile %d negative at row %d", k+1, i)
			}
			sum += c2.At(i, k)
		}
		// Closure Σ c_k = 1 (common practice), kept by a row-stochastic T.
		if math.Abs(sum-1) > 1e-6 {
			t.Fatalf("row %d sums to %.6f; closure wants 1", i, sum)
		}
	}
	band := r.Constraints.Bands.Bands[2]
	t.Logf("share of species 3: alternative %.4f, reported range %.4f – %.4f", share, band.Min, band.Max)
	if share >= band.Min && share <= band.Max {
		t.Fatalf("the alternative's share %.4f lies inside the reported range %.4f – %.4f: this data does not show the lift", share, band.Min, band.Max)
	}
	w := liftWarning(r)
	if w == "" {
		t.Fatalf("no warning that the spectra are determined only up to a polynomial; warnings: %q", r.Warnings)
	}
	// The warning's range for species 3 must hold the alternative.
	if lb := r.Constraints.Lifted.Bands[2]; share < lb.Min || share > lb.Max || !strings.Contains(w, "species_3") {
		t.Fatalf("the alternative share %.4f of species 3 is outside the warned range %.4f – %.4f or not named: %s", share, lb.Min, lb.Max, w)
	}
	t.Log(w)
}

// TestBaselineRangesZeroRegionsBoundTheLift: the data of
// TestBaselineRangesWarnOfTheLift with a region where each species does not
// absorb (over 4 standard deviations from each of its Gaussian bands, where
// it is below e⁻⁸ of its height). A lift that leaves a spectrum zero over
// more points than the baseline has terms is zero everywhere (a polynomial
// of order 2 has at most 2 roots), so non-negativity of the spectra bounds
// the rotation again: the ranges leave nothing out and the run must not
// warn.
func TestBaselineRangesZeroRegionsBoundTheLift(t *testing.T) {
	s := liftedData(t)
	st := liftedSettings(t, s)
	st.ZeroRegions = []string{"1=1250:1360", "2=1250:1320", "3=1670:1800"}
	r, err := Run(st, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.BaselineShapes == nil || r.Constraints == nil || r.Constraints.Bands == nil {
		t.Fatal("want a fitted baseline and uniqueness ranges")
	}
	if w := liftWarning(r); w != "" {
		t.Errorf("warned although every spectrum has a region without absorbance: %s", w)
	}
	if r.Constraints.Lifted != nil {
		t.Error("searched the ranges without non-negative spectra although no spectrum can be lifted")
	}
}

func colNormSq(a mat.Matrix, j int) float64 {
	r, _ := a.Dims()
	v := 0.0
	for i := 0; i < r; i++ {
		v += a.At(i, j) * a.At(i, j)
	}
	return v
}
