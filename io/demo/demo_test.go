package demo

import (
	"math"
	"testing"
)

// Bateman (1910) for A → B → C with [A]₀ = 1: b peaks at
// t* = ln(k₂/k₁)/(k₂ − k₁) with b(t*) = (k₁/k₂)^{k₂/(k₂−k₁)}; and for k₁ = k₂
// the limit b = k t e^{−kt} peaks at t = 1/k with b = 1/e (analytic).
func TestBateman(t *testing.T) {
	k1, k2 := 4e-3, 1.5e-3
	ts := math.Log(k2/k1) / (k2 - k1)
	_, b, _ := Bateman(k1, k2, ts)
	if want := math.Pow(k1/k2, k2/(k2-k1)); math.Abs(b-want) > 1e-12 {
		t.Errorf("b(t*) = %v, want %v", b, want)
	}
	_, b2, _ := Bateman(2e-3, 2e-3, 500)
	if math.Abs(b2-1/math.E) > 1e-12 {
		t.Errorf("k1 = k2: b(1/k) = %v, want 1/e", b2)
	}
	for _, tm := range []float64{0, 10, 300, 5000} {
		a, b, c := Bateman(k1, k2, tm)
		if math.Abs(a+b+c-1) > 1e-12 || a < 0 || b < 0 || c < -1e-12 {
			t.Errorf("t=%g: a,b,c = %v %v %v", tm, a, b, c)
		}
	}
}

// The demo's single beams obey the definition of absorbance: with the
// noise removed, −log10(I/I_blank) is the bilinear sum C Sᵀ (Beer–Lambert).
func TestDemoIsBeerLambert(t *testing.T) {
	d := Make(1)
	n, m := d.Beams.Dims()
	if n != len(d.Times) || m != len(d.Axis) {
		t.Fatalf("beams %d×%d for %d times and %d points", n, m, len(d.Times), len(d.Axis))
	}
	// Average absorbance residual against the truth must be at the noise
	// level: σ_A ≈ σ_rel/ln 10 for sample and blank (propagation of error).
	var ss float64
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			a := math.Log10(d.Blank[j] / d.Beams.At(i, j))
			model := 0.0
			for k := 0; k < 3; k++ {
				model += d.Profiles.At(i, k) * d.Spectra.At(j, k)
			}
			ss += (a - model) * (a - model)
		}
	}
	rms := math.Sqrt(ss / float64(n*m))
	want := d.NoiseRel / math.Ln10 * math.Sqrt2
	if rms < 0.8*want || rms > 1.2*want {
		t.Errorf("absorbance noise %.3g, expected about %.3g", rms, want)
	}
	// Same seed, same data (determinism).
	if e := Make(1); e.Beams.At(7, 11) != d.Beams.At(7, 11) {
		t.Error("Make is not deterministic")
	}
}
