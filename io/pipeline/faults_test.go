package pipeline

import (
	"math"
	"strings"
	"testing"

	"github.com/bandsolve/bandsolve/io/spectra"
	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
)

// The condition number of XᵀX is (σ_max/σ_min)² by the definition
// κ₂(A) = σ_max(A)/σ_min(A) and σ(XᵀX) = σ(X)² (Golub & Van Loan, §2.6).
func TestConditionNumber(t *testing.T) {
	for _, c := range []struct {
		x    *mat.Dense
		want float64
	}{
		{mat.NewDense(3, 2, []float64{1, 0, 0, 1e-3, 0, 0}), 1e6},
		{mat.NewDense(2, 2, []float64{2, 0, 0, 2}), 1},
		{mat.NewDense(3, 2, []float64{1, 1, 2, 2, 3, 3}), math.Inf(1)},
	} {
		got := conditionNumber(c.x)
		if math.IsInf(c.want, 1) {
			// Exactly dependent columns: σ_min is zero or rounding-sized.
			if got < 1e25 {
				t.Errorf("dependent columns: condition %g, want ≥ 1e25 or +Inf", got)
			}
			continue
		}
		if math.Abs(got-c.want) > 1e-9*c.want {
			t.Errorf("condition %g, want %g", got, c.want)
		}
	}
}

func TestComponentWarnings(t *testing.T) {
	s := mat.NewDense(4, 2, []float64{1, 1, 2, 2, 3, 3, 4, 4.0000001})
	c := mat.NewDense(3, 2, []float64{1, 0, 0.5, 0.5, 0, 1})
	w := strings.Join(componentWarnings(&mcr.Result{C: c, S: s}, nil), "\n")
	if !strings.Contains(w, "components 1 and 2 have nearly the same spectrum") || !strings.Contains(w, "--components 1") {
		t.Errorf("duplicated spectra not reported: %q", w)
	}
	if !strings.Contains(w, "singular Gram matrix") {
		t.Errorf("singular SᵀS not reported: %q", w)
	}
	// Orthogonal components: nothing to say.
	s = mat.NewDense(3, 2, []float64{1, 0, 0, 1, 1, 1})
	if w := componentWarnings(&mcr.Result{C: c, S: s}, nil); len(w) != 0 {
		t.Errorf("distinct components warned: %q", w)
	}
}

func TestCheckInitColumns(t *testing.T) {
	names := []string{"a", "b"}
	if err := checkInitColumns("p.csv", names, mat.NewDense(3, 2, []float64{1, 0, 2, 0, 3, 0})); err == nil || !strings.Contains(err.Error(), "column 3 (\"b\") is zero") {
		t.Errorf("zero column: %v", err)
	}
	if err := checkInitColumns("p.csv", names, mat.NewDense(3, 2, []float64{1, 2, 2, 4, 3, 6})); err == nil || !strings.Contains(err.Error(), "same shape") {
		t.Errorf("proportional columns: %v", err)
	}
	if err := checkInitColumns("p.csv", names, mat.NewDense(3, 2, []float64{1, 0, 0.5, 0.5, 0, 1})); err != nil {
		t.Errorf("distinct columns refused: %v", err)
	}
}

// checkAssembledFinite names the first non-finite value in row order (the
// time and axis point of the spectrum that holds it), whichever block of
// rows the workers found it in.
func TestCheckAssembledFiniteNamesTheFirst(t *testing.T) {
	n, m := 300, 2000 // blocks of 32 rows
	sub := &spectra.Series{AxisName: "wavenumber"}
	for i := 0; i < n; i++ {
		sub.Times = append(sub.Times, float64(10*i))
	}
	for j := 0; j < m; j++ {
		sub.Axis = append(sub.Axis, float64(1000+j))
	}
	d := mat.NewDense(n, m, nil)
	d.Set(250, 7, math.Inf(1))
	d.Set(180, 30, math.NaN())
	err := checkAssembledFinite("s.csv", sub, &spectra.Assembled{Difference: d})
	if err == nil || !strings.Contains(err.Error(), "at 1800 s, wavenumber 1030, is NaN") {
		t.Fatalf("got %v, want the NaN at 1800 s, wavenumber 1030", err)
	}
	if err := checkAssembledFinite("s.csv", sub, &spectra.Assembled{Difference: mat.NewDense(n, m, nil)}); err != nil {
		t.Fatalf("finite data refused: %v", err)
	}
}
