package pipeline

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// A spectrum that is zero at every point cannot be a positive sum of
// non-negative spectra whose concentrations add up to a positive total
// (closure; the algebra of Σ c_k s_k with c_k ≥ 0, Σ c_k = 1, s_k ≥ 0),
// so closure refuses it, naming the spectrum; zero is taken to working
// precision, below 10⁻¹² of the largest value (the rule checkClosureRows
// states). Rows just above that, a NaN-free row of one value, and rows of
// either sign pass; a row of exact zeros or one at 10⁻¹³ of the largest,
// anywhere among the rows, fails.
func TestClosureRefusesZeroSpectra(t *testing.T) {
	n, m := 9, 37
	build := func(row int, scale float64) *Result {
		d := mat.NewDense(n, m, nil)
		for i := 0; i < n; i++ {
			for j := 0; j < m; j++ {
				d.Set(i, j, math.Sin(float64(1+i*m+j))*(1+float64(i)))
			}
		}
		if row >= 0 {
			for j := 0; j < m; j++ {
				d.Set(row, j, d.At(row, j)*scale)
			}
		}
		r := &Result{D: d, Settings: &Settings{Closure: "1"}, Experiments: []*Experiment{{Source: "series.csv", Rows: n}}}
		for i := 0; i < n; i++ {
			r.Times = append(r.Times, 10*float64(i))
			r.ExpOfRow = append(r.ExpOfRow, 0)
		}
		return r
	}
	if err := checkClosureRows(build(-1, 1)); err != nil {
		t.Fatalf("data without a zero spectrum refused: %v", err)
	}
	for _, row := range []int{0, 4, n - 1} {
		for _, c := range []struct {
			scale float64
			fail  bool
		}{{0, true}, {math.Copysign(0, -1), true}, {1e-14, true}, {1e-11, false}, {-1, false}} {
			err := checkClosureRows(build(row, c.scale))
			if (err != nil) != c.fail {
				t.Errorf("row %d scaled by %g: error %v, want a refusal %v", row, c.scale, err, c.fail)
			}
			if err != nil && !strings.Contains(err.Error(), "zero at every point") {
				t.Errorf("row %d: message %q does not say what is wrong", row, err)
			}
		}
	}
	// One value of a row alone above the line keeps it.
	r := build(4, 0)
	r.D.Set(4, m-1, 1e-3)
	if err := checkClosureRows(r); err != nil {
		t.Errorf("a spectrum with one value of 10⁻³ refused: %v", err)
	}
}
