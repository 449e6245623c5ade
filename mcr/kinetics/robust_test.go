package kinetics

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestClusterCovarianceDefinition checks ClusterCovariance against its definition written
// out point by point (White, Econometrica 1980; Newey & West, Econometrica 1987):
// cov = B M B · G/(G − used), B = (JᵀJ)⁻¹, M = Σ_{i,i'} w(|i − i'|) Σ_{c,c'} r_ic r_i'c'
// J_icᵀ J_i'c' with Bartlett weights w(l) = 1 − l/(L+1) for l ≤ L, 0 beyond, and
// L = ⌊4 (G/100)^{2/9}⌋ (Newey & West, Rev. Econ. Stud. 1994): 4 for G = 120; not serial,
// L = 0 (independent clusters, Liang & Zeger, Biometrika 1986).
func TestClusterCovarianceDefinition(t *testing.T) {
	for _, tc := range []struct {
		serial bool
		lags   int
	}{{true, 4}, {false, 0}} {
		clusterCovarianceDefinition(t, tc.serial, tc.lags)
	}
}

func clusterCovarianceDefinition(t *testing.T, serial bool, wantLags int) {
	const g, rows, np, used = 120, 3, 2, 4
	rng := rand.New(rand.NewPCG(7, 11))
	j := mat.NewDense(g*rows, np, nil)
	r := make([]float64, g*rows)
	for a := range r {
		r[a] = rng.NormFloat64() + 0.5*math.Sin(float64(a)/9) // a misfit slow in time
		for b := 0; b < np; b++ {
			j.Set(a, b, rng.NormFloat64()+float64(b)*0.3)
		}
	}
	cov, clusters, lags, err := ClusterCovariance(j, r, rows, used, serial)
	if err != nil {
		t.Fatal(err)
	}
	if clusters != g || lags != wantLags {
		t.Fatalf("serial %v: G = %d, L = %d; want %d and %d", serial, clusters, lags, g, wantLags)
	}
	mid := mat.NewDense(np, np, nil)
	for a := 0; a < g*rows; a++ {
		for b := 0; b < g*rows; b++ {
			l := a/rows - b/rows
			if l < 0 {
				l = -l
			}
			if l > lags {
				continue
			}
			w := 1 - float64(l)/float64(lags+1)
			for p := 0; p < np; p++ {
				for q := 0; q < np; q++ {
					mid.Set(p, q, mid.At(p, q)+w*r[a]*r[b]*j.At(a, p)*j.At(b, q))
				}
			}
		}
	}
	var jtj, bread, bm, want mat.Dense
	jtj.Mul(j.T(), j)
	if err := bread.Inverse(&jtj); err != nil {
		t.Fatal(err)
	}
	bm.Mul(&bread, mid)
	want.Mul(&bm, &bread)
	want.Scale(float64(g)/float64(g-used), &want)
	for p := 0; p < np; p++ {
		for q := 0; q < np; q++ {
			if d := math.Abs(cov.At(p, q) - want.At(p, q)); d > 1e-12*math.Abs(want.At(p, p)) {
				t.Errorf("cov[%d][%d] = %.15g, definition %.15g", p, q, cov.At(p, q), want.At(p, q))
			}
		}
	}
}
