package mcr

import (
	"math"
	"math/rand/v2"
	"testing"
)

// isotonicMinMax is the closed form of least-squares non-decreasing
// regression, y_i = max_{j≤i} min_{l≥i} mean(x_j..x_l) (Barlow, Bartholomew,
// Bremner & Brunk, Statistical Inference under Order Restrictions, 1972,
// thm. 1.4). It shares no code with pool-adjacent-violators.
func isotonicMinMax(x []float64) []float64 {
	n := len(x)
	y := make([]float64, n)
	for i := 0; i < n; i++ {
		best := math.Inf(-1)
		for j := 0; j <= i; j++ {
			inner := math.Inf(1)
			for l := i; l < n; l++ {
				s := 0.0
				for q := j; q <= l; q++ {
					s += x[q]
				}
				inner = math.Min(inner, s/float64(l-j+1))
			}
			best = math.Max(best, inner)
		}
		y[i] = best
	}
	return y
}

// unimodalBrute tries every split of x into a non-decreasing head and a
// non-increasing tail (each by the min–max formula): by definition every
// unimodal sequence is such a concatenation.
func unimodalBrute(x []float64) float64 {
	n := len(x)
	best := math.Inf(1)
	for p := 0; p <= n; p++ {
		head := isotonicMinMax(x[:p])
		rev := make([]float64, n-p)
		for i := range rev {
			rev[i] = x[n-1-i]
		}
		tail := isotonicMinMax(rev)
		e := sqErr(head, x[:p]) + sqErr(tail, rev)
		best = math.Min(best, e)
	}
	return best
}

func TestUnimodalAgainstMinMaxSplits(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 4))
	for trial := 0; trial < 300; trial++ {
		n := 1 + trial%11
		x := make([]float64, n)
		for i := range x {
			// Rounded values make ties (pooled blocks, equal peaks) common.
			x[i] = math.Round(4*rng.NormFloat64()) / 2
		}
		fit := Unimodal(x)
		if len(fit) != n {
			t.Fatalf("%v: fit has %d points", x, len(fit))
		}
		if !isUnimodal(fit) {
			t.Fatalf("%v: fit %v is not unimodal", x, fit)
		}
		got, want := sqErr(fit, x), unimodalBrute(x)
		if math.Abs(got-want) > 1e-9*math.Max(1, want) {
			t.Errorf("%v: error %.12g, best split by the min–max formula %.12g", x, got, want)
		}
		if n >= 1 {
			pre := prefixIsotonicErrors(x, false)
			for p := 0; p <= n; p++ {
				if e := sqErr(isotonicMinMax(x[:p]), x[:p]); math.Abs(pre[p]-e) > 1e-9*math.Max(1, e) {
					t.Fatalf("%v: prefix %d error %g, min–max formula %g", x, p, pre[p], e)
				}
			}
		}
	}
}

// A unimodal input is its own fit; the tolerance keeps small departures.
func TestUnimodalToleranceAndFixedPoint(t *testing.T) {
	x := []float64{0, 1, 3, 3, 2, 0.5, 0}
	if got := Unimodal(x); sqErr(got, x) != 0 {
		t.Errorf("unimodal input changed: %v", got)
	}
	// A shoulder dip of 0.05 on a peak of 3: 0.02 tolerance flattens it,
	// 0.05 keeps it (departure 0.025 ≤ 0.05·3 = 0.15).
	y := []float64{0, 1, 3, 2.95, 3, 1, 0}
	if got := UnimodalTolerance(y, 0); got[3] == 2.95 {
		t.Errorf("tolerance 0 left the dip: %v", got)
	}
	if got := UnimodalTolerance(y, 0.05); got[3] != 2.95 {
		t.Errorf("tolerance 0.05 flattened a dip of 0.05: %v", got)
	}
}

func BenchmarkUnimodal2000(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 1))
	x := make([]float64, 2000)
	for i := range x {
		u := float64(i-900) / 300
		x[i] = math.Exp(-u*u) + 0.05*rng.NormFloat64()
	}
	for b.Loop() {
		Unimodal(x)
	}
}
