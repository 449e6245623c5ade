package vecmath

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The reference for ScaleObserved is its definition one value at a time in
// Go's own arithmetic (IEEE 754 products, each correctly rounded): a
// variance that is not positive and finite (neither > 0 nor < +Inf: NaN
// fails both) is replaced by math.NaN, the product (a·w)·v is formed, and
// the largest product above 0 and whether any product is NaN are read off
// the results with Go's comparisons.
func checkScaleObserved(t *testing.T, o, w []float64, a float64) {
	t.Helper()
	want := make([]float64, len(o))
	wantPeak, wantNaN := 0.0, false
	for i, v := range o {
		if !(v > 0) || math.IsInf(v, 1) {
			v = math.NaN()
		}
		want[i] = a * w[i] * v
		if want[i] > wantPeak {
			wantPeak = want[i]
		}
		if math.IsNaN(want[i]) {
			wantNaN = true
		}
	}
	got := append([]float64(nil), o...)
	peak, nan := ScaleObserved(got, w, a)
	// A NaN's payload is not part of the contract (its only reader asks
	// t == t, and Go may form a product of two NaNs in either order): any
	// NaN for a NaN, the bits of every other value.
	for i := range got {
		if math.IsNaN(got[i]) && math.IsNaN(want[i]) {
			got[i] = want[i]
		}
	}
	sameBits(t, "ScaleObserved", got, want)
	if math.Float64bits(peak) != math.Float64bits(wantPeak) || nan != wantNaN {
		t.Errorf("ScaleObserved on %d values: peak %v NaN %v, want %v and %v", len(o), peak, nan, wantPeak, wantNaN)
	}
}

// Every special variance at every lane, against weights that overflow the
// product, make it subnormal or are themselves not finite.
func TestScaleObservedSpecialValues(t *testing.T) {
	s := quoSpecials()
	ws := []float64{1, 3.7, 1e300, 1e-300, 0, math.Inf(1), math.NaN(), 5e-324}
	for shift := range 9 {
		o := append(make([]float64, shift), s...)
		for i := range shift {
			o[i] = float64(i + 1)
		}
		for k, wk := range ws {
			w := make([]float64, len(o))
			for i := range w {
				w[i] = ws[(i+k)%len(ws)]
			}
			for _, a := range []float64{1, 2.5e-3, 1e200} {
				checkScaleObserved(t, o, w, a)
			}
			// Ordinary weights beside the specials, or every weight NaN
			// when this round's weight is not finite.
			w0 := make([]float64, len(o))
			for i := range w0 {
				w0[i] = 0.5 + float64(i%5)
				if math.IsInf(wk, 0) || math.IsNaN(wk) {
					w0[i] = math.NaN()
				}
			}
			checkScaleObserved(t, o, w0, 1.5)
		}
	}
}

// Variances and weights as the noise model forms them (positive, a few
// left out), and random bit patterns, at every tail length.
func TestScaleObservedRandom(t *testing.T) {
	r := rand.New(rand.NewPCG(11, 12))
	o, w := make([]float64, 10_007), make([]float64, 10_007)
	for i := range o {
		o[i] = 1e-6 * math.Exp(4*r.NormFloat64())
		w[i] = 1e5 * math.Exp(r.NormFloat64())
		if r.IntN(500) == 0 {
			o[i] = []float64{0, math.NaN(), math.Inf(1), -1}[r.IntN(4)]
		}
	}
	for _, n := range []int{0, 1, 3, 7, 8, 9, 15, 16, 17, 33, 1023, 10_007} {
		checkScaleObserved(t, o[:n], w[:n], 0.73)
	}
	checkScaleObserved(t, randomValues(4099), randomValues(4099 + 3)[3:], 1.25)
	clean := o[:4096]
	for i := range clean {
		if !(clean[i] > 0 && clean[i] < math.Inf(1)) {
			clean[i] = 1
		}
	}
	checkScaleObserved(t, clean, w, 2) // no NaN: the flag's other answer
}
