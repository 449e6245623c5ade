package spectra

import (
	"math"
	"math/bits"
	"slices"
)

// radixMin is the shortest sample medianInPlace hands to radixOrder: below
// it, clearing the counters costs more than selection by partitioning.
const radixMin = 256

// radixOrder finds the k-th smallest value of c (0-based) and, when below
// is set, the (k−1)-th, by their bits: for values ≥ +0 the IEEE 754 bit
// patterns, read as unsigned integers, sort as the values do (the layout was
// chosen for that: IEEE 754-2008 §3.4). Counting the exponent fields, then
// the next few bits of the fraction among the values with the chosen
// exponent, narrows the k-th down to the few values that share those first
// bits, which are sorted. Each pass over c is a count without comparisons
// to get wrong (the branch-heavy partitions of selectKth mispredict about
// half the time on noise), and the result is the same value, whatever the
// method. ok is false, and c untouched, when c holds a negative value, −0 or
// a NaN.
//
// The counters cost as much as the counting when there are as many of them
// as values: the first pass notes the range of exponents it met, and only
// that range is summed, searched and cleared (a sample of noise spans a
// dozen binades of the 2048); the second counts as many fraction bits as
// give a few values per counter, at most 11.
func radixOrder(c []float64, k int, below bool) (kth, prev float64, ok bool) {
	// Two sets of counters, for alternate values: successive values mostly
	// share a counter, and one set would make each count wait for the last.
	var cnt, alt radixCounters
	lo, hi, ok := countExponents(c, &cnt, &alt)
	if !ok {
		return 0, 0, false
	}
	b1, under, inB1 := exponentBucket(&cnt, &alt, lo, hi, k)
	// The next bits of the values with exponent b1, about four values per
	// counter.
	fb := uint(min(11, max(1, bits.Len(uint(inB1))-2)))
	low := 52 - fb // the bits under the exponent and the fb counted
	nb := uint64(1) << fb
	countFraction(c, &cnt, &alt, b1, fb)
	b2, under2 := bucketOf(cnt[:nb], k-under)
	under += under2
	prefix := b1<<fb | b2
	// When the k-th is the first of its bucket, the (k−1)-th is the largest
	// of the nearest bucket below it with any value: gathered in the same
	// pass when that bucket has the same exponent.
	other := prefix
	if k == under && below {
		other = lowerBucket(cnt[:b2], b1, fb, prefix)
	}
	var small [64]float64
	pick := gatherPrefix(small[:0], c, low, prefix, other)
	slices.Sort(pick)
	r := k - under
	if other != prefix {
		r += int(cnt[other&(nb-1)]) // the lower bucket's values come first
	}
	kth = pick[r]
	switch {
	case !below:
		return kth, 0, true
	case r > 0:
		return kth, pick[r-1], true
	}
	// The k-th is the first value of its exponent: the (k−1)-th is the
	// largest value under it.
	return kth, largestUnder(c, prefix<<low), true
}

const (
	radixInf  = 0x7ff0000000000000 // +Inf: every larger pattern is negative or NaN
	radixSize = 1 << 11            // the exponent field's values, and the most fraction counters
)

// radixCounters are radixOrder's counters; the last takes what is not
// counted.
type radixCounters [radixSize + 1]int32

// countExponents counts c's exponent fields, alternate values in cnt and
// alt, and returns the least and largest bit patterns met; ok is false when
// a pattern is above +Inf's (a negative value, −0 or a NaN).
func countExponents(c []float64, cnt, alt *radixCounters) (lo, hi uint64, ok bool) {
	half := len(c) &^ 1
	lo, hi = uint64(radixInf), uint64(0)
	for i := 0; i < half; i += 2 {
		u, v := math.Float64bits(c[i]), math.Float64bits(c[i+1])
		if u > radixInf || v > radixInf {
			return 0, 0, false
		}
		cnt[u>>52]++
		alt[v>>52]++
		lo, hi = min(lo, u, v), max(hi, u, v)
	}
	if half < len(c) {
		u := math.Float64bits(c[half])
		if u > radixInf {
			return 0, 0, false
		}
		cnt[u>>52]++
		lo, hi = min(lo, u), max(hi, u)
	}
	return lo, hi, true
}

// exponentBucket sums the two sets of exponent counts over the exponents
// met, [lo's, hi's], and returns the exponent b1 of the k-th value, how many
// values have a smaller one, and how many have b1; it leaves both sets
// cleared for the next count.
func exponentBucket(cnt, alt *radixCounters, lo, hi uint64, k int) (b1 uint64, under, inB1 int) {
	e0, e1 := int(lo>>52), int(hi>>52)+1 // the exponents met: [e0, e1)
	for i := e0; i < e1; i++ {
		cnt[i] += alt[i]
	}
	b1, under = bucketOf(cnt[e0:e1], k)
	b1 += uint64(e0)
	inB1 = int(cnt[b1])
	clear(cnt[e0:e1])
	clear(alt[e0:e1])
	return b1, under, inB1
}

// countFraction counts the fb bits under the exponent of the values with
// exponent b1, into cnt[:1<<fb] (alternate values in alt, then summed),
// the others into the counter after them. Without a branch: about half the
// values of noise share the median's exponent, and a branch on it would be
// a coin toss.
func countFraction(c []float64, cnt, alt *radixCounters, b1 uint64, fb uint) {
	low := 52 - fb
	nb := uint64(1) << fb
	sub := func(u uint64) uint64 {
		e := u>>52 ^ b1
		other := (e | -e) >> 63 // 1 when the exponent is not b1
		return (u>>low)&(nb-1)&(other-1) | other<<fb
	}
	half := len(c) &^ 1
	for i := 0; i < half; i += 2 {
		cnt[sub(math.Float64bits(c[i]))]++
		alt[sub(math.Float64bits(c[i+1]))]++
	}
	if half < len(c) {
		cnt[sub(math.Float64bits(c[half]))]++
	}
	for i := range cnt[:nb] {
		cnt[i] += alt[i]
	}
}

// lowerBucket is the prefix (exponent b1, fb fraction bits) of the last of
// the counters cnt (those below the k-th's) that holds a value; prefix
// itself when none does.
func lowerBucket(cnt []int32, b1 uint64, fb uint, prefix uint64) uint64 {
	for b := len(cnt) - 1; b >= 0; b-- {
		if cnt[b] > 0 {
			return b1<<fb | uint64(b)
		}
	}
	return prefix
}

// gatherPrefix appends to pick the values of c whose bits above low are
// prefix or other.
func gatherPrefix(pick, c []float64, low uint, prefix, other uint64) []float64 {
	for _, x := range c {
		if p := math.Float64bits(x) >> low; p == prefix || p == other {
			pick = append(pick, x)
		}
	}
	return pick
}

// largestUnder is the largest value of c whose bit pattern is under lim
// (+0 when none is).
func largestUnder(c []float64, lim uint64) float64 {
	var top uint64
	for _, x := range c {
		if u := math.Float64bits(x); u < lim && u > top {
			top = u
		}
	}
	return math.Float64frombits(top)
}

// bucketOf returns the counter b holding rank k (the k-th value falls in
// bucket b) and how many values lie in the buckets before it.
func bucketOf(cnt []int32, k int) (b uint64, under int) {
	for i, n := range cnt {
		if under+int(n) > k {
			return uint64(i), under
		}
		under += int(n)
	}
	panic("radixOrder: rank beyond the sample")
}

// windowOrder is radixOrder for a few values known to lie in a narrow window
// of bit patterns [lob, hib] (values ≥ +0, as vecmath.Gather gathers them):
// one count of the eight bits under the window's common leading ones, the
// k-th value found in its counter's few values, and the (k−1)-th, when
// below is set, in the same counter or as the largest of the last one
// before it that is not empty: below needs k ≥ 1, a value under the k-th
// among c (middlePairNear asks for it only then). c is reordered. Exact
// order statistics, the values selectKth would give.
func windowOrder(c []float64, lob, hib uint64, k int, below bool) (kth, prev float64) {
	shift := uint(max(0, bits.Len64(hib-lob)-8))
	var cnt [256]uint16
	key := func(x float64) uint8 { return uint8((math.Float64bits(x) - lob) >> shift) }
	for _, x := range c {
		cnt[key(x)]++
	}
	b, before := 0, 0 // the counter of the k-th, and the values in the ones before it
	for before+int(cnt[b]) <= k {
		before += int(cnt[b])
		b++
	}
	// The counter's values to the front of c, in order.
	in := 0
	for i, x := range c {
		if int(key(x)) == b {
			c[in], c[i] = c[i], c[in]
			in++
		}
	}
	slices.Sort(c[:in])
	kth = c[k-before]
	if !below {
		return kth, kth
	}
	if k > before {
		return kth, c[k-before-1]
	}
	pb := b - 1
	for cnt[pb] == 0 {
		pb--
	}
	prev = math.Inf(-1)
	for _, x := range c[in:] {
		if int(key(x)) == pb {
			prev = max(prev, x)
		}
	}
	return kth, prev
}
