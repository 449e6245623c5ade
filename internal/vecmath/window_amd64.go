//go:build !purego

package vecmath

// absSecondDiffsAVX512 is AbsSecondDiffs eight at a time: len(dst) is a
// positive multiple of 8 and len(x) = len(dst) + 2.
//
//go:noescape
func absSecondDiffsAVX512(dst, x []float64)

// gatherAVX512 is Gather eight at a time for len(c) a positive multiple of
// 8, with lob and hib the bounds' bit patterns; len(pick) ≥ GatherSpare.
//
//go:noescape
func gatherAVX512(c []float64, lob, hib uint64, pick []float64) (below, in int, ok bool)
