package mcr

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"sort"
	"sync"

	"github.com/bandsolve/bandsolve/internal/fanout"
	"gonum.org/v1/gonum/mat"
)

// BootstrapOptions configure the resampling of a resolution.
type BootstrapOptions struct {
	Replicates int
	Seed       uint64
	// Level of the intervals, default 0.95.
	Level float64
	// Blocks: first row of each experiment; residual spectra are drawn
	// within their own experiment (nil = one experiment).
	Blocks []int
	// KeepScale leaves each replicate's scale as resolved (closure or known
	// spectra fix it); otherwise each replicate component is rescaled to
	// best match the fitted spectrum, since its scale is arbitrary.
	KeepScale bool
}

// Intervals are per-point confidence intervals of a resolution.
type Intervals struct {
	Level                     float64
	SpectraLow, SpectraHigh   *mat.Dense // m × k
	ProfilesLow, ProfilesHigh *mat.Dense // n × k
	SpectraSD, ProfilesSD     *mat.Dense
	Replicates                int // replicates that resolved
	Failed                    int
}

// Bootstrap estimates the uncertainty of fit by the residual bootstrap
// (Efron & Tibshirani, An Introduction to the Bootstrap, 1993, §9.5):
// D* = C Sᵀ + E*, where the rows of E* are residual spectra of D − C Sᵀ
// drawn with replacement within each experiment (whole rows keep the
// spectral correlation of the noise), each D* is resolved with the same
// options starting from fit.C, and the per-point percentiles of the
// replicate spectra and profiles give the intervals (quantile definition 7
// of Hyndman & Fan, Am. Stat. 1996, the default of R and NumPy).
//
// Replicate r draws from its own PCG stream (seed, r), and replicates are
// independent fixed-size tasks, so the result is identical for any
// GOMAXPROCS. Components are matched to the fit by the permutation with the
// largest total spectral cosine.
func Bootstrap(d *mat.Dense, fit *Result, opt Options, bo BootstrapOptions) (*Intervals, error) {
	if bo.Replicates < 2 {
		return nil, errors.New("bootstrap: need at least 2 replicates")
	}
	if bo.Level <= 0 || bo.Level >= 1 {
		bo.Level = 0.95
	}
	n, m := d.Dims()
	_, k := fit.C.Dims()
	rs := resampling{n: n, fit: fit, opt: opt, bo: bo, blocks: bo.Blocks}
	rs.model.Mul(fit.C, fit.S.T())
	rs.resid.Sub(d, &rs.model)
	if len(rs.blocks) == 0 {
		rs.blocks = []int{0}
	}
	reps := rs.resolveAll()
	out := &Intervals{Level: bo.Level}
	var good []replicate
	for _, r := range reps {
		if r.err != nil {
			out.Failed++
			continue
		}
		good = append(good, r)
	}
	out.Replicates = len(good)
	if len(good) < 2 {
		return nil, fmt.Errorf("bootstrap: only %d of %d replicates resolved: %w", len(good), bo.Replicates, firstFailure(reps))
	}
	lo, hi := (1-bo.Level)/2, (1+bo.Level)/2
	out.SpectraLow, out.SpectraHigh, out.SpectraSD = percentiles(good, m, k, lo, hi, func(r replicate) *mat.Dense { return r.s })
	out.ProfilesLow, out.ProfilesHigh, out.ProfilesSD = percentiles(good, n, k, lo, hi, func(r replicate) *mat.Dense { return r.c })
	return out, nil
}

// resampling is what the bootstrap's replicates share: the fitted model
// C Sᵀ, its residual, the experiments' first rows, and the settings.
type resampling struct {
	n            int // rows of the data
	model, resid mat.Dense
	blocks       []int // first row of each experiment
	fit          *Result
	opt          Options
	bo           BootstrapOptions
}

// replicate is one resampled resolution's profiles and spectra, matched to
// the fit's components, or why it failed.
type replicate struct {
	c, s *mat.Dense
	err  error
}

// resolveAll resolves the replicates on up to GOMAXPROCS goroutines, each
// taking the next replicate number; a replicate's panic is raised again
// here.
func (rs *resampling) resolveAll() []replicate {
	reps := make([]replicate, rs.bo.Replicates)
	var wg sync.WaitGroup
	next := make(chan int, rs.bo.Replicates)
	for r := 0; r < rs.bo.Replicates; r++ {
		next <- r
	}
	close(next)
	workers := min(runtime.GOMAXPROCS(0), rs.bo.Replicates)
	var fault fanout.Fault // a replicate's panic, raised again below
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			r := 0
			defer fault.Catch(&r)
			for r = range next {
				reps[r] = rs.resolveReplicate(r)
			}
		}()
	}
	wg.Wait()
	fault.Raise()
	return reps
}

// resolveReplicate draws replicate r's data from its own PCG stream
// (seed, r+1), so that it does not depend on which goroutine takes it,
// resolves it from the fit's profiles and matches its components to the
// fit's (rescaled to them unless KeepScale).
func (rs *resampling) resolveReplicate(r int) replicate {
	rng := rand.New(rand.NewPCG(rs.bo.Seed, uint64(r)+1))
	ds := rs.resampled(rng)
	o := rs.opt
	o.Observe = nil
	res, err := Resolve(Dense{ds}, rs.fit.C, o)
	if err != nil {
		return replicate{err: err}
	}
	c, s := matchComponents(rs.fit, res.C, res.S)
	if !rs.bo.KeepScale {
		rescaleToFit(rs.fit.S, c, s)
	}
	return replicate{c: c, s: s}
}

// resampled is D* = C Sᵀ + E*: each row gets the residual spectrum of a row
// drawn with replacement from its own experiment.
func (rs *resampling) resampled(rng *rand.Rand) *mat.Dense {
	ds := mat.DenseCopyOf(&rs.model)
	for b, lo := range rs.blocks {
		hi := rs.n
		if b+1 < len(rs.blocks) {
			hi = rs.blocks[b+1]
		}
		for i := lo; i < hi; i++ {
			src := lo + rng.IntN(hi-lo)
			row := ds.RawRowView(i)
			er := rs.resid.RawRowView(src)
			for j := range row {
				row[j] += er[j]
			}
		}
	}
	return ds
}

// firstFailure is the error of the first replicate that failed, nil none.
func firstFailure(reps []replicate) error {
	for _, r := range reps {
		if r.err != nil {
			return r.err
		}
	}
	return nil
}

// percentiles are the per-point lo and hi quantiles and the standard
// deviation over the replicates of the rows × k matrix get picks.
func percentiles(good []replicate, rows, k int, lo, hi float64, get func(r replicate) *mat.Dense) (low, high, sd *mat.Dense) {
	low, high, sd = mat.NewDense(rows, k, nil), mat.NewDense(rows, k, nil), mat.NewDense(rows, k, nil)
	vals := make([]float64, len(good))
	for i := 0; i < rows; i++ {
		for j := 0; j < k; j++ {
			for q, r := range good {
				vals[q] = get(r).At(i, j)
			}
			sort.Float64s(vals)
			low.Set(i, j, quantile7(vals, lo))
			high.Set(i, j, quantile7(vals, hi))
			sd.Set(i, j, stdDev(vals))
		}
	}
	return low, high, sd
}

// quantile7 is the sample quantile of sorted x by linear interpolation
// between order statistics at h = (N − 1)p (Hyndman & Fan 1996, type 7).
func quantile7(x []float64, p float64) float64 {
	h := float64(len(x)-1) * p
	i := int(math.Floor(h))
	if i >= len(x)-1 {
		return x[len(x)-1]
	}
	return x[i] + (h-float64(i))*(x[i+1]-x[i])
}

// stdDev is the sample standard deviation (divisor N − 1), two-pass for
// accuracy.
func stdDev(x []float64) float64 {
	mean := 0.0
	for _, v := range x {
		mean += v
	}
	mean /= float64(len(x))
	ss := 0.0
	for _, v := range x {
		ss += (v - mean) * (v - mean)
	}
	return math.Sqrt(ss / float64(len(x)-1))
}

// matchComponents permutes a replicate's components to the fit's by the
// largest sum of spectral cosines over all permutations (k ≤ 8 here; above
// that the order is kept, replicates start from the fit and rarely swap).
func matchComponents(fit *Result, c, s *mat.Dense) (*mat.Dense, *mat.Dense) {
	_, k := s.Dims()
	if k == 1 || k > 8 {
		return c, s
	}
	cos := make([][]float64, k)
	for a := 0; a < k; a++ {
		cos[a] = make([]float64, k)
		fa := mat.Col(nil, a, fit.S)
		for b := 0; b < k; b++ {
			sb := mat.Col(nil, b, s)
			den := math.Sqrt(dot(fa, fa) * dot(sb, sb))
			if den > 0 {
				cos[a][b] = dot(fa, sb) / den
			}
		}
	}
	perm := make([]int, k)
	best := make([]int, k)
	for i := range perm {
		perm[i], best[i] = i, i
	}
	bestV := math.Inf(-1)
	var rec func(i int, used uint, v float64)
	rec = func(i int, used uint, v float64) {
		if i == k {
			if v > bestV+1e-12 {
				bestV = v
				copy(best, perm)
			}
			return
		}
		for b := 0; b < k; b++ {
			if used&(1<<uint(b)) == 0 {
				perm[i] = b
				rec(i+1, used|1<<uint(b), v+cos[i][b])
			}
		}
	}
	rec(0, 0, 0)
	n, _ := c.Dims()
	m, _ := s.Dims()
	c2, s2 := mat.NewDense(n, k, nil), mat.NewDense(m, k, nil)
	for a, b := range best {
		c2.SetCol(a, mat.Col(nil, b, c))
		s2.SetCol(a, mat.Col(nil, b, s))
	}
	return c2, s2
}

// rescaleToFit multiplies each replicate spectrum by the least-squares
// factor α = ⟨s_fit, s⟩/⟨s, s⟩ onto the fitted one and divides its profile by
// α, leaving c sᵀ unchanged.
func rescaleToFit(fitS, c, s *mat.Dense) {
	m, k := s.Dims()
	n, _ := c.Dims()
	for j := 0; j < k; j++ {
		f := mat.Col(nil, j, fitS)
		v := mat.Col(nil, j, s)
		ss := dot(v, v)
		if ss == 0 {
			continue
		}
		a := dot(f, v) / ss
		if !(a > 0) || math.IsInf(a, 0) {
			continue
		}
		for i := 0; i < m; i++ {
			s.Set(i, j, s.At(i, j)*a)
		}
		for i := 0; i < n; i++ {
			c.Set(i, j, c.At(i, j)/a)
		}
	}
}
