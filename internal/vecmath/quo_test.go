package vecmath

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The reference for Quo and QuoBy is Go's own division of float64 (IEEE 754
// division, correctly rounded, as the Go specification requires), computed
// here one value at a time: every result must have the same 64 bits, NaNs
// included.

// checkQuo compares got[i] with x[i] / y(i) bit for bit.
func checkQuo(t *testing.T, name string, x, got []float64, y func(i int) float64) {
	t.Helper()
	bad := 0
	for i, xi := range x {
		w := xi / y(i)
		if math.Float64bits(got[i]) != math.Float64bits(w) {
			if bad < 10 {
				t.Errorf("%s: %x / %x = %x (%g), Go's division gives %x (%g)", name, math.Float64bits(xi), math.Float64bits(y(i)),
					math.Float64bits(got[i]), got[i], math.Float64bits(w), w)
			}
			bad++
		}
	}
	if bad > 0 {
		t.Errorf("%s: %d of %d quotients differ from Go's division", name, bad, len(x))
	}
}

// quoBoth runs Quo on x and y into a fresh slice and in place (over x and
// over y), and QuoBy by each of cs, and checks them against Go's division.
func quoBoth(t *testing.T, x, y []float64, cs []float64) {
	t.Helper()
	dst := make([]float64, len(x))
	Quo(dst, x, y)
	checkQuo(t, "Quo", x, dst, func(i int) float64 { return y[i] })
	in := append([]float64(nil), x...)
	Quo(in, in, y)
	checkQuo(t, "Quo over the dividend", x, in, func(i int) float64 { return y[i] })
	in = append(in[:0], y...)
	Quo(in, x, in)
	checkQuo(t, "Quo over the divisor", x, in, func(i int) float64 { return y[i] })
	for _, c := range cs {
		QuoBy(dst, x, c)
		checkQuo(t, "QuoBy", x, dst, func(int) float64 { return c })
		in = append(in[:0], x...)
		QuoBy(in, in, c)
		checkQuo(t, "QuoBy in place", x, in, func(int) float64 { return c })
	}
}

// quoSpecials are the values whose quotients have rules of their own:
// signed zeros, infinities, NaNs of either sign with and without a payload
// (quiet and signalling), subnormals, the ends of the normal range, and
// ordinary values whose quotients overflow, underflow or round.
func quoSpecials() []float64 {
	bits := math.Float64frombits
	return []float64{
		0, math.Copysign(0, -1), 1, -1, 3, -3, 0.1, 10, math.Ln10 * math.Ln10,
		math.Inf(1), math.Inf(-1), math.NaN(),
		bits(0x7FF8000000000123), bits(0xFFF8000000000000), bits(0xFFF8000000000123),
		bits(0x7FF0000000000001), bits(0xFFF0000000000001), // signalling NaNs
		5e-324, -5e-324, 1e-310, bits(0x000FFFFFFFFFFFFF), 2.2250738585072014e-308,
		math.MaxFloat64, -math.MaxFloat64, 1e300, 1e-300, math.Nextafter(1, 2), math.Nextafter(1, 0),
	}
}

func TestQuoSpecialValues(t *testing.T) {
	s := quoSpecials()
	var x, y []float64
	for _, a := range s {
		for _, b := range s {
			x, y = append(x, a), append(y, b)
		}
	}
	// Every pair in every lane: the slices shifted by 0–3 places.
	for shift := 0; shift < 4; shift++ {
		quoBoth(t, x[shift:], y[shift:], s)
	}
}

func TestQuoRandom(t *testing.T) {
	x, y := randomValues(4_000_003), randomValues(4_000_003 + 17)[17:]
	quoBoth(t, x, y, []float64{math.Ln10 * math.Ln10, 3, 0.7, 1e-300})
	// Quotients near 1 and of single beams by their reference, as the noise
	// model and the absorbances form them.
	r := rand.New(rand.NewPCG(7, 3))
	for i := range x {
		x[i] = 3e4 * math.Exp(-3*r.Float64()) * (1 + 1e-3*r.NormFloat64())
		y[i] = x[i] * (1 + 1e-9*r.NormFloat64())
	}
	quoBoth(t, x, y, []float64{math.Ln10 * math.Ln10})
}

// TestQuoLengths covers every tail length and short slices that never
// reach the four-lane loop.
func TestQuoLengths(t *testing.T) {
	x, y := randomValues(4099), randomValues(4099 + 5)[5:]
	for _, n := range []int{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 15, 17, 31, 33, 1023, 4097, 4099} {
		quoBoth(t, x[:n], y[:n], []float64{7})
	}
}

// TestQuoVectorPath calls the assembly directly, so that a build whose
// dispatch stays on Go's division cannot hide it; it is skipped where there
// is no vector path.
func TestQuoVectorPath(t *testing.T) {
	if !useAVX2 {
		t.Skip("no AVX2 path on this CPU or build")
	}
	x, y := randomValues(1<<20), randomValues(1<<20 + 3)[3:]
	dst := make([]float64, len(x))
	quoAVX2(dst, x, y)
	checkQuo(t, "quoAVX2", x, dst, func(i int) float64 { return y[i] })
	quoByAVX2(dst, x, math.Ln10*math.Ln10)
	checkQuo(t, "quoByAVX2", x, dst, func(int) float64 { return math.Ln10 * math.Ln10 })
}

func BenchmarkQuo(b *testing.B) {
	x, y := make([]float64, 3001), make([]float64, 3001)
	for i := range x {
		x[i], y[i] = 0.5+float64(i)/1000, 3e4-float64(i)
	}
	dst := make([]float64, len(x))
	b.Run("go", func(b *testing.B) {
		for b.Loop() {
			for i, v := range x {
				dst[i] = v / y[i]
			}
		}
	})
	b.Run("vecmath.Quo", func(b *testing.B) {
		for b.Loop() {
			Quo(dst, x, y)
		}
	})
	b.Run("vecmath.QuoBy", func(b *testing.B) {
		for b.Loop() {
			QuoBy(dst, x, 5.3)
		}
	})
}
