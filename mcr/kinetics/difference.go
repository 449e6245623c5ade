package kinetics

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
)

// influence holds a data fit's per-spectrum influences on its parameters
// θ = (ln k of the free steps, …), h_i = B g_i (clusterCovariance), with
// the parameters each spectrum's residual loses to the fit (the
// small-sample factor's) and which step each free ln k is.
type influence struct {
	h     *mat.Dense // spectra × parameters
	used  int
	kFree []int
	lags  int // the neighbours in time its sandwich took (0: spectra independent)
}

// DifferenceErrors gives the standard errors of the differences between two
// data fits of the same spectra (the same rows, in the same order; the
// weights may differ): of ln k_a − ln k_b for each step free in both
// (0 elsewhere), and of the difference of their determined sums (0 when
// either has none). Both estimates move with the same noise, so the
// variance of their difference is not the difference of their variances
// measured apart (Hausman's V_b − V_a holds for the efficient estimate a
// and its true variances; two estimates of them, each with its own error,
// can leave a difference near zero or below it): it is measured directly,
// as the sandwich measures one fit's, from what each spectrum does to the
// two fits, (h_ai − h_bi) summed with the Bartlett lags the fits took
// (Newey & West 1987; none for independent spectra) and the small-sample
// factor (MacKinnon & White 1985);
// the cluster-robust form of Hausman's test (Cameron & Trivedi,
// Microeconometrics, 2005, §8.4, from memory). A variance summed from a
// few spectra's terms is itself uncertain, most where a few early spectra
// carry the rate constant: each error comes with Satterthwaite's degrees
// of freedom for a sum of squares of unequal terms, (Σ u_i²)²/Σ u_i⁴
// (Satterthwaite, Biometrics Bulletin 1946), for a Student t reference in
// place of the normal. ok is false when either fit has no influences or
// they are of different spectra.
func DifferenceErrors(a, b *FitResult) (lnK []DifferenceError, sum DifferenceError, ok bool) {
	if a == nil || b == nil || a.influence == nil || b.influence == nil {
		return nil, sum, false
	}
	ia, ib := a.influence, b.influence
	n, _ := ia.h.Dims()
	if nb, _ := ib.h.Dims(); nb != n || n < 2 {
		return nil, sum, false
	}
	colA, colB := stepColumns(ia, len(a.K)), stepColumns(ib, len(b.K))
	var cols [][2]int // per difference column: a's column and b's
	var steps []int
	for j := range a.K {
		if j < len(colB) && colA[j] >= 0 && colB[j] >= 0 {
			cols, steps = append(cols, [2]int{colA[j], colB[j]}), append(steps, j)
		}
	}
	sumCol := -1
	if a.sumGrad != nil && b.sumGrad != nil && slices.Equal(a.SumSteps, b.SumSteps) {
		sumCol = len(cols)
	}
	width := len(cols)
	if sumCol >= 0 {
		width++
	}
	if width == 0 {
		return nil, sum, false
	}
	d := mat.NewDense(n, width, nil)
	for i := 0; i < n; i++ {
		ha, hb, row := ia.h.RawRowView(i), ib.h.RawRowView(i), d.RawRowView(i)
		for c, ab := range cols {
			row[c] = ha[ab[0]] - hb[ab[1]]
		}
		if sumCol >= 0 {
			row[sumCol] = dotPrefix(a.sumGrad, ha) - dotPrefix(b.sumGrad, hb)
		}
	}
	// The window over neighbours in time as the fits' own sandwiches took
	// it: none for independent spectra, whose window only takes variance
	// away (ClusterCovariance).
	cov := lagSummed(d, max(ia.lags, ib.lags))
	used := max(ia.used, ib.used)
	if n <= used {
		return nil, sum, false
	}
	cov.Scale(float64(n)/float64(n-used), cov)
	lnK = make([]DifferenceError, len(a.K))
	for c, j := range steps {
		lnK[j] = DifferenceError{SE: math.Sqrt(math.Max(cov.At(c, c), 0)), DF: satterthwaite(d, c)}
	}
	if sumCol >= 0 {
		sum = DifferenceError{SE: math.Sqrt(math.Max(cov.At(sumCol, sumCol), 0)), DF: satterthwaite(d, sumCol)}
	}
	return lnK, sum, true
}

// DifferenceError is the standard error of a difference between two fits
// and the degrees of freedom of its estimate (DifferenceErrors).
type DifferenceError struct {
	SE, DF float64
}

// satterthwaite is (Σ u_i²)²/Σ u_i⁴ over column c of u (at least 1).
func satterthwaite(u *mat.Dense, c int) float64 {
	n, _ := u.Dims()
	var s2, s4 float64
	for i := 0; i < n; i++ {
		v := u.At(i, c) * u.At(i, c)
		s2, s4 = s2+v, s4+v*v
	}
	if !(s4 > 0) {
		return 1
	}
	return math.Max(s2*s2/s4, 1)
}

// stepColumns maps each step to its ln k's column among the parameters
// (−1 for a fixed step).
func stepColumns(in *influence, steps int) []int {
	out := make([]int, steps)
	for j := range out {
		out[j] = -1
	}
	for a, j := range in.kFree {
		if j < steps {
			out[j] = a
		}
	}
	return out
}

// dotPrefix is Σ g_a h_a over g's length (g covers the leading parameters).
func dotPrefix(g, h []float64) float64 {
	s := 0.0
	for a := range g {
		if a < len(h) {
			s += g[a] * h[a]
		}
	}
	return s
}
