package pipeline

import (
	"math"
	"runtime"
	"testing"
)

// The large-data route (mapped CSV, parallel assembly, randomized SVD,
// difference factors in span, EFA from the factors, compressed ALS) gives
// bit-identical results whatever GOMAXPROCS (the project's determinism
// rule), and recovers the invented spectra (cosine to the truth of
// largeTruth, the definition of the data).
func TestLargeRouteDeterministicAcrossThreads(t *testing.T) {
	const n, m = 600, 1000
	if !largeData(n, m) {
		t.Fatalf("%d × %d should take the large-data route", n, m)
	}
	series, blank := writeLarge(t, t.TempDir(), n, m, 3)
	_, spec, _ := largeTruth(n, m, 3)
	prev := runtime.GOMAXPROCS(0)
	defer runtime.GOMAXPROCS(prev)
	var ref *Result
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		s := NewSettings()
		s.Data, s.Kind, s.Blanks = []string{series}, "single-beam", []string{blank}
		r, err := Run(s, nil)
		if err != nil {
			t.Fatal(err)
		}
		if !r.Compressed || r.Components != 3 {
			t.Fatalf("GOMAXPROCS %d: compressed %v, %d components; want the compressed route and 3", procs, r.Compressed, r.Components)
		}
		if c := worstCosine(r.ALS.S, spec); c < 0.999 {
			t.Errorf("GOMAXPROCS %d: worst spectrum cosine to the truth %.5f", procs, c)
		}
		if ref == nil {
			ref = r
			continue
		}
		if math.Float64bits(r.LackOfFit) != math.Float64bits(ref.LackOfFit) || r.ALS.Iterations != ref.ALS.Iterations {
			t.Errorf("lack of fit %v after %d iterations with GOMAXPROCS 2, %v after %d with 1", r.LackOfFit, r.ALS.Iterations, ref.LackOfFit, ref.ALS.Iterations)
		}
		for i := 0; i < m; i++ {
			for j := 0; j < 3; j++ {
				if a, b := r.ALS.S.At(i, j), ref.ALS.S.At(i, j); math.Float64bits(a) != math.Float64bits(b) {
					t.Fatalf("spectrum %d at %d: %v with GOMAXPROCS 2, %v with 1", j+1, i, a, b)
				}
			}
		}
		for i := 0; i < n; i++ {
			for j := 0; j < 3; j++ {
				if a, b := r.ALS.C.At(i, j), ref.ALS.C.At(i, j); math.Float64bits(a) != math.Float64bits(b) {
					t.Fatalf("profile %d at %d: %v with GOMAXPROCS 2, %v with 1", j+1, i, a, b)
				}
			}
		}
	}
}
