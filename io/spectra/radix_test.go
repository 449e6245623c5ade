package spectra

import (
	"maps"
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

// middlePairNear returns the order statistics a sort gives (the definition,
// as above) whatever its guess: near the median (the window holds the
// middle ranks), off by more than the window, at an edge of the middle
// ranks (the window starting at rank h of an even sample, where rank h − 1
// lies below it), past the sample, zero, NaN or infinite; on samples
// whose window holds more values than it gathers (ties); and on samples
// radixOrder refuses (a NaN, −0, a negative value), where it must give
// middlePair's answer.
func TestMiddlePairNearMatchesSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 14))
	shapes := map[string]func(i int) float64{
		"abs normal": func(int) float64 { return math.Abs(rng.NormFloat64()) * 3 },
		"rounded":    func(int) float64 { return 0.5 * math.Round(math.Abs(rng.NormFloat64())*2) },
		"two values": func(int) float64 { return float64(rng.IntN(2)) * 1e-3 },
		"counting":   func(i int) float64 { return float64(i) },
		"wide":       func(int) float64 { return math.Exp(40 * rng.NormFloat64()) },
	}
	// In the order of the names, so that every run draws the same samples.
	for _, name := range slices.Sorted(maps.Keys(shapes)) {
		f := shapes[name]
		for _, n := range []int{511, 512, 513, 1998, 1999, 4001} {
			v := make([]float64, n)
			for i := range v {
				v[i] = f(i)
			}
			rng.Shuffle(n, func(i, j int) { v[i], v[j] = v[j], v[i] })
			s := slices.Clone(v)
			slices.Sort(s)
			h := n / 2
			med := s[h]
			guesses := []float64{med, med * 1.05, med * 0.95, med * 1.3, med * 0.7, s[n-1] * 3, 0, math.NaN(), math.Inf(1), 1e-300}
			// The window's lower edge exactly at rank h: rank h − 1 below it.
			guesses = append(guesses, s[h]/(1-nearWindow), s[h-1]/(1+nearWindow))
			if name == "counting" {
				// 0 … n−1: a window of exactly nearPicks values, the values
				// read after the last of them written where it was.
				v = v[:0]
				for i := range 3201 {
					v = append(v, float64(i))
				}
				rng.Shuffle(len(v), func(i, j int) { v[i], v[j] = v[j], v[i] })
				n, h, s = len(v), len(v)/2, slices.Sorted(slices.Values(v))
				guesses = append(guesses, 1600.5) // the window 1473 … 1728
			}
			for _, g := range guesses {
				lo, hi := middlePairNear(slices.Clone(v), g)
				if math.Float64bits(hi) != math.Float64bits(s[h]) || n%2 == 0 && math.Float64bits(lo) != math.Float64bits(s[h-1]) {
					t.Fatalf("%s n=%d guess %g: (%v, %v), sorted (%v, %v)", name, n, g, lo, hi, s[h-1], s[h])
				}
			}
		}
	}
	for _, bad := range []float64{math.NaN(), math.Copysign(0, -1), -1} {
		v := make([]float64, 1998)
		for i := range v {
			v[i] = math.Abs(rng.NormFloat64())
		}
		v[700] = bad
		wlo, whi := middlePair(slices.Clone(v))
		lo, hi := middlePairNear(slices.Clone(v), 0.67)
		if math.Float64bits(lo) != math.Float64bits(wlo) || math.Float64bits(hi) != math.Float64bits(whi) {
			t.Errorf("sample with %v: (%v, %v), middlePair (%v, %v)", bad, lo, hi, wlo, whi)
		}
	}
}

// windowOrder gives the order statistics a sort gives (the definition, common
// practice) at every rank of samples drawn inside windows of bit patterns:
// narrow and wide, across a power of two (1 inside the window), narrower than
// 256 patterns (every counter one pattern), with ties and values on both
// edges.
func TestWindowOrderMatchesSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	windows := [][2]float64{{0.62, 0.73}, {0.95, 1.05}, {1e-3, 1e3}, {1, math.Nextafter(1, 2) + 3e-14}, {0, 2}}
	for _, w := range windows {
		lob, hib := math.Float64bits(w[0]), math.Float64bits(w[1])
		for _, n := range []int{1, 2, 3, 17, 140, 256} {
			for trial := 0; trial < 20; trial++ {
				v := make([]float64, n)
				for i := range v {
					switch rng.IntN(6) {
					case 0:
						v[i] = w[0]
					case 1:
						v[i] = w[1]
					default:
						v[i] = math.Float64frombits(lob + rng.Uint64N(hib-lob+1))
					}
				}
				s := slices.Sorted(slices.Values(v))
				for k := range n {
					for _, below := range []bool{false, true} {
						if below && k == 0 {
							continue
						}
						kth, prev := windowOrder(slices.Clone(v), lob, hib, k, below)
						want := s[k]
						if below {
							want = s[k-1]
						}
						if math.Float64bits(kth) != math.Float64bits(s[k]) || math.Float64bits(prev) != math.Float64bits(want) {
							t.Fatalf("window %v n=%d k=%d below %v: (%v, %v), sorted (%v, %v)", w, n, k, below, kth, prev, s[k], want)
						}
					}
				}
			}
		}
	}
}
