package svd

import (
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// Autocorrelation returns the lag-1 autocorrelation Σ x_i x_{i+1} / Σ x_i² of a vector,
// taken about zero rather than about the mean, as used for singular vectors by Shrager &
// Hendler (Anal. Chem. 1982; from memory). About zero is the right choice here: a flat
// time vector (a constant offset, or the reference-noise pattern) is smooth and scores ≈ 1,
// whereas mean-centring would make it look like noise. White noise scores ≈ 0 ± 1/√len,
// a smooth band or profile close to 1. Returns 0 for vectors shorter than 2 or all zero.
func Autocorrelation(x []float64) float64 {
	if len(x) < 2 {
		return 0
	}
	var num, den float64
	for i, v := range x {
		den += v * v
		if i+1 < len(x) {
			num += v * x[i+1]
		}
	}
	if den == 0 || math.IsInf(den, 0) {
		return 0
	}
	return num / den
}

// structured reports whether a singular vector of length l with lag-1 autocorrelation a is
// smoother than white noise: a ≥ 0.3 and at least three standard deviations (1/√l) above
// the white-noise mean −1/l. Vectors shorter than minStructureLen cannot be judged and pass.
func structured(a float64, l int) bool {
	if l < minStructureLen {
		return true
	}
	return a >= 0.3 && (a+1/float64(l))*math.Sqrt(float64(l)) >= 3
}

// minStructureLen: with fewer points the white-noise spread 1/√l exceeds 0.3 and a smooth
// curve cannot be told from noise by its autocorrelation.
const minStructureLen = 12

func column(a *mat.Dense, k int) []float64 {
	return columnInto(nil, a, k)
}

// columnInto is column k of a in buf's memory when it has room.
func columnInto(buf []float64, a *mat.Dense, k int) []float64 {
	r, _ := a.Dims()
	buf = grow(buf, r)
	raw := a.RawMatrix()
	for i := range buf {
		buf[i] = raw.Data[i*raw.Stride+k]
	}
	return buf
}

// mpMedian returns the median of the Marchenko–Pastur law with aspect ratio beta = c/r ∈ (0, 1]
// (variance 1), the law of s²/r for the singular values s of an r x c matrix of unit-variance
// white noise. Computed by quadrature on x = a + (b−a) sin²φ, which removes the square-root
// end-point singularities, then bisection (Gavish & Donoho, IEEE Trans. Inf. Theory 2014, use
// this median to estimate the noise level).
func mpMedian(beta float64) float64 {
	beta = math.Min(math.Max(beta, 1e-12), 1)
	sb := math.Sqrt(beta)
	a, b := (1-sb)*(1-sb), (1+sb)*(1+sb)
	// density·dx in φ: (b−a)² sin²φ cos²φ / (π β x(φ)).
	g := func(phi float64) float64 {
		s, c := math.Sin(phi), math.Cos(phi)
		x := a + (b-a)*s*s
		ratio := 1 / (b - a) // limit of s²/x at φ = 0 when a = 0 (β = 1)
		if x > 0 {
			ratio = s * s / x
		}
		return (b - a) * (b - a) * c * c * ratio / (math.Pi * beta)
	}
	const steps = 4096 // Simpson panels; the integrand is smooth, far beyond the accuracy needed
	h := (math.Pi / 2) / steps
	cum := make([]float64, steps+1)
	for i := 0; i < steps; i++ {
		x0 := float64(i) * h
		cum[i+1] = cum[i] + h/6*(g(x0)+4*g(x0+h/2)+g(x0+h))
	}
	total := cum[steps] // = 1 up to quadrature error; normalize anyway
	target := total / 2
	i := sort.SearchFloat64s(cum, target)
	i = max(min(i, steps), 1)
	// linear interpolation inside panel i-1..i is enough for a noise estimate
	phi := (float64(i-1) + (target-cum[i-1])/(cum[i]-cum[i-1])) * h
	s := math.Sin(phi)
	return a + (b-a)*s*s
}

// sigmaFromSpectrum is the Gavish–Donoho (2014) estimate σ = s_med / sqrt(r·μ_β) from the
// median of all min(n,m) singular values; signal factors shift the median only slightly
// while the rank is well below min(n,m).
func sigmaFromSpectrum(s []float64, n, m int) float64 {
	if len(s) == 0 {
		return 0
	}
	r, c := max(n, m), min(n, m)
	sorted := append([]float64(nil), s...)
	sort.Float64s(sorted)
	var med float64
	if len(sorted)%2 == 1 {
		med = sorted[len(sorted)/2]
	} else {
		med = 0.5 * (sorted[len(sorted)/2-1] + sorted[len(sorted)/2])
	}
	return med / math.Sqrt(float64(r)*mpMedian(float64(c)/float64(r)))
}

// sigmaFromRowPairs estimates the per-point noise from differences of successive rows
// lo..hi-1: each difference (d_{i+1} − d_i)/√2 has the noise variance of one row and no
// common offset (a fixed reference pattern cancels too). Pooled RMS over all pairs when
// robust is false (pre-reaction rows, no signal change); otherwise the median over pairs of
// each pair's RMS, so that a few fast steps of the reaction do not inflate it.
func sigmaFromRowPairs(d *mat.Dense, lo, hi int, robust bool) float64 {
	_, m := d.Dims()
	if hi-lo < 2 || m == 0 {
		return 0
	}
	per := make([]float64, 0, hi-lo-1)
	var pooled float64
	for i := lo; i+1 < hi; i++ {
		a, b := d.RawRowView(i), d.RawRowView(i+1)
		var ss float64
		for j := range a {
			t := b[j] - a[j]
			ss += t * t
		}
		pooled += ss
		per = append(per, ss/(2*float64(m)))
	}
	if !robust {
		return math.Sqrt(pooled / (2 * float64(m) * float64(hi-lo-1)))
	}
	sort.Float64s(per)
	var med float64
	if len(per)%2 == 1 {
		med = per[len(per)/2]
	} else {
		med = 0.5 * (per[len(per)/2-1] + per[len(per)/2])
	}
	return math.Sqrt(med)
}
