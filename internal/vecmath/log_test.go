package vecmath

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The reference implementation throughout is the Go standard library's
// math.Log and math.Log10 (math/log.go, math/log10.go and, on amd64,
// math/log_amd64.s): every result must have the same 64 bits, NaNs
// included.

// specialValues are the edges of the reduction and of the special cases of
// math/log_amd64.s: signed zeros, negatives, subnormals (reduced there from
// the raw bits), the smallest and largest normals, 1 and its neighbours,
// powers of two, √2/2·2^k (the boundary of the f1 < √2/2 test), the
// infinities and NaNs with either sign and a payload.
func specialValues() []float64 {
	bits := math.Float64frombits
	v := []float64{
		0, math.Copysign(0, -1), -1, -0.5, -math.MaxFloat64, -5e-324,
		math.Inf(1), math.Inf(-1), math.NaN(),
		bits(0x7FF8000000000123), bits(0xFFF8000000000000), bits(0xFFF8000000000123),
		bits(0x7FF0000000000001), bits(0xFFF0000000000001), // signalling NaNs
		5e-324, 1e-310, 2.2250738585072009e-308, bits(0x000FFFFFFFFFFFFF),
		bits(0x0008000000000000), bits(0x000B504F333F9DE6), bits(0x000B504F333F9DE7),
		math.SmallestNonzeroFloat64, 2.2250738585072014e-308, math.MaxFloat64,
		1, math.Nextafter(1, 0), math.Nextafter(1, 2), 1 + 1e-9, 1 - 1e-9,
		1 + 1e-15, 1 - 1e-15, 0.9999, 1.0001, 2, 0.5, 10, 0.1, math.E, math.Pi,
		math.Sqrt2, math.Sqrt2 / 2,
	}
	h := math.Sqrt2 / 2
	for k := -1074; k <= 1023; k++ {
		p := math.Ldexp(1, k)
		v = append(v, p, -p, math.Ldexp(h, k), math.Nextafter(math.Ldexp(h, k), 0),
			math.Nextafter(math.Ldexp(h, k), math.Inf(1)), math.Nextafter(p, 0), math.Nextafter(p, math.Inf(1)))
	}
	return v
}

// check compares dst with want(src) bit for bit.
func check(t *testing.T, name string, src, dst []float64, want func(float64) float64) {
	t.Helper()
	bad := 0
	for i, x := range src {
		w := want(x)
		if math.Float64bits(dst[i]) != math.Float64bits(w) {
			if bad < 10 {
				t.Errorf("%s(%x = %g) = %x (%g), math gives %x (%g)", name, math.Float64bits(x), x,
					math.Float64bits(dst[i]), dst[i], math.Float64bits(w), w)
			}
			bad++
		}
	}
	if bad > 0 {
		t.Errorf("%s: %d of %d values differ from the standard library", name, bad, len(src))
	}
}

// both runs Log and Log10 on src into a fresh slice and in place, and
// checks them against the standard library.
func both(t *testing.T, src []float64) {
	t.Helper()
	dst := make([]float64, len(src))
	Log(dst, src)
	check(t, "Log", src, dst, math.Log)
	Log10(dst, src)
	check(t, "Log10", src, dst, math.Log10)
	in := append([]float64(nil), src...)
	Log(in, in)
	check(t, "Log in place", src, in, math.Log)
	in = append(in[:0], src...)
	Log10(in, in)
	check(t, "Log10 in place", src, in, math.Log10)
}

func TestSpecialValues(t *testing.T) {
	v := specialValues()
	// Every value in every lane: the slice shifted by 0–3 places.
	for shift := 0; shift < 4; shift++ {
		both(t, v[shift:])
	}
}

// randomValues returns n doubles from a fixed stream: uniform random bit
// patterns (every exponent, both signs, subnormals, infinities and NaNs)
// and, for a third of them, positive doubles with a uniform exponent, plus
// values within 1e-6 of 1 for a sixth.
func randomValues(n int) []float64 {
	r := rand.New(rand.NewPCG(15, 2026))
	v := make([]float64, n)
	for i := range v {
		switch i % 6 {
		case 0, 1, 2:
			v[i] = math.Float64frombits(r.Uint64())
		case 3, 4:
			v[i] = math.Float64frombits(r.Uint64() &^ (1 << 63))
		default:
			v[i] = 1 + (r.Float64()-0.5)*2e-6
		}
	}
	return v
}

func TestRandom(t *testing.T) {
	both(t, randomValues(10_000_000+3))
}

// TestLengths covers every tail length and short slices that never reach
// the four-lane loop.
func TestLengths(t *testing.T) {
	v := randomValues(4099)
	for _, n := range []int{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 15, 17, 31, 33, 1023, 4097, 4099} {
		both(t, v[:n])
	}
}

// TestVectorPath calls the assembly directly, so that a build whose
// dispatch stays on math.Log cannot hide it; it is skipped where there is
// no vector path.
func TestVectorPath(t *testing.T) {
	if !useAVX2 {
		t.Skip("no AVX2 path on this CPU or build")
	}
	src := append(specialValues(), randomValues(1<<20)...)
	src = src[:len(src)&^3]
	dst := make([]float64, len(src))
	logAVX2(dst, src)
	check(t, "logAVX2", src, dst, math.Log)
	log10AVX2(dst, src)
	check(t, "log10AVX2", src, dst, math.Log10)
}

// TestVectorPath512 is TestVectorPath for the eight-lane kernels, skipped
// where the processor or the build has no AVX-512. The special values are
// run at each of the eight positions of a register: the masks that pick
// the special cases are per lane.
func TestVectorPath512(t *testing.T) {
	if !useAVX512 {
		t.Skip("no AVX-512 path on this CPU or build")
	}
	var src []float64
	for shift := range 8 {
		src = append(src, make([]float64, shift)...)
		src = append(src, specialValues()...)
	}
	src = append(src, randomValues(1<<20)...)
	src = src[:len(src)&^7]
	dst := make([]float64, len(src))
	logAVX512(dst, src)
	check(t, "logAVX512", src, dst, math.Log)
}

func BenchmarkLog(b *testing.B) {
	src := make([]float64, 3001)
	for i := range src {
		src[i] = 0.5 + float64(i)/1000
	}
	dst := make([]float64, len(src))
	b.Run("math.Log", func(b *testing.B) {
		for b.Loop() {
			for i, x := range src {
				dst[i] = math.Log(x)
			}
		}
	})
	b.Run("vecmath.Log", func(b *testing.B) {
		for b.Loop() {
			Log(dst, src)
		}
	})
	b.Run("math.Log10", func(b *testing.B) {
		for b.Loop() {
			for i, x := range src {
				dst[i] = math.Log10(x)
			}
		}
	})
	b.Run("vecmath.Log10", func(b *testing.B) {
		for b.Loop() {
			Log10(dst, src)
		}
	})
}
