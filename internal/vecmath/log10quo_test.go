package vecmath

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The reference for Log10Quo and Log10QuoMax is the Go standard library's
// math.Log10 of Go's own division, one value at a time (every result must
// have the same 64 bits, NaNs included); for the flag, the definition of a
// finite double (neither ±Inf nor NaN: IEEE 754-2008 §5.7.2, isFinite); for
// top, Go's own comparison v > top[i].

// checkLog10Quo runs Log10Quo and Log10QuoMax on x and y, into a fresh
// slice and over x, and checks the values, the flag and the raised maxima.
func checkLog10Quo(t *testing.T, x, y []float64) {
	t.Helper()
	want := make([]float64, len(x))
	finite := true
	for i := range x {
		want[i] = math.Log10(x[i] / y[i])
		finite = finite && !math.IsInf(want[i], 0) && !math.IsNaN(want[i])
	}
	// Maxima start from values of their own, some above the logarithms.
	r := rand.New(rand.NewPCG(3, uint64(len(x))))
	top0 := make([]float64, len(x))
	for i := range top0 {
		top0[i] = []float64{math.Inf(-1), 0, math.Copysign(0, -1), 1, -300, 300, math.NaN()}[r.IntN(7)]
	}
	wantTop := append([]float64(nil), top0...)
	for i, v := range want {
		if v > wantTop[i] {
			wantTop[i] = v
		}
	}
	// Into a slice of its own, over x, and over y (absorbances writes the
	// differences over the beams when it may consume them).
	for _, over := range []string{"", "x", "y"} {
		dst := make([]float64, len(x))
		xs, ys := operands(over, dst, x, y)
		if got := Log10Quo(dst, xs, ys); got != finite {
			t.Errorf("Log10Quo (over %q) on %d values says finite %v, want %v", over, len(x), got, finite)
		}
		sameBits(t, "Log10Quo", dst, want)
		xs, ys = operands(over, dst, x, y)
		top := append([]float64(nil), top0...)
		if got := Log10QuoMax(dst, xs, ys, top); got != finite {
			t.Errorf("Log10QuoMax (over %q) on %d values says finite %v, want %v", over, len(x), got, finite)
		}
		sameBits(t, "Log10QuoMax", dst, want)
		sameBits(t, "Log10QuoMax's maxima", top, wantTop)
	}
}

// operands copies x (over "x") or y (over "y") into dst and returns the
// operands with that one replaced by dst; over "" leaves both.
func operands(over string, dst, x, y []float64) ([]float64, []float64) {
	switch over {
	case "x":
		return dst[:copy(dst, x)], y
	case "y":
		return x, dst[:copy(dst, y)]
	}
	return x, y
}

func sameBits(t *testing.T, name string, got, want []float64) {
	t.Helper()
	bad := 0
	for i := range want {
		if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
			if bad < 10 {
				t.Errorf("%s: value %d is %x (%g), want %x (%g)", name, i, math.Float64bits(got[i]), got[i], math.Float64bits(want[i]), want[i])
			}
			bad++
		}
	}
	if bad > 0 {
		t.Errorf("%s: %d of %d values differ", name, bad, len(want))
	}
}

func TestLog10QuoSpecialValues(t *testing.T) {
	s := quoSpecials()
	var x, y []float64
	for _, a := range s {
		for _, b := range s {
			x, y = append(x, a), append(y, b)
		}
	}
	// The logarithm's own edges as quotients by 1 and by 2.
	for _, v := range specialValues() {
		x, y = append(x, v, 2*v), append(y, 1, 2)
	}
	for shift := 0; shift < 4; shift++ {
		checkLog10Quo(t, x[shift:], y[shift:])
	}
}

// Random bit patterns, and single beams by their reference or blank as the
// absorbances are formed; finite slices, so the flag is tested both ways.
func TestLog10QuoRandom(t *testing.T) {
	checkLog10Quo(t, randomValues(1_000_003), randomValues(1_000_003 + 17)[17:])
	r := rand.New(rand.NewPCG(7, 3))
	x, y := make([]float64, 100_003), make([]float64, 100_003)
	for i := range x {
		y[i] = 3e4 * math.Exp(-3*r.Float64()) * (1 + 1e-3*r.NormFloat64())
		x[i] = y[i] * math.Exp(-r.Float64()) * (1 + 1e-3*r.NormFloat64())
	}
	for _, n := range []int{len(x), 4000, 4001, 3} {
		checkLog10Quo(t, x[:n], y[:n])
	}
	for _, at := range []int{0, 1, 2, 3, 4, 4000} { // one zero beam: +Inf
		y0 := y[at]
		y[at] = 0
		checkLog10Quo(t, x[:4001], y[:4001])
		y[at] = y0
	}
}

// TestLog10QuoLengths covers every tail length and short slices that never
// reach the four-lane loop.
func TestLog10QuoLengths(t *testing.T) {
	x, y := randomValues(4099), randomValues(4099 + 5)[5:]
	for _, n := range []int{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 15, 17, 31, 33, 1023, 4097, 4099} {
		checkLog10Quo(t, x[:n], y[:n])
	}
}
