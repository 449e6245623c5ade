package spectra

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// radixOrder returns the order statistics a sort gives (the k-th smallest
// value is the sorted sample's k-th entry: the definition, common practice),
// on samples shaped like the noise model's (absolute normal differences,
// rounded ones with many ties and zeros, a few huge values, +Inf, subnormals,
// values spread over many binades) and at every rank near the middle and
// the ends; and refuses, leaving the sample as it was, what its bit order
// does not sort (a negative value, −0, NaN).
func TestRadixOrderMatchesSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	shapes := map[string]func(i int) float64{
		"abs normal":     func(int) float64 { return math.Abs(rng.NormFloat64()) * 3 },
		"rounded":        func(int) float64 { return 0.5 * math.Round(math.Abs(rng.NormFloat64())*2) },
		"all zero":       func(int) float64 { return 0 },
		"two values":     func(int) float64 { return float64(rng.IntN(2)) * 1e-3 },
		"wide":           func(int) float64 { return math.Exp(40 * rng.NormFloat64()) },
		"one binade":     func(int) float64 { return 1 + rng.Float64() },
		"subnormal":      func(int) float64 { return math.SmallestNonzeroFloat64 * float64(rng.IntN(50)) },
		"inf and spikes": func(i int) float64 { return [4]float64{math.Inf(1), 1e300, 1, 2}[i%4] },
		"near ties": func(int) float64 {
			return math.Float64frombits(math.Float64bits(1.5) + uint64(rng.IntN(5)))
		},
	}
	for name, f := range shapes {
		for _, n := range []int{1, 2, 3, 64, 65, 256, 257, 1998, 4001, 40001} {
			v := make([]float64, n)
			for i := range v {
				v[i] = f(i)
			}
			s := slices.Clone(v)
			slices.Sort(s)
			for _, k := range []int{0, 1, n / 2, n/2 - 1, n/2 + 1, n - 2, n - 1} {
				if k < 0 || k >= n {
					continue
				}
				c := slices.Clone(v)
				got, prev, ok := radixOrder(c, k, k > 0)
				if !ok {
					t.Fatalf("%s n=%d: refused a sample of values ≥ 0", name, n)
				}
				if math.Float64bits(got) != math.Float64bits(s[k]) {
					t.Fatalf("%s n=%d k=%d: %v, sorted %v", name, n, k, got, s[k])
				}
				if k > 0 && math.Float64bits(prev) != math.Float64bits(s[k-1]) {
					t.Fatalf("%s n=%d k=%d: (k−1)-th %v, sorted %v", name, n, k, prev, s[k-1])
				}
			}
		}
	}
	for _, bad := range []float64{-1, math.Copysign(0, -1), math.NaN(), math.Inf(-1)} {
		v := []float64{3, 1, bad, 2}
		c := slices.Clone(v)
		if _, _, ok := radixOrder(c, 1, true); ok || !slices.Equal(c[:2], v[:2]) {
			t.Errorf("sample with %v: ok %v, sample %v", bad, ok, c)
		}
	}
}
