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
	purity, scale := purityScale(mu, sd, offsetPercent/100*muMax)
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
	// cross(best)[j] = R[best, j]: n·m work per chosen channel.
	cross := func(best int) []float64 {
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
		return row
	}
	return choosePurest(k, purity, diag, cross)
}

// purityScale returns SIMPLISMA's purity σ_j/(μ_j + α) and the column
// scale 1/√(μ_j² + (σ_j + α)²) of each channel.
func purityScale(mu, sd []float64, alpha float64) (purity, scale []float64) {
	purity, scale = make([]float64, len(mu)), make([]float64, len(mu))
	for j := range purity {
		if den := mu[j] + alpha; den > 0 {
			purity[j] = sd[j] / den
		}
		if l := math.Hypot(mu[j], sd[j]+alpha); l > 0 {
			scale[j] = 1 / l
		}
	}
	return purity, scale
}

// PurestLowRank is Purest of the n × m matrix P Qᵀ (P n × r, Q m × r)
// without forming it: every statistic SIMPLISMA needs is a quadratic form
// in the r × r Gram matrix of the centred P, so the cost is O((n + m) r²)
// instead of O(n m) per chosen channel and no n × m matrix is held (the
// rank-k model of noise-weighted data, mapped back, is such a product).
// With signed data the mean absolute value of each column takes one pass
// over the rows of P Qᵀ, a block at a time. Same definitions as Purest,
// so the same channels up to rounding.
func PurestLowRank(p, q *mat.Dense, k int, offsetPercent float64, signed bool) ([]int, error) {
	if err := checkLowRankArgs(p, q, k, offsetPercent); err != nil {
		return nil, err
	}
	cols := lowRankColumnStats(p, q)
	mu := cols.mean
	if signed {
		mu = meanAbsColumns(p, q)
	}
	muMax := 0.0
	for _, v := range mu {
		muMax = math.Max(muMax, v)
	}
	purity, scale := purityScale(mu, cols.sd, offsetPercent/100*muMax)
	return choosePurest(k, purity, cols.diag(scale), cols.crossRow(scale))
}

// checkLowRankArgs refuses factors that do not multiply, an impossible
// number of channels, an offset that is not a finite percentage, and
// factors with non-finite entries.
func checkLowRankArgs(p, q *mat.Dense, k int, offsetPercent float64) error {
	n, r := p.Dims()
	m, rq := q.Dims()
	if rq != r || n == 0 || m == 0 || r == 0 {
		return fmt.Errorf("svd: purest variables: factors %d × %d and %d × %d do not fit", n, r, m, rq)
	}
	if k < 1 || k > m {
		return fmt.Errorf("svd: purest variables: k = %d outside 1..%d", k, m)
	}
	if offsetPercent < 0 || math.IsNaN(offsetPercent) || math.IsInf(offsetPercent, 0) {
		return fmt.Errorf("svd: purest variables: offset %v%% must be finite and ≥ 0", offsetPercent)
	}
	if err := checkMatrix(p); err != nil {
		return fmt.Errorf("svd: purest variables: %w", err)
	}
	if err := checkMatrix(q); err != nil {
		return fmt.Errorf("svd: purest variables: %w", err)
	}
	return nil
}

// lowRankColumns holds the column statistics of P Qᵀ that SIMPLISMA needs,
// each from the factors alone.
type lowRankColumns struct {
	q  *mat.Dense // m × r; row j is q_j
	gq *mat.Dense // m × r; row j is (Gc q_j)ᵀ
	// Each column's mean p̄ · q_j, standard deviation and mean square E[x²].
	mean, sd, sq []float64
}

// lowRankColumnStats forms the column means mean_j = p̄ · q_j and the
// centred Gram Gc = (P − 1p̄ᵀ)ᵀ(P − 1p̄ᵀ)/n, so that σ_j² = q_jᵀ Gc q_j
// without the cancellation of E[x²] − mean².
func lowRankColumnStats(p, q *mat.Dense) *lowRankColumns {
	n, r := p.Dims()
	m, _ := q.Dims()
	pbar := make([]float64, r)
	for i := 0; i < n; i++ {
		for l, v := range p.RawRowView(i) {
			pbar[l] += v
		}
	}
	for l := range pbar {
		pbar[l] /= float64(n)
	}
	pc := mat.DenseCopyOf(p)
	for i := 0; i < n; i++ {
		row := pc.RawRowView(i)
		for l := range row {
			row[l] -= pbar[l]
		}
	}
	var gc mat.Dense
	gc.Mul(pc.T(), pc)
	gc.Scale(1/float64(n), &gc)
	c := &lowRankColumns{q: q, gq: mat.NewDense(m, r, nil),
		mean: make([]float64, m), sd: make([]float64, m), sq: make([]float64, m)}
	c.gq.Mul(q, &gc)
	for j := 0; j < m; j++ {
		qj := q.RawRowView(j)
		c.mean[j] = dot(pbar, qj)
		v := math.Max(0, dot(c.gq.RawRowView(j), qj))
		c.sd[j] = math.Sqrt(v)
		c.sq[j] = v + c.mean[j]*c.mean[j]
	}
	return c
}

// meanAbsColumns gives each column's mean absolute value over the rows of
// P Qᵀ, which no quadratic form gives: the rows are formed a block of 64
// at a time so that no n × m matrix is held.
func meanAbsColumns(p, q *mat.Dense) []float64 {
	n, r := p.Dims()
	m, _ := q.Dims()
	mu := make([]float64, m)
	const block = 64
	buf := mat.NewDense(min(block, n), m, nil)
	for i0 := 0; i0 < n; i0 += block {
		i1 := min(i0+block, n)
		b := buf.Slice(0, i1-i0, 0, m).(*mat.Dense)
		b.Mul(p.Slice(i0, i1, 0, r), q.T())
		for i := 0; i < i1-i0; i++ {
			for j, v := range b.RawRowView(i) {
				mu[j] += math.Abs(v)
			}
		}
	}
	for j := range mu {
		mu[j] /= float64(n)
	}
	return mu
}

// diag gives R_jj = s_j² E[x_j²] for the column scales s.
func (c *lowRankColumns) diag(scale []float64) []float64 {
	diag := make([]float64, len(scale))
	for j := range diag {
		diag[j] = scale[j] * scale[j] * c.sq[j]
	}
	return diag
}

// crossRow gives row best of R: R[b, j] = s_b s_j E[x_b x_j] =
// s_b s_j (q_bᵀ Gc q_j + mean_b mean_j), O(m r) per chosen channel.
func (c *lowRankColumns) crossRow(scale []float64) func(best int) []float64 {
	return func(best int) []float64 {
		row := make([]float64, len(scale))
		gb := c.gq.RawRowView(best)
		for j := range row {
			row[j] = scale[best] * scale[j] * (dot(gb, c.q.RawRowView(j)) + c.mean[best]*c.mean[j])
		}
		return row
	}
}

// choosePurest is SIMPLISMA's selection (see Purest) from the purities, the
// diagonal of R and its rows for chosen channels.
func choosePurest(k int, purity, diag []float64, crossRow func(best int) []float64) ([]int, error) {
	m := len(purity)
	var cross [][]float64
	chosen := make([]int, 0, k)
	taken := make([]bool, m)
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
		cross = append(cross, crossRow(best))
	}
	return chosen, nil
}

func dot(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}
