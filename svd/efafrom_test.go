package svd

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// EFAFrom with the full exact factors is the exact sweep of EFA: the same
// block singular values (definition, Gampp et al. 1985), and InitialProfiles
// from its windows equals the one that decomposes the matrix itself.
func TestEFAFromExactFactors(t *testing.T) {
	rng := newRNG(2004)
	n, m := 40, 70
	d := noisyBilinear(rng, n, m, 3, 1e-3)
	want, err := EFA(d, 4)
	if err != nil {
		t.Fatal(err)
	}
	f, err := Decompose(d, DecomposeOptions{Method: MethodExact})
	if err != nil {
		t.Fatal(err)
	}
	got, err := EFAFrom(d, f, 4)
	if err != nil {
		t.Fatal(err)
	}
	if !got.Exact || got.Columns != want.Columns {
		t.Fatalf("exact %v columns %d, EFA: exact %v columns %d", got.Exact, got.Columns, want.Exact, want.Columns)
	}
	for i := 0; i < n; i++ {
		for k := 0; k < 4; k++ {
			if a, b := got.Forward.At(i, k), want.Forward.At(i, k); math.Abs(a-b) > 1e-12 {
				t.Fatalf("forward %d,%d: %g, EFA %g", i, k, a, b)
			}
			if a, b := got.Backward.At(i, k), want.Backward.At(i, k); math.Abs(a-b) > 1e-12 {
				t.Fatalf("backward %d,%d: %g, EFA %g", i, k, a, b)
			}
		}
	}
	// InitialProfiles from the sweep's factors equals the one that
	// decomposes d itself.
	fresh := *want.Windows(3, 1e-3)
	fresh.fac = nil // decompose d afresh, as before the factors were handed on
	pw := fresh.InitialProfiles(d, 3)
	pg := got.Windows(3, 1e-3).InitialProfiles(d, 3)
	if pw == nil || pg == nil {
		t.Fatal("no initial profiles")
	}
	for i := 0; i < n; i++ {
		for j := 0; j < 3; j++ {
			if math.Abs(pw.At(i, j)-pg.At(i, j)) > 1e-9 {
				t.Fatalf("profile %d,%d: %g from the handed-on factors, %g decomposing afresh", i, j, pg.At(i, j), pw.At(i, j))
			}
		}
	}
}

// Projected sweep from truncated randomized factors: signal values agree
// with the block SVDs, and no value exceeds the exact one (Cauchy
// interlacing: a projection cannot raise singular values).
func TestEFAFromTruncatedFactors(t *testing.T) {
	rng := newRNG(2011)
	n, m := 300, 600
	d := noisyBilinear(rng, n, m, 3, 1e-3)
	f, err := Decompose(d, DecomposeOptions{Method: MethodRandomized, MaxFactors: 24})
	if err != nil {
		t.Fatal(err)
	}
	e, err := EFAFrom(d, f, 5)
	if err != nil {
		t.Fatal(err)
	}
	if e.Exact || e.Columns != 24 {
		t.Fatalf("exact %v columns %d, want the projection on 24", e.Exact, e.Columns)
	}
	for _, i := range []int{40, 150, 299} {
		fw := singularValues(t, d.Slice(0, i+1, 0, m))
		edge := 1e-3 * (math.Sqrt(float64(i+1)) + math.Sqrt(float64(m))) // Marchenko–Pastur edge
		for k := 0; k < 5; k++ {
			got := math.Pow(10, e.Forward.At(i, k))
			if fw[k] > 3*edge && !(math.Abs(got/fw[k]-1) <= 1e-3) {
				t.Errorf("row %d signal value %d: %g, block SVD %g", i, k, got, fw[k])
			}
			if got > fw[k]*(1+1e-9) {
				t.Errorf("row %d value %d: %g above the exact %g", i, k, got, fw[k])
			}
		}
	}
	if _, err := EFAFrom(d, f, 30); err == nil {
		t.Error("30 curves from 24 factors: want an error")
	}
	if _, err := EFAFrom(mat.DenseCopyOf(d.Slice(0, 100, 0, m)), f, 3); err == nil {
		t.Error("factors of another matrix: want an error")
	}
}

// EFAOfFactors needs only the factors: the block singular values of D are
// those of its scores U S (D_i = (U S)_i Vᵀ with V orthonormal; definition,
// Gampp et al. 1985), so its curves and FactorProfiles equal EFAFrom's and
// InitialProfiles' on the same factors, bit for bit, and it estimates no
// noise level (Sigma 0: the caller gives it, 1 for noise-scaled data).
func TestEFAOfFactorsEqualsEFAFrom(t *testing.T) {
	rng := newRNG(1991)
	n, m := 40, 70
	d := noisyBilinear(rng, n, m, 3, 1e-3)
	f, err := Decompose(d, DecomposeOptions{Method: MethodExact})
	if err != nil {
		t.Fatal(err)
	}
	want, err := EFAFrom(d, f, 4)
	if err != nil {
		t.Fatal(err)
	}
	got, err := EFAOfFactors(f, 4)
	if err != nil {
		t.Fatal(err)
	}
	if got.Sigma != 0 || got.Exact != want.Exact || got.Columns != want.Columns {
		t.Fatalf("sigma %g exact %v columns %d; EFAFrom: exact %v columns %d", got.Sigma, got.Exact, got.Columns, want.Exact, want.Columns)
	}
	if !mat.Equal(got.Forward, want.Forward) || !mat.Equal(got.Backward, want.Backward) {
		t.Fatal("curves differ from EFAFrom's on the same factors")
	}
	pw := want.Windows(3, 1e-3).InitialProfiles(d, 3)
	pg := got.Windows(3, 1e-3).FactorProfiles(3)
	if pw == nil || pg == nil || !mat.Equal(pw, pg) {
		t.Fatal("FactorProfiles differs from InitialProfiles on the same factors")
	}
	if _, err := EFAOfFactors(nil, 3); err == nil {
		t.Error("no factors: no error")
	}
}
