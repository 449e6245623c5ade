package mcr

import (
	"math"
	"testing"
)

// nextStep's backtracking against the minimiser of the quadratic q(0) = fx,
// q'(0) = slope, q(step) = fn, worked by hand (q(a) = fx + slope·a + c·a²,
// c = (fn − fx − slope·step)/step², minimiser −slope/(2c); Dennis &
// Schnabel 1983, §6.3.2, from memory), kept within [step/10, step/2]; half
// the step where q has no minimum (c ≤ 0), where fn is not finite or the
// curvature overflows, and without interpolation.
func TestNextStepIsSafeguardedQuadratic(t *testing.T) {
	inf, nan := math.Inf(1), math.NaN()
	for _, tc := range []struct {
		name                string
		step, slope, fx, fn float64
		interpolate         bool
		want                float64
	}{
		{"minimiser inside", 1, -1, 0, 1, true, 0.25},                 // q = −a + 2a²
		{"minimiser inside, short step", 0.2, -2, 1, 1.1, true, 0.08}, // q = 1 − 2a + 12.5a²
		{"far overshoot: lower bound", 1, -1, 0, 1e6, true, 0.1},      // minimiser 5·10⁻⁷
		{"only just failed: upper bound", 1, -1, 0, -0.4, true, 0.5},  // minimiser 0.83
		{"straight line: half", 1, -1, 0, -1, true, 0.5},              // c = 0
		{"concave: half", 1, -1, 0, -2, true, 0.5},                    // c < 0
		{"infinite trial: half", 0.5, -1, 0, inf, true, 0.25},         //
		{"NaN trial: half", 0.5, -1, 0, nan, true, 0.25},              //
		{"minus infinity trial: half", 0.5, -1, 0, -inf, true, 0.25},  //
		{"curvature overflows: half", 1, -1e300, 0, 1e308, true, 0.5}, // 2(fn − fx − slope) = +∞
		{"halving without interpolation", 1, -1, 0, 1, false, 0.5},    //
	} {
		// To rounding: the steps are sums of rounded decimals.
		if got := nextStep(tc.step, tc.slope, tc.fx, tc.fn, tc.interpolate); math.Abs(got-tc.want) > 1e-15*tc.want {
			t.Errorf("%s: next step %v, want %v", tc.name, got, tc.want)
		}
	}
}

// fixedObjective is a constant f with a given gradient at every point.
type fixedObjective struct{ grad []float64 }

func (o fixedObjective) value([]float64) float64 { return 1 }
func (o fixedObjective) gradient(g []float64)    { copy(g, o.grad) }

// minimiseBFGS's converged flag where even the gradient gives no descent
// direction: a zero gradient is a stationary point, converged (the
// first-order condition, Nocedal & Wright 2006, theorem 2.2, from
// memory); a gradient that is not finite says nothing of the point, and
// the search must not report it converged. Both stop at once, on their first evaluation.
func TestBFGSConvergedOnlyAtAZeroGradient(t *testing.T) {
	inf, nan := math.Inf(1), math.NaN()
	for _, tc := range []struct {
		name string
		grad []float64
		want bool
	}{
		{"zero", []float64{0, 0}, true},
		{"NaN", []float64{nan, 1}, false},
		{"infinite", []float64{inf, 0}, false},
	} {
		_, _, evals, conv := minimiseBFGS(fixedObjective{tc.grad}, []float64{0.5, -0.5}, bfgsOptions{maxEval: 100, stall: endStall})
		if conv != tc.want || evals != 1 {
			t.Errorf("%s gradient: converged %v after %d evaluations, want %v after 1", tc.name, conv, evals, tc.want)
		}
	}
}
