package spectra

import (
	"math"
	"slices"

	"github.com/bandsolve/bandsolve/internal/vecmath"
	"gonum.org/v1/gonum/mat"
)

// A matrix CSV holds one channel per line, its values in time order: while
// a parse worker has a channel's values in hand, contiguous and in cache,
// it can take what the single-beam assembly's first passes otherwise take
// from the n × m matrix (scanBeams, and the noise model's time differences
// and their medians, gathered channel by channel from a row-major matrix):
// each of them is a per-channel quantity, a maximum, a minimum or a median,
// whichever worker computes it. channelScan holds them; the assembly uses
// them when they describe the matrix it is given (usable) and completes
// them with what only it knows (the blank's and reference's unusable
// channels, the detector's ceiling).

// channelScan is what the parse of a single-beam matrix took channel by
// channel (ScanBeams), for values: the same bits scanBeams and
// channelScales give, the unusable channels and a ceiling
// aside (complete adds the first; the second sends the assembly back to
// its own passes).
type channelScan struct {
	values *mat.Dense // the matrix the scan describes, as parsed
	pre    int        // the AssembleOptions.Pre its time differences follow

	chanMax []float64 // largest beam per channel (beamScan.channelMax)
	top     []float64 // brightest positive beam per channel, 0 for none
	step    []float64 // smallest positive change between successive positive beams, +Inf for none
	low     [][]int   // the times (rows) of the beams at or below zero, ascending; nil for none
	own     []float64 // madScale × the median of the channel's time differences (0 when cnt is 0)
	cnt     []int     // how many time differences the median was taken of
}

func newChannelScan(n, m, pre int) *channelScan {
	if pre > n {
		return nil // the assembly refuses such a --pre; it scans nothing
	}
	return &channelScan{pre: pre, chanMax: make([]float64, m), top: make([]float64, m), step: make([]float64, m),
		low: make([][]int, m), own: make([]float64, m), cnt: make([]int, m)}
}

// channel scans channel j, whose beams in time order are x (all finite:
// the parse accepts no other value), with buf (len(x) values) to hold its
// time differences. Only one goroutine scans a given channel. near is the
// scanning goroutine's own: the middle of the last channel's differences
// it scanned, where this channel's median is looked for first
// (middlePairNear), replaced by this channel's.
func (c *channelScan) channel(j int, x, buf []float64, near *float64) {
	if len(x) == 0 {
		c.chanMax[j], c.step[j] = math.Inf(-1), math.Inf(1)
		return
	}
	if vecmath.AllPositiveFinite(x) {
		c.cleanChannel(j, x, buf, near)
		return
	}
	// A channel with beams at or below zero, blind points: each test as
	// scanRow makes it.
	hi, top, step := math.Inf(-1), 0.0, math.Inf(1)
	for i, v := range x {
		if v > hi {
			hi = v
		}
		if v > 0 {
			if v > top {
				top = v
			}
			if i > 0 && x[i-1] > 0 {
				if d := math.Abs(v - x[i-1]); d > 0 && d < step {
					step = d
				}
			}
		} else {
			c.low[j] = append(c.low[j], i)
		}
	}
	c.chanMax[j], c.top[j], c.step[j] = hi, top, step
	observed := func(i int) bool { return x[i] > 0 }
	c.noise(j, x, buf, observed, near)
}

// cleanChannel is channel for positive beams only, the usual channel: its
// largest beam and smallest change in one pass of four lanes
// (vecmath.RaiseAndStep, the maxima and minimum scanCleanRow takes; what
// it raises besides is scratch here).
func (c *channelScan) cleanChannel(j int, x, buf []float64, near *float64) {
	hi, step := x[0], math.Inf(1)
	if len(x) > 1 {
		// buf holds time differences or zeros, never a NaN, which is all
		// RaiseAndStep asks of the values it raises.
		raised := buf[:len(x)-1]
		var h float64
		h, step = vecmath.RaiseAndStep(raised, raised, x[1:], x[:len(x)-1])
		hi = max(hi, h)
	}
	c.chanMax[j], c.top[j], c.step[j] = hi, hi, step
	c.noise(j, x, buf, nil, near)
}

// noise takes channel j's time differences as timeDiffs.fill makes them
// (observed nil: every beam is observed) and their scaled median as
// channelScales takes it.
func (c *channelScan) noise(j int, x, buf []float64, observed func(i int) bool, near *float64) {
	k := 0
	div := math.Sqrt2
	if c.pre >= 2 {
		for i := 1; i < c.pre; i++ {
			if observed == nil || observed(i-1) && observed(i) {
				buf[k] = math.Abs(x[i] - x[i-1])
				k++
			}
		}
	} else {
		const r6 = 2.449489742783178 // √6, as fill returns it
		div = r6
		if observed == nil {
			// Every beam observed: eight second differences at a time,
			// each formed as the loop below forms it.
			k = vecmath.AbsSecondDiffs(buf, x)
		} else {
			for i := 1; i+1 < len(x); i++ {
				if observed(i-1) && observed(i) && observed(i+1) {
					buf[k] = math.Abs(x[i+1] - 2*x[i] + x[i-1])
					k++
				}
			}
		}
	}
	c.cnt[j] = k
	if k > 0 {
		c.own[j] = madScale * medianOverNear(buf[:k], div, near)
	}
}

// usable returns the scan when it describes v (the very matrix it was taken
// from, so neither a subset of its channels nor a resampled copy) with pre
// spectra before the reaction, else nil.
func (c *channelScan) usable(v *mat.Dense, pre int) *channelScan {
	if c == nil || c.values != v || c.pre != pre {
		return nil
	}
	if _, m := v.Dims(); len(c.top) != m {
		return nil
	}
	return c
}

// complete turns the scan (nil: none, ok false) into scanBeams's answer for the unusable channels
// bad (blind in every spectrum, no brightest beam, no step), with the
// channels' own noise scales and counts for runningMAD (zero for bad
// channels, whose every difference touches a blind point). ok is false
// when the beams reach a flat top (a detector ceiling: the blind points
// and the noise must then be taken with it), and the assembly makes its
// own passes.
func (c *channelScan) complete(bad []bool) (sc beamScan, own []float64, cnt []int, ok bool) {
	if c == nil {
		return beamScan{}, nil, nil, false
	}
	v := c.values
	n, m := v.Dims()
	sc = beamScan{maxFinite: math.Inf(-1), channelMax: c.chanMax, top: slices.Clone(c.top), quantum: math.Inf(1)}
	own, cnt = slices.Clone(c.own), slices.Clone(c.cnt)
	for _, x := range c.chanMax {
		if x > sc.maxFinite {
			sc.maxFinite = x
		}
	}
	// The flat top lies in a row holding the largest beam, and such a row
	// holds it in a channel whose largest beam it is (finish's test).
	if sc.maxFinite > 0 {
		for j, x := range c.chanMax {
			if x != sc.maxFinite {
				continue
			}
			for i := 0; i < n; i++ {
				if v.At(i, j) == x && hasRunOf(v.RawRowView(i)[:m], x, 3) {
					return beamScan{}, nil, nil, false
				}
			}
		}
	}
	b := &Blind{Rows: make([][]int, n)}
	for j := 0; j < m; j++ {
		if bad[j] {
			// Blind in every row, ascending as the channels are met.
			for i := range b.Rows {
				b.Rows[i] = append(b.Rows[i], j)
			}
			sc.top[j], own[j], cnt[j] = 0, 0, 0
			continue
		}
		for _, i := range c.low[j] {
			b.Rows[i] = append(b.Rows[i], j)
		}
		sc.quantum = math.Min(sc.quantum, c.step[j])
	}
	for _, r := range b.Rows {
		b.Count += len(r)
	}
	sc.blind = b
	if math.IsInf(sc.quantum, 1) {
		sc.quantum = 0
	}
	return sc, own, cnt, true
}
