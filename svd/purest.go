package svd

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Purest returns k purest channel indices (columns) by SIMPLISMA (Windig & Guilment, Anal. Chem. 1991):
// purity sigma_j/(mu_j + f*max mu) times the determinant weight; offset f in percent (e.g. 5). For signed
// (difference) data use mean |d| for mu. Deterministic tie-breaking.
//
// Definitions (from memory of the 1991 paper): μ_j and σ_j are the mean and the (population)
// standard deviation of column j over the rows, α = f/100·max_j μ_j. Columns are scaled to
// y_ij = d_ij / √(μ_j² + (σ_j + α)²) and R = YᵀY/n is their correlation-about-the-origin matrix.
// The weight of candidate j after choosing p_1..p_{l−1} is det R[{p_1..p_{l−1}, j}], which is
// ≈ 0 for a channel that is a combination of those already chosen; the l-th channel maximizes
// weight·σ_j/(μ_j + α). The determinant is computed as det R_SS · (R_jj − r_jᵀ R_SS⁻¹ r_j) with a
// Cholesky factor of the small R_SS (stable, and positive definite while the chosen channels
// are independent). Ties go to the lowest column index.
func Purest(d *mat.Dense, k int, offsetPercent float64, signed bool) ([]int, error) {
	if err := checkMatrix(d); err != nil {
		return nil, fmt.Errorf("svd: purest variables: %w", err)
	}
	n, m := d.Dims()
	if k < 1 || k > m {
		return nil, fmt.Errorf("svd: purest variables: k = %d outside 1..%d", k, m)
	}
	if offsetPercent < 0 || math.IsNaN(offsetPercent) || math.IsInf(offsetPercent, 0) {
		return nil, fmt.Errorf("svd: purest variables: offset %v%% must be finite and ≥ 0", offsetPercent)
	}
	mu := make([]float64, m)
	mean := make([]float64, m)
	sd := make([]float64, m)
	for i := 0; i < n; i++ {
		for j, v := range d.RawRowView(i) {
			mean[j] += v
			if signed {
				mu[j] += math.Abs(v)
			}
		}
	}
	var muMax float64
	for j := range mean {
		mean[j] /= float64(n)
		if signed {
			mu[j] /= float64(n)
		} else {
			mu[j] = mean[j]
		}
		muMax = math.Max(muMax, mu[j])
	}
	for i := 0; i < n; i++ {
		for j, v := range d.RawRowView(i) {
			t := v - mean[j]
			sd[j] += t * t
		}
	}
	for j := range sd {
		sd[j] = math.Sqrt(sd[j] / float64(n))
	}
	alpha := offsetPercent / 100 * muMax
	purity := make([]float64, m)
	scale := make([]float64, m)
	for j := range purity {
		if den := mu[j] + alpha; den > 0 {
			purity[j] = sd[j] / den
		}
		if l := math.Hypot(mu[j], sd[j]+alpha); l > 0 {
			scale[j] = 1 / l
		}
	}
	// cross[l][j] = R[p_l, j]; computed once per chosen channel (n·m work each).
	var cross [][]float64
	chosen := make([]int, 0, k)
	taken := make([]bool, m)
	diag := make([]float64, m) // R_jj
	for i := 0; i < n; i++ {
		for j, v := range d.RawRowView(i) {
			y := v * scale[j]
			diag[j] += y * y
		}
	}
	for j := range diag {
		diag[j] /= float64(n)
	}
	for len(chosen) < k {
		l := len(chosen)
		var chol mat.Cholesky
		detSS := 1.0
		if l > 0 {
			rss := mat.NewSymDense(l, nil)
			for a := 0; a < l; a++ {
				for b := a; b < l; b++ {
					rss.SetSym(a, b, cross[a][chosen[b]])
				}
			}
			if !chol.Factorize(rss) {
				return chosen, fmt.Errorf("svd: purest variables: only %d independent channels found, %d requested", l, k)
			}
			detSS = chol.Det()
		}
		best, bestVal := -1, 0.0
		rj := mat.NewVecDense(max(l, 1), nil)
		sol := mat.NewVecDense(max(l, 1), nil)
		for j := 0; j < m; j++ {
			if taken[j] || purity[j] == 0 {
				continue
			}
			w := diag[j]
			if l > 0 {
				for a := 0; a < l; a++ {
					rj.SetVec(a, cross[a][j])
				}
				if err := chol.SolveVecTo(sol, rj); err != nil {
					continue
				}
				schur := diag[j] - mat.Dot(rj, sol)
				if schur <= 1e-10*diag[j] {
					continue // a combination of the chosen channels, up to rounding
				}
				w = detSS * schur
			}
			if v := w * purity[j]; v > bestVal {
				best, bestVal = j, v
			}
		}
		if best < 0 {
			if l == 0 {
				return nil, errors.New("svd: purest variables: every channel has zero variance")
			}
			return chosen, fmt.Errorf("svd: purest variables: only %d independent channels found, %d requested", l, k)
		}
		chosen = append(chosen, best)
		taken[best] = true
		row := make([]float64, m)
		for i := 0; i < n; i++ {
			dr := d.RawRowView(i)
			yb := dr[best] * scale[best]
			for j, v := range dr {
				row[j] += yb * v * scale[j]
			}
		}
		for j := range row {
			row[j] /= float64(n)
		}
		cross = append(cross, row)
	}
	return chosen, nil
}
