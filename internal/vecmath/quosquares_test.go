package vecmath

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The reference for QuoSquares is Go's own arithmetic one value at a time
// (each operation correctly rounded, IEEE 754, as the Go specification
// requires, and none fused on this build), and for LogQuoSquares math.Log
// of those values: every result must have the same 64 bits.

func checkQuoSquares(t *testing.T, x, y, e []float64, c float64) {
	t.Helper()
	n := len(x)
	wd, wa := make([]float64, n), make([]float64, n)
	ld, la := make([]float64, n), make([]float64, n)
	for i := range x {
		q := x[i] / y[i]
		r := q * q
		wd[i], wa[i] = (r+e[i])/c, r/c
		ld[i], la[i] = math.Log(wd[i]), math.Log(wa[i])
	}
	d, a := make([]float64, n), make([]float64, n)
	QuoSquares(d, a, x, y, e, c)
	sameBits(t, "QuoSquares d", d, wd)
	sameBits(t, "QuoSquares a", a, wa)
	finite := true
	for i := range ld {
		// IEEE 754-2008 §5.7.2 isFinite: neither ±Inf nor NaN.
		finite = finite && !math.IsInf(ld[i], 0) && !math.IsNaN(ld[i]) && !math.IsInf(la[i], 0) && !math.IsNaN(la[i])
	}
	if got := LogQuoSquares(d, a, x, y, e, c); got != finite {
		t.Errorf("LogQuoSquares on %d values says finite %v, want %v", n, got, finite)
	}
	sameBits(t, "LogQuoSquares d", d, ld)
	sameBits(t, "LogQuoSquares a", a, la)
}

func TestQuoSquaresSpecialValues(t *testing.T) {
	s := quoSpecials()
	var x, y, e []float64
	for i, a := range s {
		for j, b := range s {
			x, y, e = append(x, a), append(y, b), append(e, s[(i+j)%len(s)])
		}
	}
	for shift := 0; shift < 4; shift++ {
		for _, c := range []float64{math.Ln10 * math.Ln10, 1, 0, math.Inf(1), 1e-300} {
			checkQuoSquares(t, x[shift:], y[shift:], e[shift:], c)
		}
	}
}

// Random bit patterns, and the noise model's own inputs: a channel's noise
// in counts over single beams, with the reference's share.
func TestQuoSquaresRandom(t *testing.T) {
	checkQuoSquares(t, randomValues(1_000_003), randomValues(1_000_003 + 17)[17:], randomValues(1_000_003 + 5)[5:], math.Ln10*math.Ln10)
	r := rand.New(rand.NewPCG(5, 8))
	x, y, e := make([]float64, 30_001), make([]float64, 30_001), make([]float64, 30_001)
	for i := range x {
		x[i] = 30 * (1 + 0.2*r.NormFloat64())
		y[i] = 3e4 * math.Exp(-3*r.Float64()) * (1 + 1e-3*r.NormFloat64())
		e[i] = math.Pow(x[i]/3e4, 2)
	}
	checkQuoSquares(t, x, y, e, math.Ln10*math.Ln10)
	// One zero beam (σ/0 = +Inf: a logarithm +Inf) in each lane of a
	// register, in the four-lane rest and in Go's tail: the flag says so.
	for _, at := range []int{0, 1, 2, 3, 4, 5, 6, 7, 4000, 4003, 4004} {
		y0 := y[at]
		y[at] = 0
		checkQuoSquares(t, x[:4005], y[:4005], e[:4005], math.Ln10*math.Ln10)
		y[at] = y0
		// And a share e = +Inf, which leaves r/c and its logarithm finite:
		// only the first of the two is not.
		e0 := e[at]
		e[at] = math.Inf(1)
		checkQuoSquares(t, x[:4005], y[:4005], e[:4005], math.Ln10*math.Ln10)
		e[at] = e0
	}
}

func TestQuoSquaresLengths(t *testing.T) {
	x, y, e := randomValues(4099), randomValues(4099 + 5)[5:], randomValues(4099 + 9)[9:]
	for _, n := range []int{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 15, 17, 31, 33, 1023, 4097, 4099} {
		checkQuoSquares(t, x[:n], y[:n], e[:n], 3)
	}
}
