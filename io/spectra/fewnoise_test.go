package spectra

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Two spectra of five points (the trial's n2m5 case) have no second
// difference in time, and five points are too few for differences along
// the axis: the level can only be the rounding floor, the smallest step
// seen between the spectra over √12 (the standard deviation of a uniform
// rounding error of that step, by definition), and the source must say so
// rather than name second differences that do not exist.
func TestTwoSpectraFiveNoiseIsAFloor(t *testing.T) {
	v := mat.NewDense(2, 5, []float64{
		998.946, 998.798, 1000.706, 1000.299, 1000.459,
		898.815, 948.922, 999.173, 1049.375, 1099.513,
	})
	sig, q, src := channelNoise(v, 0, nil)
	want := math.Abs(999.173-1000.706) / math.Sqrt(12) // the smallest step, column 3
	if math.Abs(q-math.Abs(999.173-1000.706)) > 1e-9 {
		t.Fatalf("rounding step %g, want the smallest step between the spectra %g", q, math.Abs(999.173-1000.706))
	}
	for j, s := range sig {
		if math.Abs(s-want) > 1e-9*want {
			t.Errorf("channel %d: σ %g, want the floor %g", j, s, want)
		}
	}
	if strings.Contains(src, "second differences in time") || !strings.Contains(src, "not a measured noise") {
		t.Errorf("source %q: want the floor named, not second differences of 2 spectra", src)
	}
}
