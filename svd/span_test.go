package svd

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// A matrix whose row space lies in the span gets its exact SVD (definition:
// D = Ũ Σ (QZ)ᵀ reproduces D when D Q Qᵀ = D), checked against LAPACK's SVD
// of the same matrix; a shifted copy D − 1·gᵀ decomposed in span(V, g)
// reproduces the values of its own exact SVD for the signal and never
// exceeds them (Cauchy interlacing).
func TestDecomposeInSpan(t *testing.T) {
	rng := newRNG(2011)
	n, m := 60, 90
	d := product(randomProfiles(rng, n, 3, 0), randomSpectra(rng, m, 3))
	f, err := Decompose(d, DecomposeOptions{Method: MethodExact, MaxFactors: 3})
	if err != nil {
		t.Fatal(err)
	}
	g, err := DecomposeInSpan(d, f.V)
	if err != nil {
		t.Fatal(err)
	}
	for k := 0; k < 3; k++ {
		if math.Abs(g.S[k]-f.S[k]) > 1e-12*f.S[0] {
			t.Errorf("value %d: %g in span, %g exact", k, g.S[k], f.S[k])
		}
	}
	// Shifted and noisy: D' = D + noise − 1·rowᵀ, decomposed in span(V_r, row).
	addNoise(rng, d, 1e-3)
	full, err := Decompose(d, DecomposeOptions{Method: MethodExact, MaxFactors: 12})
	if err != nil {
		t.Fatal(err)
	}
	row := mat.Row(nil, 0, d)
	shift := mat.DenseCopyOf(d)
	for i := 0; i < n; i++ {
		r := shift.RawRowView(i)
		for j := range r {
			r[j] -= row[j]
		}
	}
	basis := mat.NewDense(m, 13, nil)
	basis.Slice(0, m, 0, 12).(*mat.Dense).Copy(full.V)
	basis.SetCol(12, row)
	got, err := DecomposeInSpan(shift, basis)
	if err != nil {
		t.Fatal(err)
	}
	want, err := Decompose(shift, DecomposeOptions{Method: MethodExact})
	if err != nil {
		t.Fatal(err)
	}
	if got.FrobeniusSq != want.FrobeniusSq {
		t.Errorf("FrobeniusSq %g, want %g", got.FrobeniusSq, want.FrobeniusSq)
	}
	for k := range got.S {
		if got.S[k] > want.S[k]*(1+1e-12) {
			t.Errorf("value %d: %g above the exact %g", k, got.S[k], want.S[k])
		}
		if k < 3 && math.Abs(got.S[k]/want.S[k]-1) > 1e-6 {
			t.Errorf("signal value %d: %g, exact %g", k, got.S[k], want.S[k])
		}
	}
	if _, err := DecomposeInSpan(shift, mat.NewDense(m+1, 2, nil)); err == nil {
		t.Error("basis of the wrong length: want an error")
	}
}
