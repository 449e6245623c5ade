package spectra

import (
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"testing"

	"github.com/bandsolve/bandsolve/internal/vecmath"
	"gonum.org/v1/gonum/mat"
)

// The direct forms of the noise model, as first written: every difference in
// time held at once, a median per channel of a copy. They are the reference
// the block-wise forms in noise.go are checked against, value for value.

// channelNoise estimates σ per channel from differences in time of v's rows,
// skipping blind points: successive differences over rows [0, pre) when
// pre ≥ 2 (repeats of one state), else second differences over all rows.
// It returns σ per channel, the rounding step and the source in words.
func refChannelNoise(v *mat.Dense, pre int, blind *Blind) ([]float64, float64, string) {
	n, m := v.Dims()
	q := quantum(v, blind)
	diffs := make([][]float64, m) // per channel
	// One buffer for all channels, cut in capacity-limited slices: appends
	// never reallocate (growing m slices by doubling made twice the data
	// in garbage).
	per := max(n-2, 0)
	if pre >= 2 {
		per = pre - 1
	}
	buf := make([]float64, m*per)
	for j := range diffs {
		diffs[j] = buf[j*per : j*per : (j+1)*per]
	}
	src := fmt.Sprintf("second differences in time of all %d spectra", n)
	if pre >= 2 {
		src = fmt.Sprintf("successive differences of the %d pre-reaction spectra, their drift along the axis removed", pre)
		steps := driftFreeSteps(v, successiveRows(pre), blind, false)
		for i := 1; i < pre; i++ {
			st := steps.RawRowView(i - 1)
			for j := 0; j < m; j++ {
				if !blind.Has(i-1, j) && !blind.Has(i, j) {
					diffs[j] = append(diffs[j], math.Abs(st[j])/math.Sqrt2)
				}
			}
		}
	} else {
		refSecondDiffs(v, blind, diffs)
	}
	sig := refPooledRunningMAD(diffs)
	if pre >= 2 && pre-1 < 30 && n-2 >= 30 {
		src += fmt.Sprintf(" for its level; its shape along the axis from second differences in time of all %d spectra", n)
		sig = refPreLevelSeriesShape(v, pre, blind, sig)
	}
	// A channel with no change at all (synthetic data, a clipped region)
	// gets a thousandth of the typical σ, not zero: its weight is large but
	// finite.
	floor := math.Max(q/math.Sqrt(12), 1e-3*median(sig))
	for j := range sig {
		sig[j] = math.Max(sig[j], floor)
	}
	return sig, q, src
}

// refSecondDiffs appends to diffs[j] every |x_{i+1} − 2x_i + x_{i−1}|/√6 of
// channel j that touches no blind point.
func refSecondDiffs(v *mat.Dense, blind *Blind, diffs [][]float64) {
	n, m := v.Dims()
	const r6 = 2.449489742783178 // √6: the variance of x_{i+1} − 2x_i + x_{i−1} is 6σ²
	for i := 1; i+1 < n; i++ {
		a, b, c := v.RawRowView(i-1), v.RawRowView(i), v.RawRowView(i+1)
		for j := 0; j < m; j++ {
			if !blind.Has(i-1, j) && !blind.Has(i, j) && !blind.Has(i+1, j) {
				diffs[j] = append(diffs[j], math.Abs(c[j]-2*b[j]+a[j])/r6)
			}
		}
	}
}

// refPreLevelSeriesShape is the direct form of preLevelSeriesShape: the
// shape is each channel's scale of its second differences in time over all
// spectra, the median of it and its two neighbours; the level the median
// of every pre-reaction step over its channel's shape.
func refPreLevelSeriesShape(v *mat.Dense, pre int, blind *Blind, fallback []float64) []float64 {
	_, m := v.Dims()
	shape := refNarrowShape(v, blind)
	steps := driftFreeSteps(v, successiveRows(pre), blind, false)
	var z []float64
	for j := 0; j < m; j++ {
		for i := 1; i < pre; i++ {
			if shape[j] > 0 && !blind.Has(i-1, j) && !blind.Has(i, j) {
				z = append(z, math.Abs(steps.At(i-1, j))/shape[j])
			}
		}
	}
	if len(z) == 0 {
		return fallback
	}
	level := madScale * medianOver(z, math.Sqrt2)
	out := make([]float64, m)
	for j, x := range shape {
		out[j] = level * x
	}
	return out
}

// refNarrowShape is the direct form of narrowShape: each channel's scale
// of its second differences in time over all spectra, the median of it and
// its two neighbours (the pooled running form where a channel has none).
func refNarrowShape(v *mat.Dense, blind *Blind) []float64 {
	_, m := v.Dims()
	second := make([][]float64, m)
	refSecondDiffs(v, blind, second)
	wide := refPooledRunningMAD(second)
	own := make([]float64, m)
	for j, d := range second {
		if len(d) > 0 {
			own[j] = madScale * median(d)
		}
	}
	shape := make([]float64, m)
	for j := range shape {
		var w []float64
		for l := max(0, j-1); l <= min(m-1, j+1); l++ {
			if len(second[l]) > 0 {
				w = append(w, own[l])
			}
		}
		shape[j] = wide[j]
		if len(second[j]) > 0 && len(w) > 0 {
			shape[j] = median(w)
		}
	}
	return shape
}

// refPooledRunningMAD gives each channel madScale × the median of the absolute
// differences of the channels within a window around it. The window grows
// until it holds at least 400 differences (about 5 % relative error of the
// scale of a normal sample; common practice), at least 5 channels each side
// when every channel has many.
func refPooledRunningMAD(diffs [][]float64) []float64 {
	m := len(diffs)
	out := make([]float64, m)
	per := make([]float64, m) // per-channel median, for channels with plenty
	total := 0
	for j, d := range diffs {
		total += len(d)
		if len(d) > 0 {
			per[j] = madScale * median(d)
		}
	}
	if total == 0 {
		return out
	}
	avg := float64(total) / float64(m)
	const want = 400
	h := 5
	if avg > 0 {
		h = max(h, int(math.Ceil(want/avg/2)))
	}
	h = min(h, m)
	if avg >= 30 {
		// Enough per channel: a running median of the channels' own scales
		// (cheap at thousands of spectra).
		for j := 0; j < m; j++ {
			var w []float64
			for l := max(0, j-h); l <= min(m-1, j+h); l++ {
				if len(diffs[l]) > 0 {
					w = append(w, per[l])
				}
			}
			if len(w) > 0 {
				out[j] = median(w)
			}
		}
		return out
	}
	for j := 0; j < m; j++ {
		var w []float64
		for l := max(0, j-h); l <= min(m-1, j+h); l++ {
			w = append(w, diffs[l]...)
		}
		if len(w) > 0 {
			out[j] = madScale * median(w)
		}
	}
	return out
}

// noiseCases are single beams for the comparisons: many spectra, few
// spectra (the differences pooled over a window), pre-reaction repeats,
// blind points scattered and in whole channels, and channel counts that do
// not fill the last block.
func noiseCases(t *testing.T) []struct {
	name  string
	v     *mat.Dense
	pre   int
	blind *Blind
} {
	t.Helper()
	type c = struct {
		name  string
		v     *mat.Dense
		pre   int
		blind *Blind
	}
	var out []c
	for _, sz := range [][2]int{{60, 400}, {12, 333}, {3, 70}, {300, 130}, {2500, 9}} {
		rng := rand.New(rand.NewPCG(uint64(sz[0]), uint64(sz[1])))
		s := beams(rng, sz[0], sz[1], 5, 1, 0)
		out = append(out, c{fmt.Sprintf("%dx%d", sz[0], sz[1]), s.Values, 0, nil})
		out = append(out, c{fmt.Sprintf("%dx%d pre 3", sz[0], sz[1]), s.Values, min(3, sz[0]), nil})
		// Blind points: a few beams at or below zero, and a dark channel.
		w := mat.DenseCopyOf(s.Values)
		for k := 0; k < sz[0]*sz[1]/50+1; k++ {
			w.Set(rng.IntN(sz[0]), rng.IntN(sz[1]), -1)
		}
		// and a few nearly dark ones, for the weak-beam test.
		for k := 0; k < sz[0]*sz[1]/100+1; k++ {
			i, j := rng.IntN(sz[0]), rng.IntN(sz[1])
			w.Set(i, j, 1e-4*w.At(i, j))
		}
		b := findBlind(w, nil)
		b.addChannel(sz[1] / 2)
		out = append(out, c{fmt.Sprintf("%dx%d blind", sz[0], sz[1]), w, 0, b})
		out = append(out, c{fmt.Sprintf("%dx%d blind pre 3", sz[0], sz[1]), w, min(3, sz[0]), b})
	}
	return out
}

// The block-wise noise model gives the same σ per channel, bit for bit, as
// the direct form that holds every difference (a median is a value of the
// sample whatever order it is taken in).
func TestChannelNoiseMatchesDirectForm(t *testing.T) {
	for _, c := range noiseCases(t) {
		sig, q, src := channelNoise(c.v, c.pre, c.blind)
		want, wq, wsrc := refChannelNoise(c.v, c.pre, c.blind)
		if q != wq || src != wsrc {
			t.Errorf("%s: step %g %q, direct form %g %q", c.name, q, src, wq, wsrc)
		}
		for j := range want {
			if sig[j] != want[j] {
				t.Fatalf("%s: channel %d: σ %v, direct form %v", c.name, j, sig[j], want[j])
			}
		}
	}
}

// fitWeights fits log w_ij = α_i + β_j to the weights w = 1/var(i, j) of
// the observed points by row and column means (the two-way additive model;
// exact in one pass when nothing is blind, the usual approximation with a
// few blind points), then scales it so that Σ w·var = number of observed
// points: the weighted noise then has unit variance on average.
func refFitWeights(n, m int, variance func(i int, out []float64), blind *Blind) *Weights {
	rowSum := make([]float64, n)
	rowCnt := make([]int, n)
	colSum := make([]float64, m)
	colCnt := make([]int, m)
	buf := make([]float64, m)
	grand, cnt := 0.0, 0
	for i := 0; i < n; i++ {
		variance(i, buf)
		for j, v := range buf {
			if blind.Has(i, j) || !(v > 0) || math.IsInf(v, 0) {
				continue
			}
			l := -math.Log(v)
			rowSum[i] += l
			rowCnt[i]++
			colSum[j] += l
			colCnt[j]++
			grand += l
			cnt++
		}
	}
	if cnt == 0 {
		// No noise measured (identical or noiseless spectra): no weights,
		// and the factor analysis estimates σ itself.
		return nil
	}
	w := &Weights{Row: make([]float64, n), Col: make([]float64, m)}
	g := grand / float64(cnt)
	for j := range w.Col {
		if colCnt[j] > 0 {
			w.Col[j] = math.Exp(colSum[j] / float64(colCnt[j]))
		}
	}
	for i := range w.Row {
		if rowCnt[i] > 0 {
			w.Row[i] = math.Exp(rowSum[i]/float64(rowCnt[i]) - g)
		}
	}
	// Scale: mean of a_i b_j var_ij over the observed points = 1.
	s, c := 0.0, 0
	for i := 0; i < n; i++ {
		variance(i, buf)
		for j, v := range buf {
			if blind.Has(i, j) || !(v > 0) || math.IsInf(v, 0) {
				continue
			}
			s += w.Row[i] * w.Col[j] * v
			c++
		}
	}
	if s > 0 {
		f := float64(c) / s
		for j := range w.Col {
			w.Col[j] *= f
		}
	}
	floorWeights(w.Row)
	floorWeights(w.Col)
	return w
}

// The weights of several variance models fitted in shared passes are, bit
// for bit, those of each fitted on its own by the direct form, with and
// without blind points.
func TestFitWeightsMatchesDirectForm(t *testing.T) {
	for _, c := range noiseCases(t) {
		n, m := c.v.Dims()
		sig, _, _ := channelNoise(c.v, c.pre, c.blind)
		beam := func(i int, o []float64) {
			row := c.v.RawRowView(i)
			for j := range o {
				o[j] = sq(sig[j]/row[j]) / 5.3
			}
		}
		flat := func(i int, o []float64) {
			for j := range o {
				o[j] = sig[j] * sig[j] * float64(1+i%3)
			}
		}
		got := fitWeights(n, m, c.blind, beam, flat)
		for f, v := range []func(int, []float64){beam, flat} {
			want := refFitWeights(n, m, v, c.blind)
			if (want == nil) != (got[f] == nil) {
				t.Fatalf("%s, model %d: weights %v, direct form %v", c.name, f, got[f], want)
			}
			for i := range want.Row {
				if got[f].Row[i] != want.Row[i] {
					t.Fatalf("%s, model %d: row %d: %v, direct form %v", c.name, f, i, got[f].Row[i], want.Row[i])
				}
			}
			for j := range want.Col {
				if got[f].Col[j] != want.Col[j] {
					t.Fatalf("%s, model %d: channel %d: %v, direct form %v", c.name, f, j, got[f].Col[j], want.Col[j])
				}
			}
		}
	}
}

// The two fits of the single-beam assembly, their logarithms formed with
// the variances (vecmath.LogQuoSquares, whose flag lets a row whose every
// logarithm is finite skip the tests per value), give, bit for bit, the
// weights of each variance model fitted on its own by the direct form: with
// and without blind points, and with a row whose variance overflows at a
// point that is not blind (a beam of 1e-300: (σ/I)² = +Inf, log +Inf), left
// out of the fit by the test the flag spares the other rows.
func TestFitWeightsWithLogsMatchesDirectForm(t *testing.T) {
	const ln10sq = math.Ln10 * math.Ln10
	for _, c := range noiseCases(t) {
		n, m := c.v.Dims()
		sig, _, _ := channelNoise(c.v, c.pre, c.blind)
		v := mat.DenseCopyOf(c.v)
		if n > 2 && !c.blind.Has(1, m-1) {
			v.Set(1, m-1, 1e-300)
		}
		refVar := make([]float64, m)
		for j := range refVar {
			refVar[j] = sq(sig[j]/v.At(0, 0)) / 3
		}
		vars := func(i int, o []float64) {
			vecmath.QuoSquares(o[:m], o[m:2*m], sig, v.RawRowView(i), refVar, ln10sq)
		}
		logVars := func(i int, o []float64) bool {
			return vecmath.LogQuoSquares(o[:m], o[m:2*m], sig, v.RawRowView(i), refVar, ln10sq)
		}
		got, _ := fitWeightsReusing(newRowPieces(2*m), n, m, 2, c.blind, vars, logVars)
		for f := range 2 {
			one := func(i int, o []float64) {
				buf := make([]float64, 2*m)
				vars(i, buf)
				copy(o, buf[f*m:(f+1)*m])
			}
			want := refFitWeights(n, m, one, c.blind)
			if (want == nil) != (got[f] == nil) {
				t.Fatalf("%s, model %d: weights %v, direct form %v", c.name, f, got[f], want)
			}
			if want != nil && (!vecmath.SameBits(got[f].Row, want.Row) || !vecmath.SameBits(got[f].Col, want.Col)) {
				t.Fatalf("%s, model %d: weights differ from the direct form", c.name, f)
			}
		}
	}
}

// Weak and overweighted points are added by their definitions: a point is
// added when it meets the test and is not blind already, and every row stays
// ascending without repeats.
func TestBlindAdditionsByDefinition(t *testing.T) {
	for _, c := range noiseCases(t) {
		if c.blind == nil {
			continue
		}
		n, m := c.v.Dims()
		sig, _, _ := channelNoise(c.v, c.pre, c.blind)
		before := &Blind{Rows: make([][]int, n), Count: c.blind.Count}
		for i, r := range c.blind.Rows {
			before.Rows[i] = append([]int(nil), r...)
		}
		b := &Blind{Rows: make([][]int, n), Count: before.Count}
		for i, r := range before.Rows {
			b.Rows[i] = append([]int(nil), r...)
		}
		// Thresholds raised so that the tests pick some points.
		loud := make([]float64, m)
		for j := range loud {
			loud[j] = 3e3 * sig[j]
		}
		top := make([]float64, m)
		for i := 0; i < n; i++ {
			for j := 0; j < m; j++ {
				if x := c.v.At(i, j); x > top[j] && !before.Has(i, j) {
					top[j] = x
				}
			}
		}
		b.addWeakBelow(c.v, loud, top)
		count := before.Count
		for i := 0; i < n; i++ {
			for j := 0; j < m; j++ {
				x := c.v.At(i, j)
				weak := x <= weakSigmas*loud[j] && x < weakBeamFraction*top[j]
				if weak && !before.Has(i, j) {
					count++
				}
				if want := before.Has(i, j) || weak; b.Has(i, j) != want {
					t.Fatalf("%s: point %d,%d blind %v after addWeakBelow, want %v", c.name, i, j, b.Has(i, j), want)
				}
			}
			for k := 1; k < len(b.Rows[i]); k++ {
				if b.Rows[i][k] <= b.Rows[i][k-1] {
					t.Fatalf("%s: row %d not ascending: %v", c.name, i, b.Rows[i])
				}
			}
		}
		if b.Count != count {
			t.Errorf("%s: count %d after addWeakBelow, want %d", c.name, b.Count, count)
		}
		w := &Weights{Row: make([]float64, n), Col: make([]float64, m)}
		for i := range w.Row {
			w.Row[i] = 1 + float64(i%5)
		}
		for j := range w.Col {
			w.Col[j] = 1 / sq(sig[j])
		}
		variance := func(i int, o []float64) {
			for j := range o {
				o[j] = sq(sig[j]) * float64(1+(i*7+j)%300) / 10
			}
		}
		mid := &Blind{Rows: make([][]int, n), Count: b.Count}
		for i, r := range b.Rows {
			mid.Rows[i] = append([]int(nil), r...)
		}
		added := b.addOverweighted(w, variance)
		count, any := mid.Count, false
		buf := make([]float64, m)
		for i := 0; i < n; i++ {
			variance(i, buf)
			for j := 0; j < m; j++ {
				over := w.Row[i]*w.Col[j]*buf[j] > overweighted
				if over && !mid.Has(i, j) {
					count++
					any = true
				}
				if want := mid.Has(i, j) || over; b.Has(i, j) != want {
					t.Fatalf("%s: point %d,%d blind %v after addOverweighted, want %v", c.name, i, j, b.Has(i, j), want)
				}
			}
			for k := 1; k < len(b.Rows[i]); k++ {
				if b.Rows[i][k] <= b.Rows[i][k-1] {
					t.Fatalf("%s: row %d not ascending: %v", c.name, i, b.Rows[i])
				}
			}
		}
		if mid.Count == before.Count || b.Count == mid.Count && n*m > 1000 {
			t.Errorf("%s: %d blind points before, %d after addWeakBelow, %d after addOverweighted: the case tests nothing", c.name, before.Count, mid.Count, b.Count)
		}
		if b.Count != count || added != any {
			t.Errorf("%s: count %d (added %v) after addOverweighted, want %d (%v)", c.name, b.Count, added, count, any)
		}
	}
}

// The noise model's parallel parts (channels in blocks for the medians, rows
// in blocks for the weights' logarithms and the overweighted points) give
// the direct forms' values bit for bit at GOMAXPROCS 1, 2 and 3, on a case
// large enough to be cut into several blocks, with blind points.
func TestNoiseModelSameAtAnyGOMAXPROCS(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	n, m := 300, 1000
	s := beams(rng, n, m, 5, 1, 0)
	w := mat.DenseCopyOf(s.Values)
	for k := 0; k < n*m/200; k++ {
		w.Set(rng.IntN(n), rng.IntN(m), -1)
	}
	if rowBlock(m) >= n || diffBlock(n-2) >= m {
		t.Fatalf("case too small for several blocks: %d rows, %d channels per block", rowBlock(m), diffBlock(n-2))
	}
	blind := findBlind(w, nil)
	wantSig, _, _ := refChannelNoise(w, 0, blind)
	beam := func(i int, o []float64) {
		row := w.RawRowView(i)
		for j := range o {
			o[j] = sq(wantSig[j]/row[j]) / 5.3
		}
	}
	flat := func(i int, o []float64) {
		for j := range o {
			o[j] = wantSig[j] * wantSig[j] * float64(1+i%3)
		}
	}
	want := []*Weights{refFitWeights(n, m, beam, blind), refFitWeights(n, m, flat, blind)}
	var wantOver *Blind
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	for _, procs := range []int{1, 2, 3} {
		runtime.GOMAXPROCS(procs)
		sig, _, _ := channelNoise(w, 0, blind)
		if !vecmath.SameBits(sig, wantSig) {
			t.Fatalf("GOMAXPROCS %d: σ per channel differs from the direct form", procs)
		}
		got := fitWeights(n, m, blind, beam, flat)
		for f := range want {
			if !vecmath.SameBits(got[f].Row, want[f].Row) || !vecmath.SameBits(got[f].Col, want[f].Col) {
				t.Fatalf("GOMAXPROCS %d, model %d: weights differ from the direct form", procs, f)
			}
		}
		b := &Blind{Rows: make([][]int, n), Count: blind.Count}
		for i, r := range blind.Rows {
			b.Rows[i] = slices.Clone(r)
		}
		// A threshold low enough to mark some points.
		lo := &Weights{Row: got[0].Row, Col: make([]float64, m)}
		for j := range lo.Col {
			lo.Col[j] = 30 * got[0].Col[j]
		}
		b.addOverweighted(lo, beam)
		if wantOver == nil {
			wantOver = b
			if b.Count == blind.Count {
				t.Fatal("no point overweighted: the case tests nothing")
			}
		} else if b.Count != wantOver.Count || !slices.EqualFunc(b.Rows, wantOver.Rows, slices.Equal) {
			t.Fatalf("GOMAXPROCS %d: overweighted points differ from GOMAXPROCS 1", procs)
		}
	}
}

// The maxima and brightest observed beams taken in the pass that finds the
// blind points are those of the direct forms (a loop over every value, as
// the saturation warning and the weak-beam test first took them), with beams at or below
// zero, a flat top at the detector's ceiling and an unusable channel.
func TestBlindPassMaximaMatchDirectForm(t *testing.T) {
	for _, c := range noiseCases(t) {
		n, m := c.v.Dims()
		w := mat.DenseCopyOf(c.v)
		bad := make([]bool, m)
		bad[m/3] = true
		ceil := 0.0
		if m >= 8 {
			// A flat top: the largest beam in three neighbouring channels.
			ceil = 2 * mat.Max(w)
			for j := 2; j < 5; j++ {
				w.Set(n/2, j, ceil)
			}
		}
		top, channel := beamMaxima(w)
		if got := flatTop(w, top); got != ceil {
			t.Fatalf("%s: ceiling %g, want %g", c.name, got, ceil)
		}
		b, bright := findBlindTops(w, bad, ceil)
		wantTop, wantBright := math.Inf(-1), make([]float64, m)
		for i := 0; i < n; i++ {
			for j := 0; j < m; j++ {
				x := w.At(i, j)
				if x > wantTop && !math.IsInf(x, 0) {
					wantTop = x
				}
				blind := !(x > 0) || math.IsInf(x, 0) || (ceil > 0 && x == ceil) || bad[j]
				if b.Has(i, j) != blind {
					t.Fatalf("%s: point %d,%d blind %v, want %v", c.name, i, j, b.Has(i, j), blind)
				}
				if !blind && x > wantBright[j] {
					wantBright[j] = x
				}
			}
		}
		if top != wantTop {
			t.Errorf("%s: largest beam %g, want %g", c.name, top, wantTop)
		}
		for j := 0; j < m; j++ {
			want := math.Inf(-1)
			for i := 0; i < n; i++ {
				if x := w.At(i, j); x > want {
					want = x
				}
			}
			if channel[j] != want || bright[j] != wantBright[j] {
				t.Fatalf("%s: channel %d largest %g and brightest observed %g, want %g and %g", c.name, j, channel[j], bright[j], want, wantBright[j])
			}
		}
	}
}

// The bound per row that the scale pass of fitWeightsJoint leaves lets
// addOverweighted pass over rows without changing what it marks: on the
// noise cases, with single-beam variances as assembleSingleBeams makes them
// (absorbance σ²: (σ_I/I)²/ln²10, plus a reference's share for differences),
// every observed point's a_i·b_j·var_ij with the final weights is within its
// row's bound, and the blind points added are those of the pass over every
// row (the direct form).
func TestOverweightedBoundKeepsTheMarks(t *testing.T) {
	const ln10sq = math.Ln10 * math.Ln10
	marked, skipped := false, false
	for _, c := range noiseCases(t) {
		if c.blind == nil {
			continue
		}
		n, m := c.v.Dims()
		sig, _, _ := channelNoise(c.v, c.pre, c.blind)
		refVar := make([]float64, m)
		for j := range refVar {
			refVar[j] = sq(sig[j]/math.Abs(c.v.At(0, j))) / 3
		}
		absVar := func(i int, o []float64) {
			for j, x := range c.v.RawRowView(i) {
				o[j] = sq(sig[j]/x) / ln10sq
			}
		}
		vars := func(i int, o []float64) {
			for j, x := range c.v.RawRowView(i) {
				r := sq(sig[j] / x)
				o[j], o[m+j] = (r+refVar[j])/ln10sq, r/ln10sq
			}
		}
		w, peak := fitWeightsJoint(n, m, 2, c.blind, vars)
		if w[0] == nil || peak == nil {
			t.Fatalf("%s: no weights or no bounds", c.name)
		}
		buf := make([]float64, m)
		for i := 0; i < n; i++ {
			absVar(i, buf)
			for j, v := range buf {
				if p := w[0].Row[i] * w[0].Col[j] * v; !c.blind.Has(i, j) && v > 0 && p > peak[i] {
					t.Fatalf("%s: point %d,%d product %g above its row's bound %g", c.name, i, j, p, peak[i])
				}
			}
			skipped = skipped || peak[i] <= overweighted
		}
		copyBlind := func() *Blind {
			b := &Blind{Rows: make([][]int, n), Count: c.blind.Count}
			for i, r := range c.blind.Rows {
				b.Rows[i] = append([]int(nil), r...)
			}
			return b
		}
		all, bounded := copyBlind(), copyBlind()
		a1, a2 := all.addOverweighted(w[0], absVar), bounded.addOverweightedIn(w[0], absVar, peak)
		if a1 != a2 || all.Count != bounded.Count || !slices.EqualFunc(all.Rows, bounded.Rows, slices.Equal[[]int]) {
			t.Fatalf("%s: bounded pass added %v (%d blind), the pass over every row %v (%d)", c.name, a2, bounded.Count, a1, all.Count)
		}
		marked = marked || a1
	}
	if !marked || !skipped {
		t.Errorf("no case marked a point (%v) or let a row be passed over (%v): the test tests nothing", marked, skipped)
	}
}

// findBlind is the blind-point pass as the assembly makes it, the
// detector's ceiling found first.
func findBlind(v *mat.Dense, badChannel []bool) *Blind {
	top, _ := beamMaxima(v)
	b, _ := findBlindTops(v, badChannel, flatTop(v, top))
	return b
}

// The one pass of scanBeams gives what the separate passes give (beamMaxima,
// flatTop, findBlindTops, quantum: the reference, each checked against a loop
// over every value in TestBlindPassMaximaMatchDirectForm and
// TestChannelNoiseMatchesDirectForm), value for value, at any GOMAXPROCS: on
// the noise cases, rounded to a step (a quantum to find), with beams at or
// below zero, +Inf and NaN, an unusable channel, a flat top at the largest
// beam (the passes are made again with the ceiling) and a largest beam that
// comes only twice in a row (no ceiling), or three times but not in a row.
func TestScanBeamsMatchesSeparatePasses(t *testing.T) {
	type variant struct {
		name string
		edit func(w *mat.Dense)
	}
	top := func(w *mat.Dense) float64 { return 2 * mat.Max(w) }
	variants := []variant{
		{"as is", func(w *mat.Dense) {}},
		{"rounded", func(w *mat.Dense) {
			w.Apply(func(_, _ int, x float64) float64 { return 0.25 * math.Round(4*x) }, w)
		}},
		{"odd values", func(w *mat.Dense) {
			n, m := w.Dims()
			w.Set(0, 0, math.Inf(1))
			w.Set(n-1, m-1, math.NaN())
			w.Set(n/2, m/2, 0)
			w.Set(n/3, m/4, math.Inf(-1))
		}},
		{"steps at blind points", func(w *mat.Dense) {
			// The smallest changes go from a beam at or below zero to a
			// dim one and back: the step must not be taken from them.
			n, m := w.Dims()
			w.Set(n/2-1, m/2, -1e-9)
			w.Set(n/2, m/2, 1e-9)
			w.Set(n/2, m/2+1, 2e-9)
			w.Set(n/2+1, m/2+1, -2e-9)
		}},
		{"steps in the unusable channel", func(w *mat.Dense) {
			// The smallest changes of all in the channel set aside.
			n, m := w.Dims()
			for i := 0; i < n; i++ {
				w.Set(i, m/3, 1000+1e-6*float64(i))
			}
		}},
		{"flat top", func(w *mat.Dense) {
			n, m := w.Dims()
			c := top(w)
			for j := m / 2; j < m/2+3; j++ {
				w.Set(n/2, j, c)
			}
		}},
		{"top twice", func(w *mat.Dense) {
			n, m := w.Dims()
			c := top(w)
			w.Set(n-1, m-2, c)
			w.Set(n-1, m-1, c)
		}},
		{"top thrice apart", func(w *mat.Dense) {
			n, m := w.Dims()
			c := top(w)
			w.Set(n/2, 0, c)
			w.Set(n/2, 1, c)
			w.Set(n/2, 3, c)
			w.Set(0, m-1, c) // and in another row
		}},
	}
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	for _, c := range noiseCases(t) {
		_, m := c.v.Dims()
		if m < 5 {
			continue
		}
		for _, vr := range variants {
			w := mat.DenseCopyOf(c.v)
			vr.edit(w)
			bad := make([]bool, m)
			bad[m/3] = true
			wantTop, wantChannel := beamMaxima(w)
			ceil := flatTop(w, wantTop)
			if (vr.name == "flat top") != (ceil > 0) {
				t.Fatalf("%s %s: ceiling %g: the case does not test what it says", c.name, vr.name, ceil)
			}
			wantBlind, wantBright := findBlindTops(w, bad, ceil)
			wantQ := quantum(w, wantBlind)
			if vr.name == "rounded" && !(wantQ >= 0.25) {
				t.Fatalf("%s: step %g of data rounded to 0.25", c.name, wantQ)
			}
			for _, procs := range []int{1, 2, 3} {
				runtime.GOMAXPROCS(procs)
				got := scanBeams(w, bad)
				where := fmt.Sprintf("%s %s GOMAXPROCS %d", c.name, vr.name, procs)
				if got.maxFinite != wantTop || got.ceiling != ceil || got.quantum != wantQ {
					t.Fatalf("%s: largest %g, ceiling %g, step %g; separate passes %g, %g, %g", where, got.maxFinite, got.ceiling, got.quantum, wantTop, ceil, wantQ)
				}
				if got.blind.Count != wantBlind.Count || !slices.EqualFunc(got.blind.Rows, wantBlind.Rows, slices.Equal) {
					t.Fatalf("%s: %d blind points, separate passes %d (or other points)", where, got.blind.Count, wantBlind.Count)
				}
				for j := 0; j < m; j++ {
					if got.channelMax[j] != wantChannel[j] || got.top[j] != wantBright[j] {
						t.Fatalf("%s: channel %d largest %g and brightest observed %g, separate passes %g and %g", where, j, got.channelMax[j], got.top[j], wantChannel[j], wantBright[j])
					}
				}
			}
		}
	}
}

// successiveRows are rows 0 … pre−1: the pre-reaction spectra's steps when
// every one has data.
func successiveRows(pre int) []int {
	rows := make([]int, pre)
	for i := range rows {
		rows[i] = i
	}
	return rows
}
