package svd

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// Noise correlated along the axis. An interferometer's apodisation, zero filling and
// any interpolation or smoothing of the spectra (common practice in FTIR) leave the
// noise of neighbouring channels correlated, with the same variance per point. A
// least-squares test that counts the m channels of a spectrum as m independent ones
// then fails: a smooth direction p (a baseline polynomial, a broad band) collects
// noise of variance σ² pᵀRp ≈ σ² τ instead of σ², where R is the correlation matrix
// along the axis and
//
//	τ = Σ_{h=−∞}^{∞} ρ_h = 1 + 2 Σ_{h≥1} ρ_h
//
// the ratio of the noise's long-run variance to its variance per point. The m points
// then count as m/τ independent ones: the effective number of independent observations
// of an autocorrelated series (Bayley & Hammersley, J. R. Stat. Soc. Suppl. 8, 1946;
// for AR(1) noise τ = (1+ρ)/(1−ρ); from memory). With Gaussian smoothing of σ_k points
// τ = 2σ_k√π (the kernel's sum squared over its sum of squares), 7.1 at σ_k = 2.
//
// AxisCorrelation measures ρ_h on residual rows e = x Π, Π = I − G Gᵀ, the noise x
// with the columns G (m × p, orthonormal: the baseline polynomials and the factors'
// spectra) projected out. The projection removes noise from the smooth directions, so
// the plain lag sums c_h = Σ_rows Σ_j e_j e_{j+h} understate ρ: by O(pτ/m), 17 % at
// m = 301, p = 7, τ = 7. Their expectation is exact, a quadratic form's
// (E[xᵀMx] = tr(MΣ) for x of covariance Σ; Searle, Linear Models, 1971, from memory):
//
//	E[c_h] = s Σ_{g=0}^{H} A_hg ρ_g,  A_hg = tr(Π S_h Π T_g),
//
// with S_h the lag-h shift ((S_h v)_j = v_{j+h}), T_0 = I, T_g = S_g + S_gᵀ, s the
// summed noise variance of the rows, and ρ_g = 0 beyond H. The (H+1)² system is solved
// for s ρ_g and ρ_g read as ratios to s ρ_0. The sum τ is then Geyer's initial
// monotone sequence estimator (Statistical Science 7, 1992): pairs Γ_t = ρ_{2t} + ρ_{2t+1}
// summed while positive, each no larger than the one before, τ = 2 Σ Γ_t − 1. The
// pairs end where the correlation has died out, so no lag window has to be chosen.
//
// The window H is at most axisMaxLag and small enough that p(2H+1) ≤ m/2: the
// removed directions take away the lowest frequencies, a band of width ≈ p/m, and a
// window of 2H+1 lags resolves ≈ 1/(2H+1), so a wider window could not tell the
// removed power from the correlation (A turns singular). Noise whose lag-1
// correlation is not significant (one-sided level axisWhiteLevel against white
// noise, for which ρ̂_1 has standard error 1/√N over N values; Bartlett, J. R. Stat.
// Soc. Suppl. 8, 1946) is taken as white, τ = 1, as is τ̂ < 1 (noise anticorrelated
// along the axis would make a smooth direction quieter; counting it white keeps the
// tests conservative).
//
// Residual structure that is not noise (a band shift, lines no factor holds) is
// correlated along the axis as well and raises τ: the tests then ask whether a
// baseline stands out from the residual as it is, which is what they can judge.

// axisMaxLag is the widest lag window: Gaussian smoothing of up to 5 points (ρ_h below
// 10⁻³ beyond 4σ_k·√2 ≈ 28 lags at σ_k = 5 would need more) is covered, and FTIR
// apodisation with zero filling correlates a few points only (common practice).
const axisMaxLag = 24

// axisWhiteLevel is the level of the test of white noise: white noise then gets τ = 1
// exactly (the correction it would get is of the order of its own error, 1/√N).
const axisWhiteLevel = 1e-3

// axisValues is how many residual values the lag sums take, in whole rows evenly spaced
// (axisRows): 65 536 give ρ_h to ±0.004 (1/√N for white noise) whatever the shape, so a
// series of long spectra needs few rows and a large one no pass over all its rows (256
// rows cost about 25 ms per run at 3001 points and 11 directions; 22 do now).
const axisValues = 1 << 16

// axisRows is the rows of n spectra of m points the lag sums take: enough for
// axisValues values, at least 16 (every part of a run), at most n.
func axisRows(n, m int) int {
	return min(n, max(16, (axisValues+m-1)/max(m, 1)))
}

// AxisNoise is the noise's correlation along the axis as AxisCorrelation measured it.
type AxisNoise struct {
	Lag1       float64 // ρ̂_1, corrected for the projection
	Inflation  float64 // τ = Σ_h ρ_h, ≥ 1; 1 = white
	Points     int     // m
	Effective  float64 // m/τ, the effective number of independent points
	Lags       int     // H, the window the system was solved on (0: not measured)
	Values     int     // residual values the lag sums took
	Correlated bool    // ρ̂_1 significant: τ from the data, else 1
}

// white is the result when nothing could be measured.
func white(m int) AxisNoise { return AxisNoise{Inflation: 1, Points: m, Effective: float64(m)} }

// AxisCorrelation measures the correlation along the axis of the noise of the rows of
// e, which must already have the orthonormal columns of g (m × p; nil: none) projected
// out, and returns τ and m/τ (see the comment above). Rows of zeros count for nothing.
func AxisCorrelation(e, g *mat.Dense) AxisNoise {
	_, m := e.Dims()
	p := 0
	if g != nil {
		_, p = g.Dims()
	}
	h := axisWindow(m, p)
	if h < 1 {
		return white(m)
	}
	c, values := lagSums(e, h)
	return axisFromSums(c, shiftTraces(g, m, h), m, values)
}

// axisWindow is H: at most axisMaxLag, with p(2H+1) ≤ m/2; 0 when no lag fits.
func axisWindow(m, p int) int {
	h := axisMaxLag
	if p > 0 {
		h = min(h, (m/(2*p)-1)/2)
	}
	return max(min(h, m/4), 0)
}

// lagSums returns c_h = Σ_rows Σ_j e_j e_{j+h} for h = 0..H and the count of values
// in rows that are not all zero.
func lagSums(e *mat.Dense, h int) ([]float64, int) {
	n, m := e.Dims()
	c := make([]float64, h+1)
	s := make([]float64, h+1)
	values := 0
	for i := 0; i < n; i++ {
		row := e.RawRowView(i)
		if zeroRow(row) {
			continue
		}
		values += m
		lagProducts(s, row)
		for l, v := range s {
			c[l] += v
		}
	}
	return c, values
}

// lagProducts sets out[l] = Σ_j x_j x_{j+l} (lagDot(x, x, l)) for every l
// of out. Four lags are summed in one pass: each sum still adds its
// products in the order of j, so its bits are lagDot's, but its additions
// no longer wait on the other lags' (one chain of additions at a time was
// the whole cost of these sums).
func lagProducts(out, x []float64) {
	m, l := len(x), 0
	for ; l+3 < len(out) && l+3 < m; l += 4 {
		n := m - l - 3
		a, b, c, d := x[l:l+n], x[l+1:l+1+n], x[l+2:l+2+n], x[l+3:l+3+n]
		var s0, s1, s2, s3 float64
		for j, v := range x[:n] {
			s0 += v * a[j]
			s1 += v * b[j]
			s2 += v * c[j]
			s3 += v * d[j]
		}
		// The last products of the shorter lags, in the same order of j.
		for j := n; j < m-l; j++ {
			s0 += x[j] * x[j+l]
		}
		for j := n; j < m-l-1; j++ {
			s1 += x[j] * x[j+l+1]
		}
		for j := n; j < m-l-2; j++ {
			s2 += x[j] * x[j+l+2]
		}
		out[l], out[l+1], out[l+2], out[l+3] = s0, s1, s2, s3
	}
	for ; l < len(out); l++ {
		out[l] = lagDot(x, x, l)
	}
}

// zeroRow says whether every entry of x is zero.
func zeroRow(x []float64) bool {
	for _, v := range x {
		if v != 0 {
			return false
		}
	}
	return true
}

// axisFromSums solves A x = c for x_g = s ρ_g and sums ρ into τ.
func axisFromSums(c []float64, a *mat.Dense, m, values int) AxisNoise {
	h := len(c) - 1
	out := white(m)
	out.Lags, out.Values = h, values
	if !(c[0] > 0) || values == 0 {
		return out
	}
	var x mat.VecDense
	if err := x.SolveVec(a, mat.NewVecDense(h+1, append([]float64(nil), c...))); err != nil {
		return out
	}
	if !(x.AtVec(0) > 0) {
		return out
	}
	rho := make([]float64, h+1)
	for g := range rho {
		rho[g] = x.AtVec(g) / x.AtVec(0)
	}
	out.Lag1 = rho[1]
	zCrit := math.Sqrt2 * math.Erfcinv(2*axisWhiteLevel)
	if !(rho[1]*math.Sqrt(float64(values)) > zCrit) {
		return out
	}
	out.Correlated = true
	if tau := geyerSum(rho); tau > 1 {
		out.Inflation = tau
		out.Effective = float64(m) / tau
	}
	return out
}

// geyerSum is Geyer's initial monotone sequence estimate of Σ_{h=−∞}^{∞} ρ_h from
// ρ_0 = 1, ρ_1, …: 2 Σ_t Γ_t − 1 over the pairs Γ_t = ρ_{2t} + ρ_{2t+1} up to the
// first that is not positive, each lowered to the one before it.
func geyerSum(rho []float64) float64 {
	sum, prev := 0.0, math.Inf(1)
	for t := 0; 2*t+1 < len(rho); t++ {
		g := rho[2*t] + rho[2*t+1]
		if !(g > 0) {
			break
		}
		g = math.Min(g, prev)
		sum += g
		prev = g
	}
	return 2*sum - 1
}

// shiftTraces returns A (H+1 × H+1), A_hg = tr(Π S_h Π T_g) with Π = I − G Gᵀ,
// expanded as tr(S_h T_g) − tr(P S_h T_g) − tr(S_h P T_g) + tr(P S_h P T_g), P = G Gᵀ:
// the first is (m−h) when h = g, else 0; the others are sums over G's columns of lag
// products, O(p²Hm + pH³) work, never an m × m matrix.
func shiftTraces(g *mat.Dense, m, h int) *mat.Dense {
	a := mat.NewDense(h+1, h+1, nil)
	for l := 0; l <= h; l++ {
		a.Set(l, l, float64(m-l))
	}
	if g == nil {
		return a
	}
	_, p := g.Dims()
	cols := make([][]float64, p)
	for c := range cols {
		cols[c] = mat.Col(nil, c, g)
	}
	x := crossLags(cols, h) // x[l][c][d] = Σ_j g_c[j] g_d[j+l]
	auto := make([][]float64, p)
	for c, u := range cols {
		auto[c] = make([]float64, 2*h+1)
		lagProducts(auto[c], u)
	}
	for l := 0; l <= h; l++ {
		for k := 0; k <= h; k++ {
			var t float64
			for c, u := range cols {
				t -= shiftForm(u, auto[c], l, k) + shiftForm2(u, auto[c], l, k)
				if k == 0 {
					t += x[l][c][c] // tr(P S_h P): GᵀG = I
					continue
				}
				for d := range cols {
					t += x[l][c][d] * (x[k][d][c] + x[k][c][d])
				}
			}
			a.Set(l, k, a.At(l, k)+t)
		}
	}
	return a
}

// crossLags returns x[l][c][d] = Σ_j u_c[j] u_d[j+l] for l = 0..h.
func crossLags(cols [][]float64, h int) [][][]float64 {
	x := make([][][]float64, h+1)
	for l := range x {
		x[l] = make([][]float64, len(cols))
		for c, u := range cols {
			out := make([]float64, len(cols))
			for d := 0; d < len(cols); d += 4 {
				// The last group is filled up with its own last column, whose
				// sum is taken twice and kept once: as fast as one sum alone.
				var vs [4][]float64
				for i := range vs {
					vs[i] = cols[min(d+i, len(cols)-1)]
				}
				var s [4]float64
				s[0], s[1], s[2], s[3] = lagDots4(u, vs[:], l)
				copy(out[d:], s[:])
			}
			x[l][c] = out
		}
	}
	return x
}

// lagDots4 is lagDot(u, v, l) for the four v of vs, in one pass when they
// have one length: each sum adds its products in lagDot's order, so its
// bits are lagDot's, and the four chains of additions overlap (see
// lagProducts).
func lagDots4(u []float64, vs [][]float64, l int) (s0, s1, s2, s3 float64) {
	m := len(vs[0])
	n := min(len(u), m-l)
	if n <= 0 || len(vs[1]) != m || len(vs[2]) != m || len(vs[3]) != m {
		return lagDot(u, vs[0], l), lagDot(u, vs[1], l), lagDot(u, vs[2], l), lagDot(u, vs[3], l)
	}
	a, b, c, d := vs[0][l:l+n], vs[1][l:l+n], vs[2][l:l+n], vs[3][l:l+n]
	for j, x := range u[:n] {
		s0 += x * a[j]
		s1 += x * b[j]
		s2 += x * c[j]
		s3 += x * d[j]
	}
	return s0, s1, s2, s3
}

// lagDot is Σ_j u[j] v[j+l] over the indices inside both.
func lagDot(u, v []float64, l int) float64 {
	var s float64
	for j := 0; j+l < len(v) && j < len(u); j++ {
		s += u[j] * v[j+l]
	}
	return s
}

// at is u[j], zero outside the axis.
func at(u []float64, j int) float64 {
	if j < 0 || j >= len(u) {
		return 0
	}
	return u[j]
}

// shiftForm is uᵀ S_h T_g u: a(h) when g = 0, else a(h+g) + a(|h−g|) less the terms
// S_h cuts at the end of the axis (j ≥ m−h); a is u's autocorrelation, a[l] =
// Σ_j u[j] u[j+l].
func shiftForm(u, a []float64, h, g int) float64 {
	if g == 0 {
		return a[h]
	}
	m := len(u)
	s := a[h+g] + a[absInt(h-g)]
	for j := max(m-h, 0); j < m; j++ {
		s -= u[j] * at(u, j+h-g)
	}
	return s
}

// shiftForm2 is uᵀ T_g S_h u: a(h) when g = 0, else a(g+h) + a(|h−g|) less the terms
// S_gᵀ cuts at the start of the axis (j < g).
func shiftForm2(u, a []float64, h, g int) float64 {
	if g == 0 {
		return a[h]
	}
	s := a[h+g] + a[absInt(h-g)]
	for j := 0; j < min(g, len(u)); j++ {
		s -= u[j] * at(u, j+h-g)
	}
	return s
}

func absInt(x int) int {
	if x < 0 {
		return -x
	}
	return x
}
