package mcr

import "math"

// Unimodal returns the least-squares unimodal approximation of x: one
// maximum, non-decreasing before it and non-increasing after (Bro &
// Sidiropoulos, J. Chemometrics 1998).
//
// Any non-decreasing sequence followed by a non-increasing one is unimodal,
// and every unimodal sequence splits that way, so the fit is the best split
// p of x[:p] (monotone up) and x[p:] (monotone down). Bro & Sidiropoulos
// observe that the isotonic errors of every prefix come out of one pass of
// pool-adjacent-violators; here the errors of all prefixes and all suffixes
// are kept in two passes, which makes the whole fit O(n) amortised (each
// point is pooled at most once per pass) instead of O(n²) over the peak
// positions. Ties between splits go to the first, so the result is
// deterministic.
func Unimodal(x []float64) []float64 {
	n := len(x)
	if n < 3 {
		return append([]float64(nil), x...)
	}
	pre := prefixIsotonicErrors(x, false)
	suf := prefixIsotonicErrors(x, true) // suf[q] = error of x[n−q:] non-increasing
	best, bestP := math.Inf(1), 0
	for p := 0; p <= n; p++ {
		if e := pre[p] + suf[n-p]; e < best {
			best, bestP = e, p
		}
	}
	out := make([]float64, 0, n)
	out = append(out, isotonic(x[:bestP], true)...)
	out = append(out, isotonic(x[bestP:], false)...)
	return out
}

// UnimodalTolerance is Unimodal with a tolerance: points whose departure
// from the unimodal fit is at most tol times the profile's largest absolute
// value keep their own value, so that noise-level wiggles on a flat top or a
// tail are not flattened (tol = 0 is plain Unimodal). The tolerance is a
// plain fraction chosen by the user; 0.01–0.05 is typical of noisy profiles
// (common practice).
func UnimodalTolerance(x []float64, tol float64) []float64 {
	fit := Unimodal(x)
	if !(tol > 0) {
		return fit
	}
	lim := tol * floatsMaxAbs(x)
	for i, v := range x {
		if math.Abs(v-fit[i]) <= lim {
			fit[i] = v
		}
	}
	return fit
}

// prefixIsotonicErrors returns e[p], the least-squares error of the best
// non-decreasing fit of the first p values of x (reversed: of the last p
// values, non-increasing in the original order), for p = 0…n. Blocks keep
// their mean and centred sum of squares, merged by the pairwise update of
// Chan, Golub & LeVeque (1983), which avoids the cancellation of Σx² − (Σx)²/n.
func prefixIsotonicErrors(x []float64, reversed bool) []float64 {
	n := len(x)
	e := make([]float64, n+1)
	type block struct {
		mean, m2 float64
		w        int
	}
	st := make([]block, 0, n)
	total := 0.0
	for p := 0; p < n; p++ {
		v := x[p]
		if reversed {
			v = x[n-1-p]
		}
		b := block{mean: v, w: 1}
		for len(st) > 0 && st[len(st)-1].mean >= b.mean {
			a := st[len(st)-1]
			st = st[:len(st)-1]
			total -= a.m2
			w := a.w + b.w
			d := b.mean - a.mean
			b = block{
				mean: a.mean + d*float64(b.w)/float64(w),
				m2:   a.m2 + b.m2 + d*d*float64(a.w)*float64(b.w)/float64(w),
				w:    w,
			}
		}
		// Equal means pool too: harmless for the error and it keeps the
		// stack short.
		st = append(st, b)
		total += b.m2
		e[p+1] = math.Max(total, 0)
	}
	return e
}

// isotonic is pool-adjacent-violators least-squares monotone regression
// (Ayer, Brunk, Ewing, Reid & Silverman 1955).
func isotonic(x []float64, increasing bool) []float64 {
	n := len(x)
	val := make([]float64, 0, n)
	wt := make([]int, 0, n)
	for i := 0; i < n; i++ {
		v := x[i]
		if !increasing {
			v = -v
		}
		val = append(val, v)
		wt = append(wt, 1)
		for len(val) > 1 && val[len(val)-2] > val[len(val)-1] {
			a, b := len(val)-2, len(val)-1
			w := wt[a] + wt[b]
			val[a] = (val[a]*float64(wt[a]) + val[b]*float64(wt[b])) / float64(w)
			wt[a] = w
			val, wt = val[:b], wt[:b]
		}
	}
	out := make([]float64, 0, n)
	for i, v := range val {
		if !increasing {
			v = -v
		}
		for j := 0; j < wt[i]; j++ {
			out = append(out, v)
		}
	}
	return out
}
