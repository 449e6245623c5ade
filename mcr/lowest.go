package mcr

import "gonum.org/v1/gonum/mat"

// A minor species beside major ones is poorly fixed by non-negativity and closure: with
// D = Σ_q c_q s_qᵀ + c_j s_jᵀ, any α_q ≥ 0 with Σ α_q < 1 gives the same fit and keeps
// closure and non-negative profiles through
//
//	s_j' = (s_j − Σ_q α_q s_q)/(1 − Σ α_q),  c_q' = c_q + α_q c_j,  c_j' = (1 − Σ α_q) c_j,
//
// as long as s_j' ≥ 0 (Σ_q c_q' + c_j' = Σ_q c_q + c_j). When c_j is small the others'
// profiles hardly notice, so the minor spectrum can carry much of their bands (seen:
// cosine 0.49 to the truth with every profile at 0.9997). Options.LeastOthers holds such
// a spectrum at the edge of that family where it has as little of the others as
// non-negativity allows, the lower edge of its feasible range (rotational ambiguity:
// Tauler, J. Chemometrics 2001): the plain chemical reading, a spectrum with only what
// the others cannot explain. It is applied after every spectra step, like the lowering
// onto the baseline, and the profiles step then takes up the α_q c_j.

// takeOthers lowers each column j < k of s with least[j] set: for each other column q < k
// in turn (two rounds), the largest α with s_j − α s_q ≥ 0 at the points of s_q's bands
// (where it reaches half its maximum: in the wings the ratio is set by noise and by the
// zeros non-negativity leaves where a band fades), then
// s_j clipped at zero and scaled by 1/(1 − Σ α) so that closure still holds. A column
// that would be used up (nothing positive left, or Σ α within 10⁻⁶ of 1) is left as it
// was.
func takeOthers(s *mat.Dense, least []bool, k int) {
	for j := 0; j < k && j < len(least); j++ {
		if !least[j] {
			continue
		}
		sj := mat.Col(nil, j, s)
		sum := 0.0
		for round := 0; round < 2; round++ {
			for q := 0; q < k; q++ {
				if q == j {
					continue
				}
				sq := mat.Col(nil, q, s)
				a := largestTake(sj, sq)
				for x := range sj {
					sj[x] -= a * sq[x]
				}
				sum += a
			}
		}
		if !(sum > 0) || sum >= 1-1e-6 || !(floatsMax(sj) > 0) {
			continue
		}
		for x, v := range sj {
			s.Set(x, j, max(v, 0)/(1-sum))
		}
	}
}

// largestTake is min sj/sq over the points where sq reaches half its maximum, at least 0.
func largestTake(sj, sq []float64) float64 {
	top := 0.0
	for _, v := range sq {
		top = max(top, v)
	}
	if !(top > 0) {
		return 0
	}
	a := -1.0
	for x, v := range sq {
		if v >= 0.5*top {
			if r := sj[x] / v; a < 0 || r < a {
				a = r
			}
		}
	}
	return max(a, 0)
}

func floatsMax(x []float64) float64 {
	m := x[0]
	for _, v := range x {
		m = max(m, v)
	}
	return m
}
