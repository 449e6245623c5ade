package mcr

import (
	"math"
	"slices"

	"github.com/bandsolve/bandsolve/internal/fanout"
	"github.com/bandsolve/bandsolve/internal/product"
	"gonum.org/v1/gonum/mat"
)

// Weighted is Data whose least-squares problems carry row × column noise
// weights w_ij = a_i·b_j ≈ 1/σ²_ij: maximum-likelihood resolution
// (Wentzell, Andrews, Hamilton, Faber & Kowalski, J. Chemometrics 1997)
// minimises Σ_ij a_i b_j (d_ij − c_i·s_j)². Its products are the weighted
// ones ALS needs: MulSpectra returns D B S, MulProfiles returns Dᵀ A C and
// FrobeniusSq returns Σ a_i b_j d_ij² (A = diag(a), B = diag(b)).
//
// Why row × column: the profiles step for row i minimises
// Σ_j b_j (d_ij − c_i·s_j)², the normal equations (SᵀBS) c_i = (D B S)_i,
// one Gram matrix SᵀBS for every row (a_i scales row i's whole objective and
// does not move its minimiser); the spectra step likewise has the one Gram
// matrix CᵀAC. So the shared-Gram active-set solver (SolveMany) keeps
// non-negativity, closure and every other constraint exact, as unweighted.
// Per-point weights would need a Gram matrix per row and per channel.
type Weighted interface {
	Data
	// Weights returns a (n) and b (m).
	Weights() (row, col []float64)
}

// WeightedDense is Weighted held in full.
type WeightedDense struct {
	D        *mat.Dense
	Row, Col []float64
}

func (w WeightedDense) Dims() (int, int)                { return w.D.Dims() }
func (w WeightedDense) Weights() ([]float64, []float64) { return w.Row, w.Col }
func (w WeightedDense) MulSpectra(s *mat.Dense) *mat.Dense {
	return product.Mul(w.D, scaleRows(s, w.Col, 1))
}
func (w WeightedDense) MulProfiles(c *mat.Dense) *mat.Dense {
	return product.MulT(w.D, scaleRows(c, w.Row, 1))
}
func (w WeightedDense) FrobeniusSq() float64 {
	n, m := w.D.Dims()
	s := 0.0
	for i := 0; i < n; i++ {
		r := 0.0
		for j, v := range w.D.RawRowView(i)[:m] {
			r += w.Col[j] * v * v
		}
		s += w.Row[i] * r
	}
	return s
}

// WeightedCompressed is Weighted as a truncated SVD of the scaled matrix
// √A D √B ≈ U diag(Σ) Vᵀ (the scaled matrix's noise is white with unit
// variance, so truncating it drops noise in the metric of the fit). Then
// D B S = A^{-1/2} U Σ Vᵀ B^{1/2} S and Dᵀ A C = B^{-1/2} V Σ Uᵀ A^{1/2} C,
// O((n + m)·r·k) as unweighted. FrobSq is ‖√A D √B‖²_F of the full matrix.
type WeightedCompressed struct {
	U        *mat.Dense // n × r
	Sigma    []float64
	V        *mat.Dense // m × r
	FrobSq   float64
	Row, Col []float64
}

func (c WeightedCompressed) Dims() (int, int) {
	return Compressed{U: c.U, V: c.V}.Dims()
}
func (c WeightedCompressed) Weights() ([]float64, []float64) { return c.Row, c.Col }
func (c WeightedCompressed) MulSpectra(s *mat.Dense) *mat.Dense {
	out := Compressed{U: c.U, Sigma: c.Sigma, V: c.V}.MulSpectra(scaleRows(s, c.Col, 0.5))
	return scaleRows(out, c.Row, -0.5)
}
func (c WeightedCompressed) MulProfiles(p *mat.Dense) *mat.Dense {
	out := Compressed{U: c.U, Sigma: c.Sigma, V: c.V}.MulProfiles(scaleRows(p, c.Row, 0.5))
	return scaleRows(out, c.Col, -0.5)
}
func (c WeightedCompressed) FrobeniusSq() float64 { return c.FrobSq }

// scaleRows returns diag(w)^p x (a new matrix).
func scaleRows(x *mat.Dense, w []float64, p float64) *mat.Dense {
	r, k := x.Dims()
	return scaleRowsTo(mat.NewDense(r, k, nil), x, w, p)
}

// weightsOf returns d's row and column weights, nil for unweighted data.
func weightsOf(d Data) (row, col []float64) {
	if w, ok := d.(Weighted); ok {
		return w.Weights()
	}
	return nil, nil
}

// gramW returns XᵀWX with W = diag(w) (XᵀX when w is nil).
func gramW(x *mat.Dense, w []float64) *mat.SymDense {
	if w == nil {
		return gram(x)
	}
	r, k := x.Dims()
	y := mat.NewDense(r, k, nil)
	for i := 0; i < r; i++ {
		f := math.Sqrt(w[i])
		src, dst := x.RawRowView(i), y.RawRowView(i)
		for j, v := range src[:k] {
			dst[j] = f * v
		}
	}
	return gram(y)
}

// WeightedFit is the fit of C Sᵀ to D at the observed points: the lack of
// fit % as before (100 ‖E‖/‖D‖, unweighted) and the weighted residual sum
// of squares Σ a_i b_j e_ij² with the number of observed points.
type WeightedFit struct {
	LackOfFitPercent float64
	WeightedSS       float64
	Observed         int
	// DataSS is Σ d_ij² and NoiseSS Σ 1/(a_i b_j), the noise variance the
	// weights imply, both over the observed points.
	DataSS, NoiseSS float64
}

// ResidualToNoise is √(χ²/ν) with ν = observed points − k(n + m − k), the
// degrees of freedom of a rank-k bilinear fit (each of C and S has k columns,
// less the k² of the rotation T in C Sᵀ = C T T⁻¹ Sᵀ): 1 when the model fits
// to the noise. 0 when ν ≤ 0.
func (f WeightedFit) ResidualToNoise(n, m, k int) float64 {
	dof := float64(f.Observed) - float64(k)*float64(n+m-k)
	if dof <= 0 {
		return 0
	}
	return math.Sqrt(f.WeightedSS / dof)
}

// FitWeighted streams the residual D − C Sᵀ a row at a time (no data-sized
// residual matrix) skipping the points missing(i, j) reports (nil: none), and
// sums it plain and weighted by row[i]·col[j] (nil weights: 1).
//
// Each sum runs over the points in the order of the rows and, within a row,
// of the channels, the model values those of mat.Dense.Mul (modelRow): the
// sums of the residual on the calling goroutine, those of the data and the
// weights alone (Σ d², Σ 1/(a b), the count), which do not depend on C and
// S, on a second one beside it. Every sum is the same sequence of additions
// whichever runs first, so the figures do not depend on GOMAXPROCS. Both
// goroutines call missing, at the same time, so it must be safe for
// concurrent use (a lookup that only reads, as spectra.Blind.Has).
func FitWeighted(d, c, s *mat.Dense, row, col []float64, missing func(i, j int) bool) WeightedFit {
	var tot, nss float64
	var obs int
	done := make(chan struct{})
	var fault fanout.Fault // the second goroutine's panic, raised again here
	go func() {
		defer close(done)
		defer fault.Catch(nil)
		tot, nss, obs = dataSums(d, row, col, missing)
	}()
	ssr, wss := residualSums(d, c, s, row, col, missing)
	<-done
	fault.Raise()
	out := WeightedFit{WeightedSS: wss, Observed: obs, DataSS: tot, NoiseSS: nss}
	if tot > 0 {
		out.LackOfFitPercent = 100 * math.Sqrt(ssr/tot)
	}
	return out
}

// residualSums returns Σ e_ij² and Σ a_i b_j e_ij² over the observed points
// of E = D − C Sᵀ, in the order of FitWeighted.
func residualSums(d, c, s *mat.Dense, row, col []float64, missing func(i, j int) bool) (ssr, wss float64) {
	eachResidualRow(d, c, s, func(i int, drow, erow []float64) {
		a := 1.0
		if row != nil {
			a = row[i]
		}
		if missing == nil && col != nil {
			ssr, wss = residualRowSums(ssr, wss, a, drow, erow, col)
			return
		}
		for j, v := range drow {
			if missing != nil && missing(i, j) {
				continue
			}
			r := v - erow[j]
			b := 1.0
			if col != nil {
				b = col[j]
			}
			ssr += r * r
			wss += a * b * r * r
		}
	})
	return ssr, wss
}

// residualRowSums adds row i's terms to the sums ssr and wss when every
// point is observed and the channels are weighted: the loop of residualSums
// with its tests taken out and the sums held in registers.
func residualRowSums(ssr, wss, a float64, drow, erow, col []float64) (float64, float64) {
	erow, col = erow[:len(drow)], col[:len(drow)]
	for j, v := range drow {
		r := v - erow[j]
		ssr += r * r
		wss += a * col[j] * r * r
	}
	return ssr, wss
}

// dataSums returns Σ d_ij², Σ 1/(a_i b_j) and the number of the observed
// points, in the order of FitWeighted.
func dataSums(d *mat.Dense, row, col []float64, missing func(i, j int) bool) (tot, nss float64, obs int) {
	n, m := d.Dims()
	for i := 0; i < n; i++ {
		drow := d.RawRowView(i)[:m]
		a := 1.0
		if row != nil {
			a = row[i]
		}
		if missing == nil && col != nil {
			tot, nss = dataRowSums(tot, nss, a, drow, col)
			obs += m
			continue
		}
		for j, v := range drow {
			if missing != nil && missing(i, j) {
				continue
			}
			b := 1.0
			if col != nil {
				b = col[j]
			}
			tot += v * v
			nss += 1 / (a * b)
			obs++
		}
	}
	return tot, nss, obs
}

// dataRowSums is dataSums' row when every point is observed and the
// channels are weighted.
func dataRowSums(tot, nss, a float64, drow, col []float64) (float64, float64) {
	col = col[:len(drow)]
	for j, v := range drow {
		tot += v * v
		nss += 1 / (a * col[j])
	}
	return tot, nss
}

// scaleRowsOrSame returns diag(w) x, or x itself when w is nil.
func scaleRowsOrSame(x *mat.Dense, w []float64) *mat.Dense {
	if w == nil {
		return x
	}
	return scaleRows(x, w, 1)
}

// RefineMissing resolves again with the missing points of d (missing[i]:
// the missing columns of row i) refilled from the model C Sᵀ after each
// resolution, warm-started from the last profiles, until no filled value
// moves by more than tol·σ (σ² = 1/(a_i b_j), the point's noise by the
// weights) or after passes resolutions: expectation–maximisation for
// missing values, each pass lowering the weighted residual at the observed
// points (Kiers, Psychometrika 1997, for 0/1 weights). d is changed in
// place. Without it the filled values, made before the species were
// resolved, would pull the fit toward themselves with full weight.
func RefineMissing(d *mat.Dense, row, col []float64, missing [][]int, res *Result, opt Options, tol float64, passes int) (*Result, int, error) {
	if res == nil {
		return res, 0, nil
	}
	p := 0
	for p = 1; p <= passes; p++ {
		var m mat.Dense
		moved := 0.0
		for i, cols := range missing {
			if len(cols) == 0 {
				continue
			}
			m.Mul(res.C.Slice(i, i+1, 0, res.C.RawMatrix().Cols), res.S.T())
			for _, j := range cols {
				v := m.At(0, j)
				sd := 1.0
				if row != nil {
					sd = 1 / math.Sqrt(row[i]*col[j])
				}
				moved = math.Max(moved, math.Abs(v-d.At(i, j))/sd)
				d.Set(i, j, v)
			}
		}
		if moved <= tol {
			break
		}
		var data Data = Dense{D: d}
		if row != nil {
			data = WeightedDense{D: d, Row: row, Col: col}
		}
		next, err := Resolve(data, res.C, opt)
		if err != nil {
			return res, p, err
		}
		res = continued(res, next)
	}
	return res, min(p, passes), nil
}

// continued is next, a resolution warm-started from prev, with the count
// and the lack-of-fit curve of both: the iterations a run reports are all
// it made, not the last refill's few (a run whose first resolution took 42
// read "2 iterations"). The curve steps where the refilled points changed
// the data it is measured on.
func continued(prev, next *Result) *Result {
	shift := prev.Iterations
	next.History = append(slices.Clone(prev.History), next.History...)
	at := slices.Clone(prev.HistoryAt)
	for _, i := range next.HistoryAt {
		at = append(at, i+shift)
	}
	next.HistoryAt = at
	next.Iterations += shift
	return next
}
