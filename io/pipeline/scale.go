package pipeline

import (
	"math"

	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// Large data (largeData): the factor analysis keeps largeFactors factors
// (randomized SVD), ALS iterates on the truncated SVD (mcr.Compressed) and
// the difference matrix is decomposed in the row space already found
// (differenceFactors).
const (
	largeValues  = 2_000_000
	largeFactors = 24
	// largeWork is n·m·min(n,m) above which every factor of a full
	// decomposition costs more than the whole rest of the analysis: at
	// 2000 × 750 (1.1e9) the Gram route's full eigen-decomposition took
	// 1.4 s of a 4 s run, for factors past the 24th that no step uses.
	largeWork = 2e8
)

// largeData says whether an n × m matrix takes the large-data route: more
// than largeValues values, or a full decomposition costlier than largeWork
// (it is then exact only at high cost). Small data keeps every factor.
func largeData(n, m int) bool {
	return n*m > largeValues || float64(n)*float64(m)*float64(min(n, m)) > largeWork
}

// differenceFactors decomposes the difference matrix dd of species mode.
// Each experiment's difference spectra are its absorbance spectra minus one
// fixed spectrum, ΔA_i = A_i − g_e (g_e = log10(I_blank/I_ref)), so the row
// space of dd lies in that of d plus the g_e. With d's leading right
// singular vectors at hand (f, from the randomized SVD of d), dd is
// decomposed in span(V, g_1, …) by one pass over it (svd.DecomposeInSpan)
// instead of a randomized SVD of its own, six passes. Small data (f holding
// every factor) keeps the direct decomposition.
func differenceFactors(r *Result, dd *mat.Dense, f *svd.Factors, maxF int) (*svd.Factors, error) {
	n, m := dd.Dims()
	if maxF == 0 || f == nil || f.V == nil || !largeData(n, m) {
		return svd.Decompose(dd, svd.DecomposeOptions{MaxFactors: maxF, Seed: r.Settings.Seed})
	}
	return svd.DecomposeInSpan(dd, differenceBasis(f.V, referenceSpectra(r, dd)))
}

// referenceSpectra returns each experiment's fixed spectrum g_e = A_i − ΔA_i
// (summed over the experiment's rows), from D and the difference matrix dd.
func referenceSpectra(r *Result, dd *mat.Dense) [][]float64 {
	n, m := dd.Dims()
	ne := max(len(r.Experiments), 1)
	gs := make([][]float64, ne)
	for e := range gs {
		lo, hi := 0, n
		if e < len(r.Experiments) {
			lo, hi = r.Experiments[e].FirstRow, r.Experiments[e].FirstRow+r.Experiments[e].Rows
		}
		g := make([]float64, m)
		for i := lo; i < hi; i++ {
			a, b := r.D.RawRowView(i), dd.RawRowView(i)
			for j := range g {
				g[j] += a[j] - b[j]
			}
		}
		gs[e] = g
	}
	return gs
}

// differenceBasis returns [v, g_1, …]: the directions v that D's row space lies
// close to (m × p) and the experiments' fixed spectra, between which the rows of
// the difference matrix lie (see differenceFactors). Both are taken unscaled.
func differenceBasis(v *mat.Dense, gs [][]float64) *mat.Dense {
	m, p := v.Dims()
	basis := mat.NewDense(m, p+len(gs), nil)
	basis.Slice(0, m, 0, p).(*mat.Dense).Copy(v)
	for e, g := range gs {
		basis.SetCol(p+e, g)
	}
	return basis
}

// weightedDifferenceStart is where the randomized SVD of the scaled difference
// matrix √A′ ΔA √B′ starts (svd.DecomposeOptions.Start): with D ≈ (1/√A) Ũ Σ Ṽᵀ
// (1/√B) from the factors f of √A D √B, D's row space lies close to span((1/√B) Ṽ),
// the difference matrix's within that plus the fixed spectra g_e, and the scaled
// one's is that span times √B′ (the row weights change no row space). gs are the
// experiments' fixed spectra (referenceSpectra). nil on small data
// (every factor kept: the exact method takes no start).
func weightedDifferenceStart(r *Result, gs [][]float64, f *svd.Factors) *mat.Dense {
	n, m := r.D.Dims()
	if f == nil || f.V == nil || f.Full() || !largeData(n, m) {
		return nil
	}
	// [(1/√B) Ṽ, g_1, …] as differenceBasis lays it out, the unscaled
	// directions written into the start itself, then each row times √b′_j.
	_, p := f.V.Dims()
	start := mat.NewDense(m, p+len(gs), nil)
	for j := 0; j < m; j++ {
		g := invSqrt(r.Weights.Col[j])
		row, vj := start.RawRowView(j)[:p], f.V.RawRowView(j)[:p]
		for l := range row {
			row[l] = vj[l] * g
		}
	}
	for e, ge := range gs {
		start.SetCol(p+e, ge)
	}
	_, q := start.Dims()
	for j := 0; j < m; j++ {
		g := math.Sqrt(max(r.DiffWeights.Col[j], 0))
		row := start.RawRowView(j)[:q]
		for l := range row {
			row[l] *= g
		}
	}
	return start
}
