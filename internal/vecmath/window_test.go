package vecmath

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The references are the definitions, one value at a time in Go: the
// second difference x[k+2] − 2·x[k+1] + x[k] as Go evaluates it (left to
// right, each operation rounded: IEEE 754-2008 §5.4) and its absolute value
// with the sign bit cleared (§5.5.1); the order of non-negative doubles is
// that of their bit patterns (§3.4: biased exponent above the significand),
// so counting and gathering by patterns is counting and gathering by values.

func TestAbsSecondDiffs(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	special := []float64{0, math.Copysign(0, -1), 5e-324, -5e-324, 1e-310, math.MaxFloat64, -math.MaxFloat64,
		math.MaxFloat64 / 2, math.Inf(1), math.Inf(-1), math.NaN(), 1, -1, 3}
	for n := 0; n <= 40; n++ {
		for trial := 0; trial < 20; trial++ {
			x := make([]float64, n)
			for i := range x {
				switch trial % 3 {
				case 0: // beams with noise: nearly equal neighbours
					x[i] = 1000 + rng.NormFloat64()
				case 1:
					x[i] = (rng.Float64() - 0.5) * math.Exp(rng.NormFloat64()*50)
				default:
					x[i] = special[rng.IntN(len(special))]
				}
			}
			want := make([]float64, max(n-2, 0))
			for k := range want {
				want[k] = math.Abs(x[k+2] - 2*x[k+1] + x[k])
			}
			got := make([]float64, len(want)+3)
			for k := range got {
				got[k] = -7 // marks a value not set
			}
			if c := AbsSecondDiffs(got, x); c != len(want) {
				t.Fatalf("n=%d: set %d values, want %d", n, c, len(want))
			}
			sameBitsNaN(t, "AbsSecondDiffs", got[:len(want)], want)
			for _, v := range got[len(want):] {
				if v != -7 {
					t.Fatalf("n=%d: a value past the %d differences was written", n, len(want))
				}
			}
		}
	}
}

// sameBitsNaN is sameBits with every NaN taken as one: a NaN's payload is
// not fixed by IEEE 754 across operations.
func sameBitsNaN(t *testing.T, name string, got, want []float64) {
	t.Helper()
	for i := range want {
		if math.IsNaN(got[i]) && math.IsNaN(want[i]) {
			continue
		}
		if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
			t.Fatalf("%s: value %d is %x (%g), want %x (%g)", name, i, math.Float64bits(got[i]), got[i], math.Float64bits(want[i]), want[i])
		}
	}
}

// gatherRef is Gather by its definition, one value at a time.
func gatherRef(c []float64, lo, hi float64, most int) (below int, kept []float64, ok bool) {
	for _, x := range c {
		if math.Signbit(x) || math.IsNaN(x) {
			return 0, nil, false
		}
		switch {
		case x < lo:
			below++
		case x <= hi:
			kept = append(kept, x)
		}
	}
	if len(kept) > most {
		return 0, nil, false
	}
	return below, kept, true
}

func TestGather(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	refused := []float64{math.Copysign(0, -1), -1, -5e-324, math.NaN(), math.Inf(-1), math.Float64frombits(0x7FF0000000000001)}
	for n := 0; n <= 70; n++ {
		for trial := 0; trial < 30; trial++ {
			c := make([]float64, n)
			for i := range c {
				c[i] = math.Abs(rng.NormFloat64())
			}
			lo, hi := 0.6, 0.75
			switch trial % 5 {
			case 1: // values on the bounds themselves, kept
				for i := range c {
					if rng.IntN(4) == 0 {
						c[i] = []float64{lo, hi, math.Nextafter(lo, 0), math.Nextafter(hi, 2)}[rng.IntN(4)]
					}
				}
			case 2: // +0, +Inf and the smallest values, all allowed
				for i := range c {
					if rng.IntN(5) == 0 {
						c[i] = []float64{0, math.Inf(1), 5e-324, math.MaxFloat64}[rng.IntN(4)]
					}
				}
			case 3: // a refused value somewhere
				if n > 0 {
					c[rng.IntN(n)] = refused[rng.IntN(len(refused))]
				}
			case 4: // a wide window
				lo, hi = 0.01, 3
			}
			for _, most := range []int{0, 1, 3, 8, 9, 16, 256} {
				pick := make([]float64, most+GatherSpare+4)
				for i := range pick {
					pick[i] = -7
				}
				below, in, ok := Gather(c, lo, hi, pick[:most+GatherSpare])
				wb, wk, wok := gatherRef(c, lo, hi, most)
				if ok != wok {
					t.Fatalf("n=%d trial %d most %d: ok %v, want %v", n, trial, most, ok, wok)
				}
				for _, v := range pick[most+GatherSpare:] {
					if v != -7 {
						t.Fatalf("n=%d trial %d most %d: written past pick", n, trial, most)
					}
				}
				if !ok {
					continue
				}
				if below != wb || in != len(wk) {
					t.Fatalf("n=%d trial %d most %d: below %d in %d, want %d and %d", n, trial, most, below, in, wb, len(wk))
				}
				sameBits(t, "Gather's values", pick[:in], wk)
			}
		}
	}
	if _, _, ok := Gather([]float64{1}, 0.5, 2, make([]float64, GatherSpare-1)); ok {
		t.Fatal("Gather with no slot at all: ok")
	}
}
