package vecmath

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The cases are IEEE 754's (2008, §3.4): +0 and −0 are distinct encodings
// that compare equal, and a NaN compares unequal to itself; SameBits
// compares encodings, not values.
func TestSameBitsComparesEncodings(t *testing.T) {
	nan := math.NaN()
	negZero := math.Copysign(0, -1)
	for _, c := range []struct {
		name string
		a, b []float64
		want bool
	}{
		{"equal", []float64{1, 2.5}, []float64{1, 2.5}, true},
		{"one ulp apart", []float64{1}, []float64{math.Nextafter(1, 2)}, false},
		{"+0 and −0", []float64{0}, []float64{negZero}, false},
		{"the same NaN", []float64{nan}, []float64{nan}, true},
		{"lengths", []float64{1}, []float64{1, 1}, false},
		{"both empty", nil, []float64{}, true},
	} {
		if got := SameBits(c.a, c.b); got != c.want {
			t.Errorf("%s: SameBits = %v, want %v", c.name, got, c.want)
		}
		if len(c.a) == len(c.b) && len(c.a) > 0 {
			a, b := mat.NewDense(1, len(c.a), c.a), mat.NewDense(1, len(c.b), c.b)
			if got := SameBitsMatrix(a, b); got != c.want {
				t.Errorf("%s: SameBitsMatrix = %v, want %v", c.name, got, c.want)
			}
		}
	}
	if SameBitsMatrix(mat.NewDense(1, 2, nil), mat.NewDense(2, 1, nil)) {
		t.Error("SameBitsMatrix: 1 × 2 and 2 × 1 taken as the same")
	}
}
