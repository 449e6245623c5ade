package vecmath

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The references are the definitions, one value at a time in Go: positive
// and finite is 0 < x < +Inf (NaN compares false: IEEE 754-2008 §5.11);
// a running maximum is raised by a larger value only; the step is the
// smallest |x − p| above zero.

func TestAllPositiveFinite(t *testing.T) {
	bad := []float64{0, math.Copysign(0, -1), -1, -5e-324, math.Inf(1), math.Inf(-1), math.NaN(),
		math.Float64frombits(0xFFF8000000000000), math.Float64frombits(0x7FF0000000000001)}
	good := []float64{5e-324, 1e-310, 1, 3e4, math.MaxFloat64}
	for n := 0; n <= 13; n++ {
		x := make([]float64, n)
		for i := range x {
			x[i] = good[i%len(good)]
		}
		if !AllPositiveFinite(x) {
			t.Fatalf("n=%d: %v refused", n, x)
		}
		// One value that is not positive and finite, in every place.
		for at := 0; at < n; at++ {
			for _, b := range bad {
				keep := x[at]
				x[at] = b
				if AllPositiveFinite(x) {
					t.Fatalf("n=%d: %v at %d accepted", n, b, at)
				}
				x[at] = keep
			}
		}
	}
}

func checkRaiseAndStep(t *testing.T, a0, b0, x, p []float64) {
	t.Helper()
	wa, wb := append([]float64(nil), a0...), append([]float64(nil), b0...)
	wl, ws := math.Inf(-1), math.Inf(1)
	for i, v := range x {
		if v > wa[i] {
			wa[i] = v
		}
		if v > wb[i] {
			wb[i] = v
		}
		if v > wl {
			wl = v
		}
		if d := math.Abs(v - p[i]); d > 0 && d < ws {
			ws = d
		}
	}
	a, b := append([]float64(nil), a0...), append([]float64(nil), b0...)
	l, s := RaiseAndStep(a, b, x, p)
	sameBits(t, "RaiseAndStep a", a, wa)
	sameBits(t, "RaiseAndStep b", b, wb)
	sameBits(t, "RaiseAndStep largest and step", []float64{l, s}, []float64{wl, ws})
}

// Single beams against the row before, maxima from −Inf and from 0 as the
// noise model starts them, rounded values with equal neighbours (steps of
// 0 left out), infinities (an infinite difference is not a step), zeros of
// either sign, and every length up to past a few vectors.
func TestRaiseAndStep(t *testing.T) {
	r := rand.New(rand.NewPCG(21, 4))
	for _, n := range []int{0, 1, 2, 3, 4, 5, 7, 8, 9, 15, 16, 17, 3001, 4000} {
		for _, shape := range []string{"beams", "rounded", "specials"} {
			x, p := make([]float64, n), make([]float64, n)
			a, b := make([]float64, n), make([]float64, n)
			for i := range x {
				switch shape {
				case "beams":
					p[i] = 3e4 * math.Exp(-3*r.Float64())
					x[i] = p[i] * (1 + 1e-3*r.NormFloat64())
				case "rounded":
					p[i] = math.Round(100 * r.Float64())
					x[i] = p[i] + math.Round(r.NormFloat64())
				default:
					s := []float64{0, math.Copysign(0, -1), 1, -1, math.Inf(1), math.Inf(-1), 5e-324, math.MaxFloat64}
					x[i], p[i] = s[r.IntN(len(s))], s[r.IntN(len(s))]
				}
				a[i] = math.Inf(-1)
				b[i] = []float64{0, math.Copysign(0, -1), 50, 1e300}[r.IntN(4)]
			}
			checkRaiseAndStep(t, a, b, x, p)
		}
	}
}

// The one difference RaiseAndStep documents: with −0 before +0 as the
// largest values the lanes may give +0 where the loop gives −0; the value
// is the same zero (IEEE 754-2008 §5.11: −0 = +0) and a, b and the step
// are bit for bit the loop's.
func TestRaiseAndStepZeroSign(t *testing.T) {
	nz := math.Copysign(0, -1)
	x, p := []float64{nz, 0, -1, -1, nz}, []float64{1, 1, 1, 1, 1}
	a0 := []float64{math.Inf(-1), math.Inf(-1), nz, 0, math.Inf(-1)}
	b0 := []float64{0, nz, -2, -2, 0}
	wa, wb := append([]float64(nil), a0...), append([]float64(nil), b0...)
	for i, v := range x {
		wa[i], wb[i] = max2(wa[i], v), max2(wb[i], v)
	}
	a, b := append([]float64(nil), a0...), append([]float64(nil), b0...)
	l, s := RaiseAndStep(a, b, x, p)
	sameBits(t, "RaiseAndStep a", a, wa)
	sameBits(t, "RaiseAndStep b", b, wb)
	if l != 0 || s != 1 {
		t.Errorf("largest %v, step %v; want a zero and 1", l, s)
	}
}

// max2 is the loop's raise: t becomes v only when v > t.
func max2(t, v float64) float64 {
	if v > t {
		return v
	}
	return t
}

// NextAtOrBelow against a loop over the definition, at every place of a hit
// in slices of every length up to a few vectors, with NaN, ties (x = a
// counts, x = b does not) and infinities.
func TestNextAtOrBelow(t *testing.T) {
	want := func(x, a, b []float64) int {
		for i := range x {
			if x[i] <= a[i] && x[i] < b[i] {
				return i
			}
		}
		return len(x)
	}
	r := rand.New(rand.NewPCG(8, 9))
	for n := 0; n <= 19; n++ {
		x, a, b := make([]float64, n), make([]float64, n), make([]float64, n)
		for i := range x {
			x[i], a[i], b[i] = 100+r.Float64(), 3, 50 // no hit
		}
		if got := NextAtOrBelow(x, a, b); got != n {
			t.Fatalf("n=%d: no hit, got %d", n, got)
		}
		for at := 0; at < n; at++ {
			for _, c := range [][3]float64{{3, 3, 50}, {3, 3, 3}, {1, 3, 50}, {math.NaN(), 3, 50}, {1, math.NaN(), 50},
				{math.Inf(-1), 3, 50}, {1, math.Inf(1), math.Inf(1)}, {2, 3, 2.5}} {
				x0, a0, b0 := x[at], a[at], b[at]
				x[at], a[at], b[at] = c[0], c[1], c[2]
				for _, from := range []int{0, at} {
					if got, w := NextAtOrBelow(x[from:], a[from:], b[from:]), want(x[from:], a[from:], b[from:]); got != w {
						t.Fatalf("n=%d, %v at %d, from %d: got %d, want %d", n, c, at, from, got, w)
					}
				}
				x[at], a[at], b[at] = x0, a0, b0
			}
		}
	}
}

// WorstOffset against its definition, the loop one value at a time (the
// largest |(a − g) − b| above +0, a NaN raising nothing: IEEE 754-2008
// §5.11, a comparison with NaN is false), at every length up to 70 and
// with NaN, ±Inf, ±0 and subnormals at every place, so that every lane of
// both blocks and the last block of four meet them.
func TestWorstOffset(t *testing.T) {
	def := func(a, b, g []float64) float64 {
		w := 0.0
		for j := range g {
			if x := math.Abs(a[j] - g[j] - b[j]); x > w {
				w = x
			}
		}
		return w
	}
	special := []float64{math.NaN(), math.Inf(1), math.Inf(-1), 0, math.Copysign(0, -1), 5e-324, -1e-310, math.MaxFloat64}
	rng := rand.New(rand.NewPCG(11, 12))
	for n := 0; n <= 70; n++ {
		a, b, g := make([]float64, n+3), make([]float64, n+3), make([]float64, n)
		for j := range g {
			g[j] = rng.NormFloat64()
			a[j] = 3 * rng.NormFloat64()
			b[j] = a[j] - g[j] + 1e-15*rng.NormFloat64()
		}
		check := func(what string) {
			t.Helper()
			if got, want := WorstOffset(a, b, g), def(a, b, g); math.Float64bits(got) != math.Float64bits(want) {
				t.Fatalf("n=%d, %s: WorstOffset %v, the loop %v", n, what, got, want)
			}
		}
		check("plain")
		for at := 0; at < n; at++ {
			for _, s := range special {
				for _, v := range [][]float64{a, b, g} {
					keep := v[at]
					v[at] = s
					check("special")
					v[at] = keep
				}
			}
			// One large offset alone, then with a NaN after it.
			keep := b[at]
			b[at] += 1e-3
			check("one large")
			if at+1 < n {
				k2 := a[at+1]
				a[at+1] = math.NaN()
				check("large then NaN")
				a[at+1] = k2
			}
			b[at] = keep
		}
	}
	if w := WorstOffset(nil, nil, nil); math.Float64bits(w) != 0 {
		t.Fatalf("empty: %v, want +0", w)
	}
}

// MaxAbs against its definition, the loop one value at a time (the largest
// |x| above +0, a NaN raising nothing), at every length up to 70 with the
// special values at every place.
func TestMaxAbs(t *testing.T) {
	def := func(x []float64) float64 {
		m := 0.0
		for _, v := range x {
			if a := math.Abs(v); a > m {
				m = a
			}
		}
		return m
	}
	special := []float64{math.NaN(), math.Inf(1), math.Inf(-1), 0, math.Copysign(0, -1), 5e-324, -1e-310, -math.MaxFloat64, 1e3}
	rng := rand.New(rand.NewPCG(13, 14))
	for n := 0; n <= 70; n++ {
		x := make([]float64, n)
		for i := range x {
			x[i] = rng.NormFloat64()
		}
		check := func() {
			t.Helper()
			if got, want := MaxAbs(x), def(x); math.Float64bits(got) != math.Float64bits(want) {
				t.Fatalf("n=%d, %v: MaxAbs %v, the loop %v", n, x, got, want)
			}
		}
		check()
		for at := 0; at < n; at++ {
			for _, s := range special {
				keep := x[at]
				x[at] = s
				check()
				x[at] = keep
			}
		}
	}
}
