package report

import (
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// appendG5 writes what strconv.AppendFloat(v, 'g', 5, 64) writes (the
// reference: strconv itself, which fmt's %.5g calls), over random values of
// every size and sign, the dyadic values whose sixth digit is an exact tie
// (k/2ʲ), and the neighbours of each place where the exponent or the
// rounding changes (10ᵉ, 10ᵉ − ½·10ᵉ⁻⁵, the range's ends).
func TestAppendG5IsStrconvs(t *testing.T) {
	check := func(v float64) {
		t.Helper()
		want := strconv.FormatFloat(v, 'g', 5, 64)
		if got := string(appendG5([]byte("x"), v)); got != "x"+want {
			t.Fatalf("%v (%b): %q, strconv gives %q", v, math.Float64bits(v), got[1:], want)
		}
	}
	rng := rand.New(rand.NewPCG(11, 12))
	for range 2_000_000 {
		check((rng.Float64() - 0.5) * math.Pow(10, float64(rng.IntN(14)-6)))
		check(float64(rng.IntN(1_000_000)) / 64)
	}
	for j := 0; j <= 40; j++ {
		for k := 1; k < 20000; k++ {
			v := math.Ldexp(float64(k), -j)
			check(v)
			check(-v)
		}
	}
	for e := -5; e <= 6; e++ {
		for _, c := range []float64{1, 1 - 0.5e-5, 1 - 0.5e-4, 1.00005, 9.99995, 5} {
			v := c * math.Pow(10, float64(e))
			for i, w := 0, v; i < 200; i, w = i+1, math.Nextafter(w, 0) {
				check(w)
			}
			for i, w := 0, v; i < 200; i, w = i+1, math.Nextafter(w, math.Inf(1)) {
				check(w)
			}
		}
	}
	for _, v := range []float64{0, math.Copysign(0, -1), 0.001, 10000, 9999.95, 1e-300, math.Inf(1), math.NaN(), 453.5433070866142} {
		check(v)
	}
}
