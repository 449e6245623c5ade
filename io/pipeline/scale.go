package pipeline

import (
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
	_, p := f.V.Dims()
	ne := max(len(r.Experiments), 1)
	base := r.D
	if r.Scaled != nil {
		base = r.Scaled // f and dd are of the scaled matrices
	}
	basis := mat.NewDense(m, p+ne, nil)
	basis.Slice(0, m, 0, p).(*mat.Dense).Copy(f.V)
	g := make([]float64, m)
	for e := 0; e < ne; e++ {
		lo, hi := 0, n
		if e < len(r.Experiments) {
			lo, hi = r.Experiments[e].FirstRow, r.Experiments[e].FirstRow+r.Experiments[e].Rows
		}
		for j := range g {
			g[j] = 0
		}
		for i := lo; i < hi; i++ {
			a, b := base.RawRowView(i), dd.RawRowView(i)
			for j := range g {
				g[j] += a[j] - b[j]
			}
		}
		basis.SetCol(p+e, g)
	}
	return svd.DecomposeInSpan(dd, basis)
}
