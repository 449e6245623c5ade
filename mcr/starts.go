package mcr

import (
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"
)

// StartSearch configures SearchStarts.
type StartSearch struct {
	// Basis holds the leading left singular vectors of D (n × r, r ≥ k).
	Basis *mat.Dense
	// Starts is the number of random rotations tried (0 = 8).
	Starts int
	// Seed makes the rotations reproducible.
	Seed uint64
	// NoiseSS is the residual sum of squares noise alone leaves at the
	// true solution (σ²·degrees of freedom); the search stops as soon as a
	// fit reaches 1.02 × this, and does not start when the given one has.
	NoiseSS float64
	// MinGain is the least drop of the residual sum of squares that makes
	// a start's fit better (0: any drop beyond rounding). One noise
	// variance (1 with noise weights, σ² without) is the natural unit: two
	// fits whose χ² differ by less than 1 fit the data equally well
	// (Δχ² = 1 bounds one standard error of one parameter; Bevington &
	// Robinson, Data Reduction and Error Analysis, 2003, from memory), and
	// with a baseline such a tie can still move the split between species
	// and baseline far.
	MinGain float64
}

// SearchStarts looks for a better constrained fit than best when best
// stays above the noise: ALS with non-negativity and closure has local
// minima, and two fixed starts (purest variables, EFA) can both fall into
// one. Each further start is a seeded random rotation of the SVD basis,
// C₀ = U_k T with T Gaussian, each column's sign chosen so that its sum is
// positive and negative values then set to zero (the projection onto the
// non-negative profiles); ALS is run to the end from each and the best final
// fit kept (multi-start ALS; random initial estimates as in Jaumot et al.,
// Chemom. Intell. Lab. Syst. 2005, from memory). Deterministic: the same
// seed gives the same starts and, in order, the same choice. It returns the
// best result and how many starts improved on the given one.
func SearchStarts(d Data, best *Result, opt Options, ss StartSearch) (*Result, int, error) {
	if best == nil || ss.Basis == nil {
		return best, 0, nil
	}
	if FitsWithinNoise(best, ss.NoiseSS) {
		return best, 0, nil
	}
	_, r := ss.Basis.Dims()
	_, k := best.C.Dims()
	if r < k {
		return best, 0, nil
	}
	starts := ss.Starts
	if starts <= 0 {
		starts = 8
	}
	if k == 1 {
		// One component: T is a number, and after the sign and the clipping
		// every start is |T| times the same profile max(±u₁, 0). ALS undoes
		// the scale in its first spectra step (and normalising the spectra,
		// or closure, fixes it), so the other starts would repeat the first
		// one's iterations up to rounding: on the ATR series read as single
		// beams (rank 1) they were seven of ten full ALS runs.
		starts = 1
	}
	improved := 0
	for i := 0; i < starts; i++ {
		c0 := randomStart(ss.Basis, k, ss.Seed, i)
		res, err := Resolve(d, c0, opt)
		if err != nil {
			continue // a start that fails says nothing about the others
		}
		if better(res, best, ss.NoiseSS, ss.MinGain) {
			best = res
			improved++
			if FitsWithinNoise(best, ss.NoiseSS) {
				break
			}
		}
	}
	return best, improved, nil
}

// FitsWithinNoise reports whether res fits to within the noise, its residual
// sum of squares at most 1.02 × noiseSS (the sum noise alone leaves, as in
// StartSearch), with no component vanished: then no further start can fit
// better by more than the noise, and SearchStarts tries none. False when
// noiseSS is not positive (not known).
func FitsWithinNoise(res *Result, noiseSS float64) bool {
	return noiseSS > 0 && res.ResidualSS <= 1.02*noiseSS && vanished(res) == 0
}

// randomStart is start i of SearchStarts: U_k T with T Gaussian from the
// seed, each column signed to a positive sum and clipped at zero.
func randomStart(basis *mat.Dense, k int, seed uint64, i int) *mat.Dense {
	n, _ := basis.Dims()
	rng := rand.New(rand.NewPCG(seed, uint64(i)+0x5eed))
	t := mat.NewDense(k, k, nil)
	for a := 0; a < k; a++ {
		for b := 0; b < k; b++ {
			t.Set(a, b, rng.NormFloat64())
		}
	}
	c0 := mat.NewDense(n, k, nil)
	c0.Mul(basis.Slice(0, n, 0, k), t)
	for j := 0; j < k; j++ {
		col := mat.Col(nil, j, c0)
		sum := 0.0
		for _, v := range col {
			sum += v
		}
		sign := 1.0
		if sum < 0 {
			sign = -1
		}
		for q := range col {
			col[q] = math.Max(sign*col[q], 0)
		}
		c0.SetCol(j, col)
	}
	return c0
}

// better says whether a fit beats the best so far: a residual lower by
// more than minGain (and than rounding), or, when both fit to within the
// noise (1.02 × NoiseSS), fewer vanished components. Rank-deficient data
// (closed subsystems) are fitted to the noise with a component dropped as
// well as with all of them, so the residual alone cannot choose there.
func better(a, b *Result, noiseSS, minGain float64) bool {
	if noiseSS > 0 && a.ResidualSS <= 1.02*noiseSS && b.ResidualSS <= 1.02*noiseSS {
		if va, vb := vanished(a), vanished(b); va != vb {
			return va < vb
		}
	}
	return a.ResidualSS < b.ResidualSS-math.Max(minGain, 1e-9*b.ResidualSS)
}

// vanished counts components whose profile or spectrum is zero everywhere.
func vanished(r *Result) int {
	_, k := r.C.Dims()
	out := 0
	for j := 0; j < k; j++ {
		if floatsMaxAbs(mat.Col(nil, j, r.C)) == 0 || floatsMaxAbs(mat.Col(nil, j, r.S)) == 0 {
			out++
		}
	}
	return out
}
