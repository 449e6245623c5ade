package kinetics

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// Exact first-order solutions at stiff k·t (k up to 1e6 s⁻¹, t up to 1e4 s)
// against the matrix exponential of mpmath at 60 digits, which agrees with
// scipy.linalg.expm (Al-Mohy & Higham 2009) to 1e-15 except on the
// reversible pair, where SciPy itself loses 2e-7 relative: values stored by
// testdata/kinetics/make_expm_reference.py. Equal rate constants (a
// defective matrix) still go through gonum's Padé scaling and squaring,
// which holds only 1e-6 relative at k·t = 10¹⁰: that case is checked at the
// accuracy it has, the others at 1e-12.
func TestExpmStiffAgainstReference(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join("..", "..", "testdata", "kinetics", "expm_reference.json"))
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Cases []struct {
			Scheme string      `json:"scheme"`
			K      []float64   `json:"k"`
			C0     []float64   `json:"c0"`
			Times  []float64   `json:"times"`
			Exact  [][]float64 `json:"mpmath_expm"`
		} `json:"cases"`
	}
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	for _, c := range ref.Cases {
		s := mustParse(t, c.Scheme)
		sim, err := s.SimulateWith(c.K, c.C0, c.Times, 0, SimSettings{Method: "expm"})
		if err != nil {
			t.Fatalf("%s: %v", c.Scheme, err)
		}
		ns := len(c.C0)
		tol := 1e-12
		if c.K[0] == c.K[1] {
			tol = 2e-6
		}
		for i, want := range c.Exact {
			for j, w := range want {
				got := sim.C.At(i, min(j, ns-1))
				if j >= ns {
					got = sim.Extents.At(i, j-ns)
				}
				if d := math.Abs(got - w); d > tol*math.Max(1, math.Abs(w)) {
					t.Errorf("%s k=%v t=%g: y[%d] = %.17g, exact %.17g (rel %.2g)", c.Scheme, c.K, c.Times[i], j, got, w, d/math.Max(1, math.Abs(w)))
				}
			}
		}
	}
}
