package pipeline

import (
	"fmt"
	"strings"

	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
)

// A constraint check's freer refit lowers the residual wherever its extra
// freedom lets it: along a species' band the constraint forbids (the data
// disagree with the constraint), or along a factor the rank step named and
// set aside as not a species (a band shift, a baseline, a minor factor),
// which no component carries and which a spectrum freed of its sign takes
// up with a negative lobe. The second is the named factor's cost, not the
// constraint's. alongNamed measures it: both models are resolved again
// with the named factors' spectral directions allowed, with free amounts
// in every spectrum (mcr.NamedRise), and what remains of the rise is
// judged by the same χ² allowance as the rise itself (judgeChecks). The
// comparison stays nested with the same pinned values: both models get
// the same added terms. Holding the fits' profiles and spectra and only
// projecting their residuals onto the directions is not enough: on
// invented data with a solvent band shifting by a point, the projection
// credited the exact derivative direction with 58 % of non-negativity's rise,
// the refit with 99.5 % (the constrained fit bends its components to
// take up what it can of the shift, and only a refit straightens them).

// namedFactors are the spectral directions of the factors the rank step
// named and did not count (band shifts, baselines, minor factors with a
// time vector over the data's rows), and their names in words; nil when
// none. A factor's direction is the data's spectrum along its time vector
// (Dᵀ A u, the spectrum of the factor in the data's units); a band shift
// adds the first and second derivatives of the resolved spectra, what a
// shift or broadening of their bands adds (Taylor to second order,
// s(x − δ) ≈ s(x) − δ s′(x) + δ²/2 s″(x); the span the rank step names a
// band shift by), including the part of the shift whose time course the
// components' profiles share, which the factor's own vector (orthogonal
// to their time courses) leaves out.
func namedFactors(r *Result, data mcr.Data) (*mat.Dense, []string) {
	if r.Chemical == nil || r.ALS == nil || data == nil {
		return nil, nil
	}
	n, _ := data.Dims()
	var us [][]float64
	var names []string
	shift := false
	for _, nf := range r.Chemical.Nuisance {
		if len(nf.Time) != n {
			continue
		}
		switch nf.Kind {
		case svd.NuisanceBandShift:
			names, shift = append(names, fmt.Sprintf("band shift (factor %d)", nf.Factor)), true
		case svd.NuisanceBaseline:
			names = append(names, fmt.Sprintf("baseline drift (factor %d)", nf.Factor))
		case svd.NuisanceMinor:
			names = append(names, fmt.Sprintf("minor factor %d", nf.Factor))
		default:
			continue
		}
		us = append(us, nf.Time)
	}
	if len(us) == 0 {
		return nil, nil
	}
	u := mat.NewDense(n, len(us), nil)
	for j, v := range us {
		u.SetCol(j, v)
	}
	p := data.MulProfiles(u) // m × q
	if shift {
		d1 := derivatives(r.ALS.S)
		var with mat.Dense
		with.Augment(p, d1)
		p = &mat.Dense{}
		p.Augment(&with, derivatives(d1))
	}
	return p, names
}

// derivatives are the first derivatives of the columns of s along the axis
// points (central differences, one-sided at the ends); their scale does not
// matter, only their span.
func derivatives(s *mat.Dense) *mat.Dense {
	m, k := s.Dims()
	out := mat.NewDense(m, k, nil)
	if m < 2 {
		return out
	}
	for j := 0; j < k; j++ {
		for x := 0; x < m; x++ {
			lo, hi := max(0, x-1), min(m-1, x+1)
			out.Set(x, j, (s.At(hi, j)-s.At(lo, j))/float64(hi-lo))
		}
	}
	return out
}

// alongNamed is the part of a check's rise (residual sum of squares, the
// checks' metric) that the named factors' directions take: the rise less
// what remains of it when both models are resolved again with those
// directions allowed (mcr.NamedRise), within [0, rise]. ok is false when
// that refit could not be made (then nothing is credited to them).
func alongNamed(r *Result, data mcr.Data, c mcr.ConstraintCheck, dirs *mat.Dense) (along float64, ok bool) {
	rest, err := mcr.NamedRise(data, r.ALS, r.Constraints.Options, c, dirs, checkIter)
	if err != nil {
		return 0, false
	}
	return rise(c) - min(max(rest, 0), rise(c)), true
}

// namedWords joins the named factors' names: "a", "a and b", "a, b and c".
func namedWords(names []string) string {
	if len(names) < 2 {
		return strings.Join(names, "")
	}
	return strings.Join(names[:len(names)-1], ", ") + " and " + names[len(names)-1]
}
