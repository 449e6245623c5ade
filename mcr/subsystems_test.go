package mcr

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Two closed subsystems, A → B → C beside D → E, admit an exact,
// non-negative resolution other than the truth, whatever the spectra look
// like: every spectrum row is Σ c_x s_x over both subsystems, and since
// c_A + c_B + c_C = c_D + c_E (= 1) the same row is Σ p_xy (s_x + s_y) for
// any joint share p ≥ 0 whose sums over y give c_x and over x give c_y (a
// coupling, as in the transportation problem; the construction is
// elementary and is checked here, not quoted). With the five pairs
// AD, BD, CD, BE, CE the shares are p_AD = c_A, p_BD = x,
// p_CD = c_D − c_A − x, p_BE = c_B − x, p_CE = c_C − c_D + c_A + x with
// x = max(0, c_D − c_A − c_C): non-negative whenever c_D ≥ c_A (k₃ ≤ k₁).
// So non-negativity and closure cannot single out the true spectra of such
// data, even noise-free and with a band of its own for every species; only
// a kinetic model or known spectra can.
func TestClosedSubsystemsAdmitPairResolution(t *testing.T) {
	for _, data := range []string{"overlapping bands", "a narrow band of its own per species"} {
		d, c, s := twoSubsystems(nil, 80, 120)
		if data != "overlapping bands" {
			d, c, s = narrowSubsystems(80, 120)
		}
		checkPairResolution(t, data, d, c, s)
	}
}

func checkPairResolution(t *testing.T, data string, d, c, s *mat.Dense) {
	t.Helper()
	n, _ := c.Dims()
	m, _ := s.Dims()
	p := mat.NewDense(n, 5, nil)
	for i := 0; i < n; i++ {
		a, b, cc, dd := c.At(i, 0), c.At(i, 1), c.At(i, 2), c.At(i, 3)
		x := math.Max(0, dd-a-cc)
		p.SetRow(i, []float64{a, x, dd - a - x, b - x, cc - dd + a + x})
	}
	pairs := [][2]int{{0, 3}, {1, 3}, {2, 3}, {1, 4}, {2, 4}}
	q := mat.NewDense(m, 5, nil)
	for j, pr := range pairs {
		for r := 0; r < m; r++ {
			q.Set(r, j, s.At(r, pr[0])+s.At(r, pr[1]))
		}
	}
	for i := 0; i < n; i++ {
		sum := 0.0
		for j := 0; j < 5; j++ {
			if v := p.At(i, j); v < -1e-12 {
				t.Fatalf("%s, time %d: share %d is %g < 0", data, i, j, v)
			}
			sum += p.At(i, j)
		}
		// Closure: the shares add up to one subsystem's total.
		if math.Abs(sum-1) > 1e-12 {
			t.Fatalf("%s, time %d: shares sum to %v, want 1", data, i, sum)
		}
	}
	var model mat.Dense
	model.Mul(p, q.T())
	model.Sub(&model, d)
	if rel := mat.Norm(&model, 2) / mat.Norm(d, 2); rel > 1e-12 {
		t.Fatalf("%s: the pair resolution misses the data by %.3g (relative)", data, rel)
	}
	// It is not the truth: the best match of each true spectrum among the
	// pair spectra stays far from 1 (cosine, common practice).
	if w := worstMatch(s, q); w > 0.95 {
		t.Errorf("%s: pair spectra match the truth to cosine %.4f: the construction proves nothing", data, w)
	} else {
		t.Logf("%s: an exact non-negative resolution with closure whose worst spectrum cosine is %.3f", data, w)
	}
}
