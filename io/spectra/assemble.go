package spectra

import (
	"fmt"
	"math"
	"math/bits"
	"runtime"
	"sort"
	"strconv"
	"strings"
	"sync"

	"github.com/bandsolve/bandsolve/internal/fanout"
	"github.com/bandsolve/bandsolve/internal/fresh"
	"github.com/bandsolve/bandsolve/internal/vecmath"
	"gonum.org/v1/gonum/mat"
)

// Kind of the values in the input files.
type Kind string

const (
	SingleBeam Kind = "single-beam" // detector intensity I(ν)
	Absorbance Kind = "absorbance"  // A(ν) against some background
	Difference Kind = "difference"  // ΔA(ν) already ratioed against the start
	// Transmittance T(ν) = I/I0 as a fraction or in per cent: read as
	// absorbance A = −log10 T (TransmittanceToAbsorbance), never assembled
	// as it is.
	Transmittance Kind = "transmittance"
)

// ParseKind checks a --kind value.
func ParseKind(s string) (Kind, error) {
	switch Kind(s) {
	case SingleBeam, Absorbance, Difference, Transmittance:
		return Kind(s), nil
	}
	return "", fmt.Errorf("%q: use single-beam, absorbance, transmittance or difference", s)
}

// Reference says which state difference spectra are taken against.
type Reference struct {
	Mean int       // average of the first Mean spectra (first = 1)
	File *Spectrum // or a separately recorded spectrum of the same kind
	// Rows, when File is nil and Rows is not empty, are the series' own
	// spectra (0-based) averaged instead of the first Mean: a reference
	// named by its file that is one of the series' spectra.
	Rows []int
}

// ParseReference reads --reference first|mean:N|FILE (FILE read by caller).
func ParseReference(s string) (mean int, file string, err error) {
	switch {
	case s == "" || s == "first":
		return 1, "", nil
	case strings.HasPrefix(s, "mean:"):
		n, err := strconv.Atoi(strings.TrimPrefix(s, "mean:"))
		if err != nil || n < 1 {
			return 0, "", fmt.Errorf("reference %q: mean:N needs a whole number N ≥ 1 of spectra to average", s)
		}
		return n, "", nil
	}
	return 0, s, nil
}

// Assembled is the data ready for factor analysis.
type Assembled struct {
	// Absolute is A(t) = −log10(I(t)/I_blank) (or the absorbance input);
	// nil when only differences are known.
	Absolute *mat.Dense
	// Difference is ΔA(t) against the reference state; rows inside the
	// reference (ReferenceRows) are the reference's own deviation.
	Difference *mat.Dense
	// ReferenceRows are the rows averaged into the reference (none when the
	// reference came from a file or with difference input).
	ReferenceRows []int
	Notes         []string
	// Warnings are faults of the data that do not stop the analysis, such
	// as a saturated band (see saturationWarnings).
	Warnings []string
	// AbsoluteWeights and DifferenceWeights are the noise weights of
	// Absolute and Difference (noise.go); nil when that matrix is nil.
	AbsoluteWeights, DifferenceWeights *Weights
	// Blind holds the points with no usable light (missing, weight zero);
	// their values in Absolute and Difference are placeholders.
	Blind *Blind
	// Noise says how the noise was estimated.
	Noise Noise
	// ReferenceVariance is the absorbance variance of the reference state
	// per channel, (σ_I/I_ref)²/(n_ref ln²10), the share of every
	// difference spectrum's variance that is one fixed pattern common to
	// all of them (single beams only; nil otherwise; +Inf where no beam
	// of the reference is observed). The fit's noise-alone figures need it
	// apart: a resolution absorbs most of a common pattern.
	ReferenceVariance []float64
	// Finite is true when every value of Absolute and Difference is known
	// to be finite (single beams: checked as the absorbances were formed);
	// false says nothing either way.
	Finite bool
	// AbsoluteTop is the largest value of Absolute per channel (a NaN
	// counts for nothing), taken as it was formed; nil when not taken.
	AbsoluteTop []float64
	// BlankOffset marks the channels where the blank stood at the
	// detector's ceiling and the sample's measured points were kept
	// (AssembleOptions.BlankOffsetFree): Absolute there is the absorbance
	// against the ceiling, low by one unknown amount per channel, the same
	// in every spectrum. nil when there is none.
	BlankOffset []bool
}

// AssembleOptions gather what assembly needs besides the series.
type AssembleOptions struct {
	Kind      Kind
	Blank     []float64 // single beam on the data's axis, nil if none
	Reference Reference
	// BlankSource names the blank's file in messages ("blank" if empty).
	BlankSource string
	// Pre is the number of spectra recorded before the reaction started
	// (--pre): their successive differences give the noise when ≥ 2.
	Pre int
	// Consume lets the result take over the series' values matrix (the
	// absolute or the difference matrix is computed in its place) and sets
	// s.Values to nil: one matrix fewer in memory, which matters when the
	// data are gigabytes and the single beams are not needed afterwards.
	Consume bool
	// BlankOffsetFree keeps the sample's points under the ceiling where the
	// blank is at the detector's ceiling, instead of making those channels
	// blind in every spectrum: set it only when the resolution absorbs a
	// per-channel offset constant in time (species with closure; see
	// keepClippedBlank).
	BlankOffsetFree bool
}

// onDataAxis checks that the blank and a reference file have one value per
// channel of the data: the kernels that ratio a row against them run to the
// row's length, and a shorter spectrum would be read as zeros (copy stops
// early), a longer one would write past the row.
func onDataAxis(m int, opt AssembleOptions) error {
	if opt.Blank != nil && len(opt.Blank) != m {
		src := opt.BlankSource
		if src == "" {
			src = "blank"
		}
		return fmt.Errorf("%s has %d points and the data %d: put it on the data's axis first (spectra.OnAxis)", src, len(opt.Blank), m)
	}
	if f := opt.Reference.File; f != nil && len(f.Values) != m {
		return fmt.Errorf("reference spectrum has %d points and the data %d: put it on the data's axis first (spectra.OnAxis)", len(f.Values), m)
	}
	return nil
}

// Assemble builds absorbance and difference matrices from the series.
// For single beams A = −log10(I/I_blank) and ΔA = −log10(I/I_ref) with I_ref
// the reference single beam; the blank cancels in ΔA (a ratio of ratios), so
// ΔA does not depend on it. For absorbance input ΔA = A − A_ref. Identical
// spectra give exactly zero, because log10(x/x) = log10(1) = 0 exactly.
func Assemble(s *Series, opt AssembleOptions) (*Assembled, error) {
	n, m := s.Values.Dims()
	if err := onDataAxis(m, opt); err != nil {
		return nil, err
	}
	out := &Assembled{}
	ref := make([]float64, m)
	if opt.Reference.File != nil {
		copy(ref, opt.Reference.File.Values)
	} else if opt.Kind != Difference {
		rows, err := referenceRows(opt.Reference, n)
		if err != nil {
			return nil, err
		}
		out.ReferenceRows = rows
	}
	switch opt.Kind {
	case SingleBeam:
		if err := assembleSingleBeams(s, opt, ref, out); err != nil {
			return nil, err
		}
	case Absorbance:
		if opt.Blank != nil {
			return nil, fmt.Errorf("a blank single beam goes with --kind single-beam; absorbance input is already ratioed")
		}
		if err := assembleAbsorbances(s, opt, ref, out); err != nil {
			return nil, err
		}
	case Difference:
		if opt.Blank != nil {
			return nil, fmt.Errorf("a blank single beam goes with --kind single-beam; difference input is already ratioed")
		}
		blind, sigma, q, src, sampling := absorbanceNoise(s.Values, s.Times, opt.Pre)
		if err := mostlyBlind(s, blind); err != nil {
			return nil, err
		}
		sn := measureSpectrumNoise(s.Values, s.Times, sigma, blind, opt.Pre)
		out.Noise = Noise{Level: median(sigma), Unit: "absorbance", Source: src, Channel: sigma, Quantum: q, Spectra: sn, Sampling: sampling}
		out.DifferenceWeights = inputWeights(n, sigma, sn, blind)
		if opt.Consume {
			out.Difference = s.Values
		} else {
			out.Difference = mat.DenseCopyOf(s.Values)
		}
		fillBlind(out.Difference, blind, s.Times)
		out.Blind = blind
		out.Notes = append(out.Notes, absorbanceBlindNotes(s, blind)...)
		if opt.Reference.File != nil {
			out.Notes = append(out.Notes, "difference input: the reference file is not used")
		}
	default:
		_, err := ParseKind(string(opt.Kind))
		return nil, fmt.Errorf("kind %w", err)
	}
	if opt.Consume {
		s.Values = nil
	}
	return out, nil
}

// assembleAbsorbances is Assemble for absorbance input: blind points and
// the noise model (absorbanceNoise), the reference over the observed values,
// ΔA = A − A_ref, and placeholders at the blind points of both matrices.
func assembleAbsorbances(s *Series, opt AssembleOptions, ref []float64, out *Assembled) error {
	n, m := s.Values.Dims()
	blind, sigma, q, src, sampling := absorbanceNoise(s.Values, s.Times, opt.Pre)
	if err := mostlyBlind(s, blind); err != nil {
		return err
	}
	if opt.Reference.File == nil {
		if blind == nil {
			meanRows(s.Values, out.ReferenceRows, ref)
		} else if observedReference(s.Values, out.ReferenceRows, blind, ref) {
			sigma, q, src, sampling = channelNoiseSpaced(s.Values, lineWeights(s.Times), opt.Pre, blind)
		}
	}
	sn := measureSpectrumNoise(s.Values, s.Times, sigma, blind, opt.Pre)
	out.Noise = Noise{Level: median(sigma), Unit: "absorbance", Source: src, Channel: sigma, Quantum: q, Spectra: sn, Sampling: sampling}
	out.AbsoluteWeights = inputWeights(n, sigma, sn, blind)
	out.DifferenceWeights = out.AbsoluteWeights
	if opt.Consume {
		out.Absolute = s.Values
	} else {
		out.Absolute = mat.DenseCopyOf(s.Values)
	}
	out.Difference = fresh.Overwritten(n, m) // every value is written below
	for i := 0; i < n; i++ {
		row := s.Values.RawRowView(i)
		dst := out.Difference.RawRowView(i)
		for j := range row {
			dst[j] = row[j] - ref[j]
		}
	}
	fillBlind(out.Absolute, blind, s.Times)
	fillBlind(out.Difference, blind, s.Times)
	out.Blind = blind
	out.Notes = append(out.Notes, absorbanceBlindNotes(s, blind)...)
	return nil
}

// referenceRows are the rows of a series of n spectra averaged into its
// reference: ref.Rows when given, else the first ref.Mean (at least one).
func referenceRows(ref Reference, n int) ([]int, error) {
	if len(ref.Rows) > 0 {
		for _, i := range ref.Rows {
			if i < 0 || i >= n {
				return nil, fmt.Errorf("reference spectrum %d: the data has %d spectra", i+1, n)
			}
		}
		return append([]int(nil), ref.Rows...), nil
	}
	k := max(ref.Mean, 1)
	if k > n {
		return nil, fmt.Errorf("reference mean:%d needs %d spectra, the data has %d", k, k, n)
	}
	rows := make([]int, k)
	for i := range rows {
		rows[i] = i
	}
	return rows, nil
}

func meanRows(v *mat.Dense, rows []int, dst []float64) {
	for j := range dst {
		dst[j] = 0
	}
	for _, i := range rows {
		row := v.RawRowView(i)
		for j := range dst {
			dst[j] += row[j]
		}
	}
	for j := range dst {
		dst[j] /= float64(len(rows))
	}
}

func checkPositive(v *mat.Dense, s *Series, what string) error {
	n, m := v.Dims()
	for i := 0; i < n; i++ {
		row := v.RawRowView(i)
		for j := 0; j < m; j++ {
			if !(row[j] > 0) {
				name := s.Source
				if i < len(s.Names) && s.Names[i] != "" {
					name = s.Names[i]
				}
				return inputErr(name, 0, "single beams must be positive: if the file holds absorbance or differences give --kind absorbance or --kind difference, else drop that region with --exclude LO:HI",
					"%s intensity %g at %s %g (spectrum at %g s)", what, row[j], s.AxisName, s.Axis[j], s.Times[i])
			}
		}
	}
	return nil
}

// Weak-beam threshold: below 1 % transmission (absorbance above 2) a
// single beam is mostly detector noise, so −log10 of it amplifies noise
// rather than measuring absorption (common practice in infrared and
// UV-visible work; the 1 % figure is a rule of thumb, from memory).
const weakBeamFraction = 0.01

// saturationWarnings finds channels where every single beam (or the blank)
// stays below weakBeamFraction of that beam's median: a saturated band or a
// detector edge. Absorbance noise there is σ_I/(I ln 10), huge as I → 0.
func saturationWarnings(s *Series, ref, blank []float64) []string {
	if len(ref) == 0 {
		return nil
	}
	_, channelMax := beamMaxima(s.Values)
	return saturationWarningsAt(s, ref, blank, channelMax)
}

// saturationWarningsAt is saturationWarnings given each channel's largest
// single beam (beamMaxima), taken with the pass that finds the blind points.
func saturationWarningsAt(s *Series, ref, blank, channelMax []float64) []string {
	m := len(ref)
	if m == 0 {
		return nil
	}
	weak := make([]bool, m)
	refThr := weakBeamFraction * median(ref)
	// The largest of the reference and the beams: a maximum does not depend
	// on the order it is taken in.
	hi := append([]float64(nil), ref...)
	for j, v := range channelMax[:m] {
		if v > hi[j] {
			hi[j] = v
		}
	}
	for j := 0; j < m; j++ {
		weak[j] = hi[j] < refThr
	}
	if blank != nil {
		bThr := weakBeamFraction * median(blank)
		for j, v := range blank {
			if v < bThr {
				weak[j] = true
			}
		}
	}
	var runs [][2]int
	for j := 0; j < m; j++ {
		if !weak[j] {
			continue
		}
		if len(runs) > 0 && runs[len(runs)-1][1] == j-1 {
			runs[len(runs)-1][1] = j
		} else {
			runs = append(runs, [2]int{j, j})
		}
	}
	var out []string
	const most = 3
	for k, r := range runs {
		if k == most {
			out = append(out, fmt.Sprintf("%d more weak-beam region(s) not listed", len(runs)-most))
			break
		}
		lo, hi := s.Axis[r[0]], s.Axis[r[1]]
		out = append(out, fmt.Sprintf("%s: single beam below %g %% of its median at %s %g–%g (%d point(s)): a saturated band or a detector edge, where absorbance is mostly noise: weighted down by its noise, or cut with --exclude %g:%g",
			s.shown(), 100*weakBeamFraction, s.AxisName, lo, hi, r[1]-r[0]+1, lo, hi))
	}
	return out
}

// median of v (a copy is sorted; v is left as it is).
func median(v []float64) float64 {
	return medianInPlace(append([]float64(nil), v...))
}

// medianInPlace is median for a slice the caller lets it reorder.
func medianInPlace(c []float64) float64 {
	lo, hi := middlePair(c)
	if len(c)%2 == 1 {
		return hi
	}
	return (lo + hi) / 2
}

// medianOver is the median of the values c[k]/div (div > 0) without the
// divisions: rounding is monotonic (a ≤ b gives fl(a/div) ≤ fl(b/div)), so
// the middle values of the quotients are the quotients of the middle values,
// and the result has the same bits as medianInPlace of the quotients.
func medianOver(c []float64, div float64) float64 {
	lo, hi := middlePair(c)
	return medianOfPair(lo, hi, len(c), div)
}

// medianOfPair is the median over div of a sample of n values whose middle
// order statistics are lo and hi (middlePair's): hi alone for an odd n.
func medianOfPair(lo, hi float64, n int, div float64) float64 {
	if n%2 == 1 {
		return hi / div
	}
	return (lo/div + hi/div) / 2
}

// medianOverNear is medianOver with middlePairNear's first look near
// *near, which it sets to the sample's middle value (before the division)
// for the next channel.
func medianOverNear(c []float64, div float64, near *float64) float64 {
	lo, hi := middlePairNear(c, *near)
	*near = hi
	return medianOfPair(lo, hi, len(c), div)
}

// nearWindow is the half-width, relative, of the window middlePairNear
// looks in first, and nearPicks the most values it gathers there: the
// median of 2000 absolute normal differences has a relative standard error
// of about 2.6 %, so a neighbour's lies within 8 % of a channel's own nearly
// always when the noise changes little from one channel to the next, and
// about 7 % of such a sample lies in the window (the density of |N(0, σ)|
// at its median 0.674σ is 0.64/σ).
const (
	nearWindow = 0.08
	nearPicks  = 256
)

// middlePairNear is middlePair looking first among the values of c within
// nearWindow of guess (the middle value of a neighbouring channel, whose
// noise is much the same): one pass, without a branch on the data, counts
// the values below the window and gathers those in it, and when the ranks
// middlePair returns fall among those (rank h, and h − 1 for an even
// count), a count of their bits among the few gives them (windowOrder;
// selection, 2.4 times as long on such windows, before). Else, or when c
// holds a value radixOrder refuses (a negative value, −0, NaN), it is
// middlePair.
// The order statistics are the same values whichever way they are found;
// on the noise model's samples of 1998 the first look took 3.9 µs where
// middlePair took 8.6 (load 7), its pass 2.6–4.7 µs of it in Go and
// 0.5–0.7 µs in vecmath.Gather's eight lanes (load 7).
func middlePairNear(c []float64, guess float64) (lo, hi float64) {
	if !(guess > 0 && guess < math.MaxFloat64/2) || len(c) < 2*nearPicks {
		return middlePair(c)
	}
	var pick [nearPicks + vecmath.GatherSpare]float64
	wlo, whi := guess*(1-nearWindow), guess*(1+nearWindow)
	below, in, ok := vecmath.Gather(c, wlo, whi, pick[:])
	h := len(c) / 2
	lowest := h // the lowest rank wanted
	if len(c)%2 == 0 {
		lowest = h - 1
	}
	if !ok || below > lowest || below+in <= h {
		return middlePair(c)
	}
	// The ranks wanted among the window's values (no NaN or −0 among
	// them: Gather refuses them), found by their bits.
	hi, lo = windowOrder(pick[:in], math.Float64bits(wlo), math.Float64bits(whi), h-below, len(c)%2 == 0)
	return lo, hi
}

// middlePair returns the order statistics of c (reordered) that its median
// is made of: hi the value at rank len(c)/2 (0-based), lo the one before it
// (meaningful for an even count).
func middlePair(c []float64) (lo, hi float64) {
	h := len(c) / 2
	if len(c) >= radixMin {
		if hi, lo, ok := radixOrder(c, h, len(c)%2 == 0); ok {
			return lo, hi
		}
	}
	// Selection instead of a sort: the same value (an element, or the mean
	// of the two middle ones), in linear time; the noise model takes one
	// median per channel of every spectrum, where sorting cost more than
	// parsing the file.
	hi = selectKth(c, h)
	if len(c)%2 == 1 {
		return hi, hi
	}
	lo = c[0]
	for _, x := range c[1:h] {
		lo = math.Max(lo, x)
	}
	return lo, hi
}

// selectKth reorders c so that c[k] is the value a sort would put there,
// with nothing larger before it and nothing smaller after it, and returns
// it (Hoare's FIND, Comm. ACM 4(7), 1961, with a median-of-three pivot and a
// three-way partition; from memory). Past 2·log₂n rounds, which only data
// built against the pivot rule reaches, the rest is sorted, so the worst
// case is O(n log n) (introselect, Musser 1997). NaNs are not expected.
func selectKth(c []float64, k int) float64 {
	lo, hi := 0, len(c)
	for budget := 2 * bits.Len(uint(len(c))); hi-lo > 16; budget-- {
		if budget == 0 {
			sort.Float64s(c[lo:hi])
			return c[k]
		}
		a, b, d := c[lo], c[lo+(hi-lo)/2], c[hi-1]
		p := max(min(a, b), min(max(a, b), d))
		// Three-way partition: [lo,lt) < p, [lt,i) == p, (gt,hi) > p.
		lt, i, gt := lo, lo, hi
		for i < gt {
			switch x := c[i]; {
			case x < p:
				c[lt], c[i] = c[i], c[lt]
				lt++
				i++
			case x > p:
				gt--
				c[gt], c[i] = c[i], c[gt]
			default:
				i++
			}
		}
		switch {
		case k < lt:
			hi = lt
		case k >= gt:
			lo = gt
		default:
			return p
		}
	}
	sort.Float64s(c[lo:hi])
	return c[k]
}

// absorbances fills diff with log10(ref/I) and, when blank is given, abs with
// log10(blank/I), for every single beam I (row of v); abs, or diff when abs
// is nil, may be v itself (each value is read before it is overwritten). The logarithm of the ratio
// rather than a difference of logarithms: exact zero for identical beams and
// no cancellation when I is close to the reference. Rows are independent and
// are shared out in fixed chunks, so the result does not depend on
// GOMAXPROCS.
//
// While each row is in cache it also says whether every value formed is
// finite (finite), and takes the largest absolute absorbance per channel
// over the points that are not blind (top, nil without abs): the pipeline
// would otherwise read both matrices again for them. A maximum and a
// conjunction are the same whatever the order of the rows. A chunk's panic
// is raised again here once every worker has ended (the lowest chunk's).
func absorbances(v *mat.Dense, ref, blank []float64, diff, abs *mat.Dense, blind *Blind) (finite bool, top []float64) {
	n, m := v.Dims()
	const chunk = 64
	nch := (n + chunk - 1) / chunk
	work := make(chan int, nch)
	for c := 0; c < nch; c++ {
		work <- c
	}
	close(work)
	finite = true
	if abs != nil {
		top = make([]float64, m)
		for j := range top {
			top[j] = math.Inf(-1)
		}
	}
	var mu sync.Mutex
	var wg sync.WaitGroup
	var fault fanout.Fault // a chunk's panic, raised again below
	for w := 0; w < min(runtime.GOMAXPROCS(0), nch); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			c := 0
			defer fault.Catch(&c)
			wf := true
			var wt []float64
			if abs != nil {
				wt = make([]float64, m)
				for j := range wt {
					wt[j] = math.Inf(-1)
				}
			}
			for c = range work {
				for i := c * chunk; i < min(n, (c+1)*chunk); i++ {
					row := v.RawRowView(i)
					d := diff.RawRowView(i)
					// Each ratio and its logarithm four at once, checked
					// for finiteness in the same pass (vecmath: bit for
					// bit Go's division and math.Log10). The differences
					// before the absolute ones, which may overwrite the
					// beams.
					rf := vecmath.Log10Quo(d, ref, row)
					if abs != nil {
						a := abs.RawRowView(i)
						var af bool
						if bl := blind.row(i); len(bl) == 0 {
							// The usual row: its maxima in the same pass,
							// as observedMax takes them (a logarithm is
							// never −0, so max and > agree).
							af = vecmath.Log10QuoMax(a, blank, row, wt)
						} else {
							af = vecmath.Log10Quo(a, blank, row)
							observedMax(wt, a, bl, af)
						}
						rf = rf && af
					}
					wf = wf && rf
				}
			}
			mu.Lock()
			defer mu.Unlock()
			finite = finite && wf
			for j, x := range wt {
				if x > top[j] {
					top[j] = x
				}
			}
		}()
	}
	wg.Wait()
	fault.Raise()
	return finite, top
}

// observedMax raises top[j] to a[j] at the channels j not in bl (ascending),
// a maximum that leaves NaN out. When a is known finite (finite) the
// stretches between blind channels take Go's max, without a branch that
// goes either way at random; the largest value is the same, a zero's sign
// aside (max(−0, +0) is +0).
func observedMax(top, a []float64, bl []int, finite bool) {
	top = top[:len(a)]
	run := func(t, x []float64) {
		t = t[:len(x)]
		if finite {
			for j, v := range x {
				t[j] = max(t[j], v)
			}
			return
		}
		for j, v := range x {
			if v > t[j] {
				t[j] = v
			}
		}
	}
	start := 0
	for _, j := range bl {
		if j < start || j >= len(a) {
			continue
		}
		run(top[start:j], a[start:j])
		start = j + 1
	}
	run(top[start:], a[start:])
}

// AllFinite reports whether every value of v is finite: v − v is +0 for a
// finite v and NaN for ±Inf and NaN, so the sum of them is 0 only when all
// are finite. Four running sums, so that the additions do not wait on one
// another, and no branch per value.
func AllFinite(v []float64) bool {
	var s0, s1, s2, s3 float64
	j := 0
	for ; j+4 <= len(v); j += 4 {
		s0 += v[j] - v[j]
		s1 += v[j+1] - v[j+1]
		s2 += v[j+2] - v[j+2]
		s3 += v[j+3] - v[j+3]
	}
	for ; j < len(v); j++ {
		s0 += v[j] - v[j]
	}
	return s0+s1+s2+s3 == 0
}
