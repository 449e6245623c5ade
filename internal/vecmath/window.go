package vecmath

import "math"

// AbsSecondDiffs sets dst[k] = |x[k+2] − 2·x[k+1] + x[k]| for k = 0 …
// len(x)−3, the absolute second differences of a series, each formed as Go
// forms that expression (the doubling, then the subtraction, then the
// addition, each rounded: IEEE 754 rounds each lane alone, so eight lanes
// give the bits one at a time gives), and returns how many it set (0 for
// fewer than three values). dst must hold at least len(x)−2 values.
func AbsSecondDiffs(dst, x []float64) int {
	if len(x) < 3 {
		return 0
	}
	k := len(x) - 2
	dst = dst[:k]
	n := 0
	if useAVX512 {
		n = k &^ 7
		if n > 0 {
			absSecondDiffsAVX512(dst[:n], x[:n+2])
		}
	}
	for i := n; i < k; i++ {
		dst[i] = math.Abs(x[i+2] - 2*x[i+1] + x[i])
	}
	return k
}

// GatherSpare is the number of slots Gather's pick holds beyond the values
// it may receive: eight lanes are stored at a time, whether all are kept or
// not, at the next free slot.
const GatherSpare = 8

// Gather counts the values of c below lo and copies those in [lo, hi] (the
// bounds included) into pick, in the order met, in one pass without a
// branch on the values, for lo and hi positive and finite. ok is false when
// more than len(pick) − GatherSpare values lie in the window, or when c
// holds a value that is negative, −0 or NaN (its order among the others is
// not that of its bit pattern); below and in are then not meaningful.
// Values are compared by their bit patterns, whose order is that of the
// values from +0 to +Inf. pick's slots from in on are overwritten with
// values not kept.
func Gather(c []float64, lo, hi float64, pick []float64) (below, in int, ok bool) {
	const inf = 0x7ff0000000000000 // every larger pattern is negative or NaN
	lob, hib := math.Float64bits(lo), math.Float64bits(hi)
	limit := len(pick) - GatherSpare
	if limit < 0 {
		return 0, 0, false
	}
	n := 0
	if useAVX512 {
		n = len(c) &^ 7
		if n > 0 {
			if below, in, ok = gatherAVX512(c[:n], lob, hib, pick); !ok {
				return 0, 0, false
			}
		}
	}
	top := uint64(0)
	for _, x := range c[n:] {
		// For patterns below 2⁶³ (values ≥ +0) the sign of u − lob says
		// u < lob and that of hib − u says u > hib; a pattern above, any
		// value refused, shows in top. Every value is written to the next
		// free slot, which only a value in the window keeps.
		u := math.Float64bits(x)
		top = max(top, u)
		under, over := int64(u-lob)>>63, int64(hib-u)>>63 // −1 or 0
		below -= int(under)
		pick[min(in, limit)] = x
		in += int(1 + (under | over))
	}
	if top > inf || in > limit {
		return 0, 0, false
	}
	return below, in, true
}
