package svd

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/mat"
)

// Kinds of NuisanceFactor: factors above the noise that are not a chemical component.
const (
	NuisanceBaseline  = "baseline"          // smooth, broad spectrum: a polynomial of the axis
	NuisanceOutlier   = "outlier"           // time vector concentrated in a few spectra
	NuisancePattern   = "reference-pattern" // the reference spectrum's own noise (difference data)
	NuisanceBandShift = "band-shift"        // spectrum ≈ derivative of the chemical spectra
	NuisanceMinor     = "minor"             // smooth, but the fit already reaches the noise without it
)

// NuisanceFactor is one factor above the noise that is not counted as a chemical
// component.
type NuisanceFactor struct {
	Factor       int     // 1-based factor of the decomposition
	Kind         string  // one of the Nuisance* kinds
	Looks        string  // what it looks like, in words
	SharePercent float64 // 100 s²/‖D‖²: its share of the signal
	Spectra      []int   // outlier: the rows (0-based) holding most of its time vector
	// Time is the factor's time vector (unit length, one value per row): where a refit
	// with one more component starts its profile (mcr.TestMinorFactor).
	Time []float64
}

// ChemicalRank is the count of chemical components among the factors above the noise,
// with everything else named.
type ChemicalRank struct {
	Estimate int
	Nuisance []NuisanceFactor
	// NoiseLike counts factors above the white-noise threshold whose time vector is as
	// white as noise: noise correlated along the axis (apodisation, interpolation) lifts
	// its largest singular values above the white-noise edge without being signal.
	NoiseLike int
	// NoiseWhite counts those of NoiseLike whose spectrum is white along the
	// axis too: not noise correlated along the axis, which a smoothed or
	// interpolated spectrum shows, but white noise just above an edge set
	// from a noise level that reads a little low (on invented white-noise
	// series such factors came with a level 5–13 % under the truth).
	NoiseWhite int
	// Examined counts the factors above the noise threshold that were classified: each
	// is chemical, in Nuisance, or in NoiseLike, so Examined − len(Nuisance) − NoiseLike
	// is the number the classification found chemical (which may exceed Estimate, capped
	// at the criteria's consensus).
	Examined int
	// Unexamined counts the factors above the noise threshold beyond those examined
	// (the rank report's AboveThreshold less Examined: the criteria look at a dozen);
	// UnexaminedShare is the largest one's signal over the smallest counted
	// component's (0: no component to compare with). Below minorEnergy
	// (UnexaminedMinor) each would be minor by its size, so the count does not
	// depend on them.
	Unexamined      int
	UnexaminedShare float64
	UnexaminedMinor bool
	// Smooth are the counted factors whose spectrum a baseline's shape
	// describes (NuisanceOptions.NoBaselineModel), for the caller's words.
	Smooth []SmoothFactor
	Sigma  float64 // noise level of the "fits to the noise" test
	// ResidualRatio is √(tail(Estimate)/((n−k)(m−k)σ²)): 1 means the chemical factors fit
	// the data to the noise.
	ResidualRatio float64
}

// NuisanceOptions control ClassifyFactors.
type NuisanceOptions struct {
	Axis []float64 // the spectra's axis: needed for the baseline and band-shift tests (nil skips them)
	// AxisName is the axis's name as the run knows it ("wavenumber", "wavelength", a
	// column title): the descriptions give positions in its unit when it fixes one.
	AxisName string
	// Wavenumbers is the axis in cm⁻¹ when it is in nm (converted, 10⁷/λ),
	// where CO₂'s line is looked for (carbonDioxideAt) and places are given
	// in both units; nil reads Axis, in cm⁻¹ when AxisName says so.
	Wavenumbers []float64
	// MeanLevel says the first factor is the data's mean level (absorbance, not
	// difference data): the size test of minor factors then compares with the chemical
	// factors after it.
	MeanLevel bool
	// Noise is the per-point noise level for the "fits to the noise" test; 0 takes the
	// rank report's level when it was given or came from pre-reaction spectra, else the
	// larger of that and the robust successive-spectra estimate (noise seen from one
	// spectrum to the next, whatever its colour along the axis).
	Noise float64
	// Row and Col are the noise weights a_i, b_j when d is the noise-scaled matrix
	// √A D √B (nil: d is the data itself). The tests of shape then look at the unscaled
	// vectors u_i/√a_i (time) and v_j/√b_j (spectrum), the shapes the factor has in the
	// data, since a baseline of D is smooth along the axis and √b_j is not; the
	// polynomial and derivative shares are measured with the weights b_j, so that the
	// noisy channels (small b_j) count as little as in the fit.
	Row, Col []float64
	// Basis (may be nil) is PolyBasis(Axis, 3, Col), the basis of the
	// baseline test, when the caller has formed it (the same call, so the
	// same matrix); of other dimensions it is not used, and nil has it
	// formed at its first use.
	Basis *mat.Dense
	// Blocks are the first rows of the experiments stacked in d, ascending
	// (nil, or one: a single experiment). With two or more, a factor is also
	// minor when it is minor in every experiment by that experiment's own
	// measure (minorInEveryBlock).
	Blocks []int
	// NoBaselineModel says that no baseline model will take a factor set
	// aside as a baseline (the caller fits none: too few points for one,
	// or a test found none needed beside the factors counted): a smooth
	// factor is then not set aside for its polynomial shape, but judged by
	// the other tests, and recorded in ChemicalRank.Smooth when counted.
	// On a window not much wider than a band the band itself is ≥ 90 % a
	// cubic of the axis, so the shape cannot tell it from a drift, and
	// setting it aside would leave a change far above the noise unfitted.
	NoBaselineModel bool
}

// SmoothFactor is a factor counted as chemical although its spectrum is as
// smooth as a baseline (NuisanceOptions.NoBaselineModel).
type SmoothFactor struct {
	Factor       int     // 1-based
	PolyShare    float64 // share of its spectrum vector a polynomial of order ≤ 3 describes
	SharePercent float64 // 100 s²/‖D‖²
	EdgeTimes    float64 // its singular value over the noise edge σ(√n+√m) (0: no edge)
}

// Thresholds of the classification (documented in docs/measurement.md).
const (
	// outlierEnergy: a time vector with this share of its energy in a few spectra is
	// concentrated there; "few" is at most max(3, n/10) spectra.
	outlierEnergy = 0.8
	// baselineShare: share of a (lightly smoothed) spectrum vector described by
	// polynomials up to baselineOrder.
	baselineShare = 0.9
	baselineOrder = 3
	// derivativeShare: share of a spectrum vector described by the derivatives of the
	// chemical spectra found before it (a band shift s(x+δ) − s(x) ≈ δ s'(x)).
	derivativeShare = 0.8
	// fitsNoise: the leading factors fit to the noise when the root-mean-square residual
	// is within 10 % of the noise level; a further smooth factor then does not lower the
	// fit significantly and is called minor. 10 % allows for the uncertainty of a noise
	// level estimated from the data (common practice: "real error" compared with the
	// experimental error, Malinowski, Factor Analysis in Chemistry, 3rd ed. 2002; from
	// memory).
	fitsNoise = 1.1
	// minorEnergy: a smooth factor with less than 2 % of the energy of the smallest
	// chemical factor before it (not counting the first, which in absorbance data is the
	// mean level) is minor even when the noise level says it is real (a
	// temperature or hydrogen-bonding change of band shapes, a mixing transient): a species
	// that small beside the others is below what a resolution can tell from such effects.
	minorEnergy = 0.02
	// clearOfNoise: a factor whose singular value is at least this many times the noise
	// edge σ(√n+√m) is not minor by its size alone. Its vectors are then fixed to
	// within about 1/100 of a radian when the next factor lies well below it (sin θ ≤
	// edge/gap, Wedin, BIT 1972, from memory), so its shape can be read, and the shape
	// decides (bandShapeShare). On the real urethane
	// series (../shared/real-data) every factor after the chemical ones, of the
	// absorbance and of its differences, lies at 2–16 times the edge; the tests' band
	// shifts and broadenings at 5–11; a reagent spiked with dilution beside A → B, and
	// a second reaction B → C whose product's spectrum is B's at cosine 0.98, at 240–270
	// (0.3–0.5 % of the first factor's signal, which set them aside by size). Without a
	// noise level (noise-free data, edge 0) the size rule stands.
	clearOfNoise = 100
	// bandShapeShare: a factor clear of the noise but below minorEnergy is still minor
	// when at least this share of its spectrum vector is a shift or a broadening of
	// the chemical spectra before it: the span of those spectra and their first and
	// second derivatives (s(x+δ) − s(x) ≈ δ s′, and a width change at constant area ≈
	// a combination of s and s″; Taylor's theorem). Measured on the differences' second
	// factor: bands broadening by up to 10 % at constant area 0.95 (svd test); a spiked
	// reagent and a second reaction B → C 0.003–0.022 (both modes, invented
	// single-beam series).
	bandShapeShare = 0.5
)

// MinorEnergy is the share of the smallest counted component's signal below which a
// smooth factor is minor (minorEnergy), for callers' words.
const MinorEnergy = minorEnergy

// ClassifyFactors looks at each factor above the noise threshold of rep, in order of
// size, and says what it is:
//   - reference-pattern: recognised by EstimateRank;
//   - outlier: its time vector holds ≥ 80 % of its energy in at most max(3, n/10)
//     spectra and is not smooth in time (lag-1 autocorrelation < 0.5): a few spectra
//     that differ from the rest (gas lines, a bubble, a spike), not a component;
//   - noise: its time vector is white (Shrager & Hendler's structure test fails on it):
//     counted in NoiseLike only;
//   - baseline: its spectrum vector, smoothed over 5 points, is ≥ 90 % a polynomial of
//     order ≤ 3 of the axis;
//   - band-shift: ≥ 80 % of its spectrum vector lies in the span of the derivatives of the
//     chemical spectrum vectors before it;
//   - minor: smooth, but the factors before it, counted or not, already fit the data to
//     the noise (residual/noise ≤ 1.1), so adding it cannot lower the fit significantly;
//     or it carries less than 2 % of the smallest counted component's signal;
//   - chemical otherwise.
//
// Estimate is the number of chemical factors, never more than rep.Estimate (the
// consensus of the rank criteria).
//
// d's values are read only to estimate the noise (opt.Noise ≤ 0 and a level rep did not
// get from outside); d may be nil, its dimensions then being f's and rep's level taken.
func ClassifyFactors(d *mat.Dense, f *Factors, rep *RankReport, opt NuisanceOptions) *ChemicalRank {
	out := &ChemicalRank{}
	if rep == nil || f == nil || f.FrobeniusSq == 0 {
		return out
	}
	c := newFactorClassifier(d, f, rep, opt, out)
	for j, row := range rep.Table {
		if !row.AboveNoiseEdge || j >= len(f.S) {
			break
		}
		out.Examined++
		c.classify(j, row)
	}
	c.unexamined(rep)
	out.Estimate = min(c.chem, rep.Estimate)
	out.ResidualRatio = c.residualRatio(out.Estimate)
	if math.IsInf(out.ResidualRatio, 0) {
		out.ResidualRatio = 0
	}
	return out
}

// unexamined records the factors above the noise threshold that the loop did
// not reach (the table ends at a dozen) and how large the first of them is
// beside the smallest counted component.
func (c *factorClassifier) unexamined(rep *RankReport) {
	out := c.out
	if out.Unexamined = rep.AboveThreshold - out.Examined; out.Unexamined <= 0 || out.Examined >= len(c.f.S) {
		out.Unexamined = 0
		return
	}
	if c.smallest > 0 {
		s := c.f.S[out.Examined]
		out.UnexaminedShare = s * s / c.smallest
		edge := c.rep.NoiseEdge
		out.UnexaminedMinor = out.UnexaminedShare < minorEnergy && !(edge > 0 && s >= clearOfNoise*edge)
	}
}

// factorClassifier carries what the classification of one factor learns for the
// next: the chemical spectrum vectors found so far (a band shift is judged against
// them), their count, and the size of the smallest (a minor factor is judged against
// it).
type factorClassifier struct {
	rep   *RankReport
	f     *Factors
	opt   NuisanceOptions
	out   *ChemicalRank
	n, m  int
	sigma float64
	basis func() *mat.Dense // the baseline test's polynomial basis, formed at first use
	chemV [][]float64       // unscaled spectrum vectors of the chemical factors so far
	chem  int
	// smallest is s² of the smallest chemical factor so far (not the mean level).
	smallest float64
	// A column unscaled into a copy is not kept: its memory takes the next.
	spareU, spareV []float64
	// blockEnergy is blockOwn's, once blockDone.
	blockEnergy []float64
	blockDone   bool
}

// newFactorClassifier takes the dimensions from d, or from f when d is nil (d's values
// are needed only for the noise level).
func newFactorClassifier(d *mat.Dense, f *Factors, rep *RankReport, opt NuisanceOptions, out *ChemicalRank) *factorClassifier {
	c := &factorClassifier{f: f, opt: opt, out: out, rep: rep}
	if d != nil {
		c.n, c.m = d.Dims()
	} else {
		c.n, _ = f.U.Dims()
		c.m, _ = f.V.Dims()
	}
	c.sigma = noiseForFit(d, rep, opt.Noise, c.n)
	out.Sigma = c.sigma
	c.basis = polyBasisOnce(opt.Axis, opt.Col)
	if b := opt.Basis; b != nil {
		if bm, bc := b.Dims(); bm == c.m && bc == baselineOrder+1 {
			c.basis = func() *mat.Dense { return b }
		}
	}
	return c
}

// noiseForFit is the noise level the "fits to the noise" test compares with. Unless
// the rank report's level was given or came from pre-reaction spectra, the level seen
// from one spectrum to the next is taken when larger: it sees the noise whatever its
// colour along the axis.
func noiseForFit(d *mat.Dense, rep *RankReport, given float64, n int) float64 {
	if given > 0 {
		return given
	}
	sigma := rep.Sigma
	if d != nil && rep.SigmaSource != SigmaGiven && rep.SigmaSource != SigmaPreRows && n >= 3 {
		sigma = math.Max(sigma, sigmaFromRowPairs(d, 0, n, true))
	}
	return sigma
}

// residualRatio is √(tail(k)/((n−k)(m−k)σ²)): 1 when k factors fit the data to the
// noise; +Inf when there is no noise level or no degree of freedom to judge by.
func (c *factorClassifier) residualRatio(k int) float64 {
	dof := float64(c.n-k) * float64(c.m-k)
	if c.sigma <= 0 || dof <= 0 {
		return math.Inf(1)
	}
	return math.Sqrt(c.f.TailSq(k) / (dof * c.sigma * c.sigma))
}

// classify tests factor j in the order of ClassifyFactors's list, the first test it
// meets deciding: a factor is chemical only when it is none of the others.
func (c *factorClassifier) classify(j int, row CandidateRow) {
	u, v, vu := c.factorVectors(j)
	nf := NuisanceFactor{Factor: j + 1, SharePercent: 100 * c.f.S[j] * c.f.S[j] / c.f.FrobeniusSq, Time: u}
	switch {
	case c.artefact(&nf, row, u):
	case c.noiseLike(j, row, u):
		c.out.NoiseLike++
		if c.whiteSpectrum(row, v) {
			c.out.NoiseWhite++
		}
		return
	case c.whiteSpectrum(row, v):
		// Not white in time (noiseLike), yet white along the axis, where a
		// species' spectrum has bands some points wide: noise fixed in some
		// spectra. With several experiments each one's reference spectrum
		// leaves its own (counted as a third reaction of two stacked
		// experiments of two each).
		nf.Kind, nf.Looks = NuisancePattern, "white across the axis: noise fixed in some spectra, such as an experiment's reference spectrum's own noise, not a species"
	case c.smoothNuisance(&nf, v, vu):
	case c.minor(&nf, j, u, v, vu):
	default:
		c.countChemical(j, vu)
		c.noteSmooth(j, vu)
		return
	}
	c.out.Nuisance = append(c.out.Nuisance, nf)
}

// factorVectors returns factor j's time vector u and spectrum vector v as the
// decomposition holds them, and v unscaled (vu): the shapes the factor has in the
// data, which the shape tests look at.
func (c *factorClassifier) factorVectors(j int) (u, v, vu []float64) {
	us, v := columnInto(c.spareU, c.f.U, j), columnInto(c.spareV, c.f.V, j)
	u, vu = unscaleVec(us, c.opt.Row), unscaleVec(v, c.opt.Col)
	c.spareU, c.spareV = nil, nil
	if rescaled(us, c.opt.Row) {
		c.spareU = us
	}
	if rescaled(v, c.opt.Col) {
		c.spareV = v
	}
	return u, v, vu
}

// artefact recognises a factor that comes from the measurement rather than the
// sample: the reference spectrum's own noise, or a few spectra unlike the rest.
func (c *factorClassifier) artefact(nf *NuisanceFactor, row CandidateRow, u []float64) bool {
	if row.ReferencePattern {
		nf.Kind, nf.Looks = NuisancePattern, "flat in time and white across the axis: the reference spectrum's own noise"
		return true
	}
	if rows, ok := concentrated(u); ok {
		nf.Kind, nf.Spectra = NuisanceOutlier, rows
		nf.Looks = fmt.Sprintf("concentrated in %d spectrum(s) (%.0f %% of its time vector): spectra unlike the rest, not a component", len(rows), 100*outlierEnergy)
		return true
	}
	return false
}

// whiteSpectrum reports a factor's spectrum vector v (as the decomposition
// holds it) white along the axis, by the rank report's autocorrelation and by
// v's, as noiseLike does the time vector's.
func (c *factorClassifier) whiteSpectrum(row CandidateRow, v []float64) bool {
	if c.m < minStructureLen {
		return false
	}
	return !structured(row.AutocorrV, c.m) && !structured(Autocorrelation(v), c.m)
}

// noiseLike reports a time vector as white as noise, by the rank report's
// autocorrelation and by that of the unscaled vector: both must fail the structure
// test, as a short series says little. It says no when factor j holds more than all
// the noise could, s_j² > n·m·σ²: noise of any colour along the axis has that energy
// in all its factors together (its expected squared Frobenius norm), so no one factor
// of it can exceed it. With 12 spectra a third species at 566 times the noise edge
// was called correlated noise for a time vector whose lag-1 autocorrelation, 0.56,
// fell short of the 3/√12 that 12 points need.
func (c *factorClassifier) noiseLike(j int, row CandidateRow, u []float64) bool {
	if c.n < minStructureLen {
		return false
	}
	if c.sigma > 0 && c.f.S[j]*c.f.S[j] > float64(c.n)*float64(c.m)*c.sigma*c.sigma {
		return false
	}
	return !structured(row.AutocorrU, c.n) && !structured(Autocorrelation(u), c.n)
}

// smoothNuisance recognises a spectrum that is a baseline (a low-order polynomial of
// the axis) or a band shift (the derivative of chemical spectra already found). Both
// need the axis.
func (c *factorClassifier) smoothNuisance(nf *NuisanceFactor, v, vu []float64) bool {
	if c.opt.Axis == nil || len(c.opt.Axis) != c.m {
		return false
	}
	if sh := polyShareWeighted(vu, c.opt.Axis, c.opt.Col, c.basis); sh >= baselineShare && !c.opt.NoBaselineModel {
		nf.Kind = NuisanceBaseline
		nf.Looks = fmt.Sprintf("smooth and broad across the axis: %.0f %% described by a polynomial of order ≤ %d (baseline drift)", 100*sh, baselineOrder)
		return true
	}
	if len(c.chemV) > 0 {
		if sh := derivShareWeighted(v, c.chemV, c.opt.Col); sh >= derivativeShare {
			nf.Kind = NuisanceBandShift
			nf.Looks = fmt.Sprintf("%.0f %% like the derivative of the chemical spectra: a band shift (temperature, a settling cell), not a species", 100*sh)
			return true
		}
	}
	return false
}

// noteSmooth records chemical factor j in Smooth when no baseline model
// takes smooth factors and its spectrum is as smooth as a baseline.
func (c *factorClassifier) noteSmooth(j int, vu []float64) {
	if !c.opt.NoBaselineModel || c.opt.Axis == nil || len(c.opt.Axis) != c.m {
		return
	}
	sh := polyShareWeighted(vu, c.opt.Axis, c.opt.Col, c.basis)
	if sh < baselineShare {
		return
	}
	sf := SmoothFactor{Factor: j + 1, PolyShare: sh, SharePercent: 100 * c.f.S[j] * c.f.S[j] / c.f.FrobeniusSq}
	if edge := c.rep.NoiseEdge; edge > 0 {
		sf.EdgeTimes = c.f.S[j] / edge
	}
	c.out.Smooth = append(c.out.Smooth, sf)
}

// minor recognises a factor after the first chemical one that the fit does not need:
// the factors before it already reach the noise, or it is too small beside them for
// a resolution to tell it from a change of band shapes. Far above the noise
// (clearOfNoise) its size beside them no longer says that: its shape must
// (bandShapeWhenClear).
func (c *factorClassifier) minor(nf *NuisanceFactor, j int, u, v, vu []float64) bool {
	if c.chem == 0 {
		return false
	}
	s2, ratio := c.f.S[j]*c.f.S[j], c.residualRatio(j)
	if ratio <= fitsNoise {
		nf.Kind, nf.Looks = NuisanceMinor, minorLooks(c.minorShape(u, vu), ratio, j, c.chem, c.relPercent(j))
		return true
	}
	bySize := c.smallest > 0 && s2 < minorEnergy*c.smallest
	var shares []float64
	if !bySize {
		var ok bool
		if shares, ok = c.minorInEveryBlock(j); !ok {
			return false
		}
	}
	shape, ok := c.bandShapeWhenClear(j, v)
	if !ok {
		return false
	}
	nf.Kind = NuisanceMinor
	if bySize {
		nf.Looks = minorLooks(c.minorShape(u, vu)+shape, ratio, j, c.chem, c.relPercent(j))
	} else {
		nf.Looks = minorLooksInBlocks(c.minorShape(u, vu)+shape, shares)
	}
	return true
}

// bandShapeWhenClear says whether factor j, small beside the counted components, may
// be set aside for its size: always when it stands within clearOfNoise times the noise
// edge; above, only when at least bandShapeShare of its spectrum vector v is a shift or
// broadening of the chemical spectra's bands, which the words then say.
func (c *factorClassifier) bandShapeWhenClear(j int, v []float64) (string, bool) {
	edge := c.rep.NoiseEdge
	if !(edge > 0) || c.f.S[j] < clearOfNoise*edge {
		return "", true
	}
	sh := bandShapeShareOf(v, c.chemV, c.opt.Col)
	if sh < bandShapeShare {
		return "", false
	}
	return fmt.Sprintf("; %.0f times the noise edge, but %.0f %% of its spectrum is a shift or broadening of the chemical spectra's bands (in the span of those spectra and their first and second derivatives)", c.f.S[j]/edge, 100*sh), true
}

// relPercent is factor j's signal in per cent of the smallest counted component's,
// 100·s·s/smallest (not 100·s²/smallest: the same bits as the share reported so far).
func (c *factorClassifier) relPercent(j int) float64 {
	return 100 * c.f.S[j] * c.f.S[j] / c.smallest
}

// countChemical records factor j as chemical. In absorbance data the first chemical
// factor is the mean level, whose size says nothing of how small a species may be.
func (c *factorClassifier) countChemical(j int, vu []float64) {
	c.chem++
	c.chemV = append(c.chemV, vu)
	if c.chem >= 2 || !c.opt.MeanLevel {
		c.smallest = c.f.S[j] * c.f.S[j]
	}
}

// ApplyChemical makes the chemical count rep's estimate: the reason says so and the
// warnings that judged the consensus count (which counted the nuisance factors) are
// dropped, since the classification has accounted for every factor it examined. Factors
// above the noise beyond those (cr.Unexamined) that could be counted keep a warning;
// those minor by size are the caller's to note (the count does not depend on them).
func ApplyChemical(rep *RankReport, cr *ChemicalRank) {
	if rep == nil || cr == nil {
		return
	}
	if cr.Estimate != rep.Estimate {
		rep.Reason += fmt.Sprintf(" Of these, %d are chemical components (Malinowski's IND %d, F-test %d); the others are nuisance factors or noise correlated along the axis.", cr.Estimate, rep.ind, rep.fTest)
		rep.Estimate = cr.Estimate
		if rep.consensusWarnings <= len(rep.Warnings) {
			rep.Warnings = rep.Warnings[:rep.consensusWarnings]
			rep.capWarned = false
		}
	}
	accountDisagreement(rep, cr)
	if cr.Unexamined > 0 && !cr.UnexaminedMinor && !rep.capWarned {
		// The classification did not account for these: the count may be higher.
		what := "with no counted component to compare them with"
		if cr.UnexaminedShare > 0 {
			what = fmt.Sprintf("and the largest of them carries %.2g %% of the signal of the smallest counted component, more than the %.0f %% below which a smooth factor is minor", 100*cr.UnexaminedShare, 100*minorEnergy)
		}
		rep.warn("%d factor(s) above the noise threshold lie beyond the %d examined and were not classified, %s: the count may be higher, or σ too small", cr.Unexamined, cr.Examined, what)
	}
}

// accountDisagreement revisits the warning that the criteria disagree
// (disagreement), which blames the noise level: the criteria count every
// factor above the noise, chemistry or not, so when the classification named
// each factor they count beyond the estimate (an outlier spectrum, a
// baseline, the reference's noise …) the difference is accounted for and the
// rank line says so; the warning goes. When it named only some, the warning
// stays but says which.
func accountDisagreement(rep *RankReport, cr *ChemicalRank) {
	at := -1
	for i, w := range rep.Warnings {
		if strings.HasPrefix(w, disagreePrefix) {
			at = i
		}
	}
	if at < 0 {
		return
	}
	most := 0
	for _, c := range rep.Criteria {
		most = max(most, c.Estimate)
	}
	kinds := map[int]string{}
	for _, f := range cr.Nuisance {
		kinds[f.Factor] = f.Kind
	}
	var named []string
	unnamed := 0
	for k := rep.Estimate + 1; k <= most; k++ {
		if kind, ok := kinds[k]; ok {
			named = append(named, fmt.Sprintf("%d (%s)", k, kind))
		} else {
			unnamed++
		}
	}
	switch {
	case len(named) == 0:
		return
	case unnamed <= cr.NoiseLike:
		rep.Warnings = append(rep.Warnings[:at:at], rep.Warnings[at+1:]...)
	default:
		w := rep.Warnings[at]
		if cut := strings.Index(w, disagreeAdvice); cut >= 0 {
			w = w[:cut]
		}
		rep.Warnings[at] = fmt.Sprintf("%s; of the factors the others count, %s are not chemistry (see the advice), %d not classified%s", w, strings.Join(named, ", "), unnamed, disagreeAdvice)
	}
}

// concentrated reports the rows holding outlierEnergy of u's energy when they are few
// (at most max(3, n/10)) and u is not smooth in time.
func concentrated(u []float64) ([]int, bool) {
	n := len(u)
	if n < 10 || Autocorrelation(u) >= 0.5 {
		return nil, false
	}
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return u[idx[a]]*u[idx[a]] > u[idx[b]]*u[idx[b]] })
	var tot, acc float64
	for _, x := range u {
		tot += x * x
	}
	few := max(3, n/10)
	for c := 0; c < few; c++ {
		acc += u[idx[c]] * u[idx[c]]
		if acc >= outlierEnergy*tot {
			rows := append([]int(nil), idx[:c+1]...)
			sort.Ints(rows)
			if contiguous(rows) && smoothRest(u, rows) {
				return nil, false
			}
			return rows, true
		}
	}
	return nil, false
}

// unscaleVec returns x_i/√w_i scaled to unit length (x itself when w is nil): a singular
// vector of the scaled matrix as the shape it has in the data.
func unscaleVec(x, w []float64) []float64 {
	if !rescaled(x, w) {
		return x
	}
	out := make([]float64, len(x))
	ss := 0.0
	for i, v := range x {
		if w[i] > 0 {
			out[i] = v / math.Sqrt(w[i])
		}
		ss += out[i] * out[i]
	}
	if ss > 0 {
		for i := range out {
			out[i] /= math.Sqrt(ss)
		}
	}
	return out
}

// rescaled says whether unscaleVec(x, w) is a new vector (not x itself).
func rescaled(x, w []float64) bool { return w != nil && len(w) == len(x) }

// polyBasisOnce gives the polynomial basis every factor's baseline share is
// measured against, PolyBasis(axis, baselineOrder, col) (in the metric of
// the column weights when there are any), formed at its first use and then
// shared: the same matrix for each factor (it depends on the axis and the
// weights only).
func polyBasisOnce(axis, col []float64) func() *mat.Dense {
	var poly *mat.Dense
	return func() *mat.Dense {
		if poly == nil {
			poly = PolyBasis(axis, baselineOrder, col)
		}
		return poly
	}
}

// polyShareWeighted is the share of the (lightly smoothed) unscaled spectrum vector vu
// described by polynomials up to baselineOrder, in the metric of the column weights col:
// ‖P_w x‖²/‖x‖² with x = √B smooth(vu) and P_w the projector on span(√B X). The smoothing
// is the 5-point moving average weighted by b_j (a channel's noise counts as in the fit).
// With col nil it is polyShare(smooth5(vu)). basis gives PolyBasis(axis, baselineOrder,
// col), weighted or not.
func polyShareWeighted(vu, axis, col []float64, basis func() *mat.Dense) float64 {
	if col == nil {
		return polyShare(smooth5(vu), basis)
	}
	if len(vu) <= baselineOrder+1 {
		return 0
	}
	x := make([]float64, len(vu))
	for j := range vu {
		s, w := 0.0, 0.0
		for i := max(j-2, 0); i <= min(j+2, len(vu)-1); i++ {
			s += col[i] * vu[i]
			w += col[i]
		}
		if w > 0 {
			x[j] = math.Sqrt(col[j]) * s / w
		}
	}
	return spanShare(x, basis())
}

// derivShareWeighted is derivShare in the metric of the column weights: the share of the
// scaled spectrum vector v in the span of √B times the central differences of the
// unscaled chemical spectrum vectors chem (derivShare(v, chem) when col is nil).
func derivShareWeighted(v []float64, chem [][]float64, col []float64) float64 {
	if col == nil {
		return derivShare(v, chem)
	}
	m := len(v)
	if m < 3 {
		return 0
	}
	x := mat.NewDense(m, len(chem), nil)
	for c, w := range chem {
		for j := 0; j < m; j++ {
			x.Set(j, c, math.Sqrt(col[j])*(w[min(j+1, m-1)]-w[max(j-1, 0)]))
		}
	}
	orthonormalize(x)
	return spanShare(v, x)
}

// contiguous reports whether the sorted rows follow one another in time, a
// spectrum skipped at most between two (one noisier than the profile): a
// profile's fast part (a species consumed within two spectra) is one run of
// them, while odd spectra (two bubbles, a gas puff) fall where they may.
func contiguous(rows []int) bool {
	for k := 1; k < len(rows); k++ {
		if rows[k]-rows[k-1] > 2 {
			return false
		}
	}
	return true
}

// bandShapeShareOf is the share of the scaled spectrum vector v in the span of √B
// times the unscaled chemical spectrum vectors chem and their first and second central
// differences (without weights when col is nil): what shifts and broadenings of their
// bands add. The spectra themselves belong to it: a width change at constant area
// lowers the peak as it widens the band (∂s/∂w of a Gaussian is a combination of s and
// s″), and a factor orthogonal to the spectra keeps only the part of s″ orthogonal to
// them.
func bandShapeShareOf(v []float64, chem [][]float64, col []float64) float64 {
	m := len(v)
	if m < 3 || len(chem) == 0 {
		return 0
	}
	x := mat.NewDense(m, 3*len(chem), nil)
	for c, w := range chem {
		for j := 0; j < m; j++ {
			b := 1.0
			if col != nil {
				b = math.Sqrt(col[j])
			}
			lo, hi := w[max(j-1, 0)], w[min(j+1, m-1)]
			x.Set(j, 3*c, b*w[j])
			x.Set(j, 3*c+1, b*(hi-lo))
			x.Set(j, 3*c+2, b*(hi-2*w[j]+lo))
		}
	}
	orthonormalize(x)
	return spanShare(v, x)
}

// smoothRest reports whether u outside the given rows (sorted) still runs smoothly
// (lag-1 autocorrelation about zero ≥ 0.5, as concentrated asks of u itself) with at least
// 5 % of u's energy: a profile that falls fast from the first spectra and then levels off
// (a species consumed within two spectra of a short series) has most of its energy in a
// few rows too, but the rest is its tail, not noise. The rest of a factor made by a few
// odd spectra is the noise of the others.
func smoothRest(u []float64, rows []int) bool {
	rest := make([]float64, 0, len(u))
	var tot, rs float64
	for i, x := range u {
		tot += x * x
		if k := sort.SearchInts(rows, i); k < len(rows) && rows[k] == i {
			continue
		}
		rest = append(rest, x)
		rs += x * x
	}
	return len(rest) >= 3 && rs >= 0.05*tot && Autocorrelation(rest) >= 0.5
}

// polyShare is the share of ‖v‖² in the span of the polynomials up to baselineOrder,
// whose orthonormal basis (PolyBasis without weights) basis gives.
func polyShare(v []float64, basis func() *mat.Dense) float64 {
	if len(v) <= baselineOrder+1 {
		return 0
	}
	return spanShare(v, basis())
}

// derivShare is the share of ‖v‖² in the span of the central differences of the vectors
// in chem (derivatives up to a constant factor of the axis spacing).
func derivShare(v []float64, chem [][]float64) float64 {
	m := len(v)
	if m < 3 {
		return 0
	}
	x := mat.NewDense(m, len(chem), nil)
	for c, w := range chem {
		for j := 0; j < m; j++ {
			x.Set(j, c, w[min(j+1, m-1)]-w[max(j-1, 0)])
		}
	}
	orthonormalize(x)
	return spanShare(v, x)
}

// spanShare is ‖Qᵀv‖²/‖v‖² for Q with orthonormal columns.
func spanShare(v []float64, q *mat.Dense) float64 {
	if q == nil {
		return 0
	}
	vv := mat.NewVecDense(len(v), v)
	var c mat.VecDense
	c.MulVec(q.T(), vv)
	den := mat.Dot(vv, vv)
	if den == 0 {
		return 0
	}
	return mat.Dot(&c, &c) / den
}

// smooth5 is a 5-point moving average: the noise on a singular vector would otherwise
// hide how well its shape follows a polynomial.
func smooth5(v []float64) []float64 {
	out := make([]float64, len(v))
	for j := range v {
		s, c := 0.0, 0
		for i := max(j-2, 0); i <= min(j+2, len(v)-1); i++ {
			s += v[i]
			c++
		}
		out[j] = s / float64(c)
	}
	return out
}

// minorLooks describes a minor factor: its shape (minorShape), and why it is not counted. ratio is the SVD residual of all
// the factors that precede it (before of them), of which chem are counted as components: the others
// (minor, outliers, noise correlated along the axis) are in the data too, so the
// residual that says whether this factor is within the noise is that of all of them,
// not of the counted components alone (which the run's fit, without the others, has).
func minorLooks(shape string, ratio float64, before, chem int, relPercent float64) string {
	left := fmt.Sprintf("%s leave an SVD residual of %.3g × the noise, before any constraint or baseline", factorsBefore(before, chem), ratio)
	if ratio <= fitsNoise {
		return shape + "; " + left + ": what it adds is within the noise, so by its size alone it is not counted as a species"
	}
	return shape + fmt.Sprintf("; it carries %.2g %% of the signal of the smallest of the %d counted component(s) before it: too small beside them to tell a species from a change of band shape, so it is not counted (%s)", relPercent, chem, left)
}

// factorsBefore names the factors that precede a factor (before of them), chem of them
// counted as components.
func factorsBefore(before, chem int) string {
	if before == chem {
		return fmt.Sprintf("the %d counted component(s) before it", chem)
	}
	return fmt.Sprintf("the %d factors before it, %d counted as components and %d not,", before, chem, before-chem)
}

// minorShape says where a smooth factor's spectrum is largest, on the axis in its
// unit when the run knows it (axisPlace), and where its time vector is largest in
// size (timePlace).
func (c *factorClassifier) minorShape(u, v []float64) string {
	var b strings.Builder
	b.WriteString("smooth in time and along the axis")
	axis := c.opt.Axis
	if len(axis) == len(v) && len(v) > 0 {
		at := 0
		for j := range v {
			if math.Abs(v[j]) > math.Abs(v[at]) {
				at = j
			}
		}
		wn, unit := axis, axisUnit(c.opt.AxisName)
		if len(c.opt.Wavenumbers) == len(v) {
			wn, unit = c.opt.Wavenumbers, "cm⁻¹"
			fmt.Fprintf(&b, ", largest near %.4g nm, %.4g cm⁻¹", axis[at], wn[at])
		} else {
			fmt.Fprintf(&b, ", largest near %s", axisPlace(axis[at], c.opt.AxisName))
		}
		b.WriteString(carbonDioxideAt(v, wn, at, unit))
	}
	if len(u) > 2 {
		peak := 0
		for i := range u {
			if math.Abs(u[i]) > math.Abs(u[peak]) {
				peak = i
			}
		}
		b.WriteString(timePlace(peak, len(u), c.opt.Blocks))
	}
	return b.String()
}

// axisUnit is the unit of an axis the run names: cm⁻¹ for wavenumbers (the
// readers name an axis "wavenumber" only from a cm⁻¹ title or unit); "" when the
// name does not fix it (a wavelength may be in nm or µm).
func axisUnit(name string) string {
	if name == "wavenumber" {
		return "cm⁻¹"
	}
	return ""
}

// axisPlace writes a position on the axis: "1702 cm⁻¹" with a known unit,
// "450 on the wavelength axis" with a name only, "450 on the axis" with neither.
func axisPlace(x float64, name string) string {
	switch {
	case axisUnit(name) != "":
		return fmt.Sprintf("%.4g %s", x, axisUnit(name))
	case name != "":
		return fmt.Sprintf("%.4g on the %s axis", x, name)
	}
	return fmt.Sprintf("%.4g on the axis", x)
}

// timePlace says where a factor's time vector is largest in size, as spectrum
// peak (0-based) of n, and in a stack (blocks: the experiments' first rows) in
// which experiment. It does not call the place a transient or a drift: a
// factor's time vector is orthogonal to those of the larger factors, so a
// change that grows through the run shows there as a vector that changes sign
// and peaks inside it (catalyst-0.01 series: factor 3 largest at spectrum 29 of
// 50, the refit's non-negative profile of the same change growing to the end);
// the refit's profile says how the change runs. Largest where one experiment
// ends and the next begins, it is a step between the experiments.
func timePlace(peak, n int, blocks []int) string {
	const hedge = "its time course is not a component's profile: the decomposition makes it orthogonal to the larger factors' time courses"
	at := fmt.Sprintf(", its time vector largest in size at spectrum %d of %d", peak+1, n)
	if len(blocks) < 2 {
		return at + " (" + hedge + ")"
	}
	bounds := experimentBounds(blocks, n)
	for e, bd := range bounds {
		if peak < bd[0] || peak >= bd[1] {
			continue
		}
		step := ": a step between the experiments, not a change within either (" + hedge + ")"
		switch {
		case peak == bd[1]-1 && e+1 < len(bounds):
			return at + fmt.Sprintf(", the last of experiment %d next to the first of experiment %d", e+1, e+2) + step
		case peak == bd[0] && e > 0:
			return at + fmt.Sprintf(", the first of experiment %d next to the last of experiment %d", e+1, e) + step
		}
		return at + fmt.Sprintf(" (spectrum %d of %d of experiment %d; %s)", peak-bd[0]+1, bd[1]-bd[0], e+1, hedge)
	}
	return at + " (" + hedge + ")"
}

// carbonDioxideAt names CO₂ when a factor's spectrum is largest in a line
// at most 6 axis units wide at half height within 664–671: where CO₂ of
// the air in the beam path has the sharp Q branch of its bending band,
// 667.4 cm⁻¹ (band position common practice; the value from memory), which
// a purge or the room changes. A sample's band there is seldom that narrow.
// Only on an axis that reaches 1500 (a mid-infrared one in cm⁻¹): a
// UV-visible axis in nm, which stops near 1100, has 664–671 too when it is
// not converted (an axis of no known unit is read as it is).
func carbonDioxideAt(v, axis []float64, at int, unit string) string {
	if x := axis[at]; x < 664 || x > 671 || max(axis[0], axis[len(axis)-1]) < 1500 {
		return ""
	}
	half := math.Abs(v[at]) / 2
	lo, hi := at, at
	for lo > 0 && math.Abs(v[lo-1]) >= half && v[lo-1]*v[at] > 0 {
		lo--
	}
	for hi+1 < len(v) && math.Abs(v[hi+1]) >= half && v[hi+1]*v[at] > 0 {
		hi++
	}
	if lo == 0 || hi == len(v)-1 {
		return ""
	}
	// The half-height crossings, linear between the points either side.
	cross := func(in, out int) float64 {
		a, b := math.Abs(v[in]), math.Abs(v[out])
		if v[out]*v[at] <= 0 {
			b = -b
		}
		return axis[in] + (axis[out]-axis[in])*(a-half)/(a-b)
	}
	width := math.Abs(cross(hi, hi+1) - cross(lo, lo-1))
	if width > 6 {
		return ""
	}
	if unit != "" {
		unit = " " + unit
	}
	return fmt.Sprintf(" (a line %.2g%s wide at half height where CO₂ in the beam path has its sharp bending band, 667 cm⁻¹: the air's CO₂ changed, not the sample)", width, unit)
}

// minorInEveryBlock says whether factor j, counted by its size in the stack of
// several experiments, is minor in every one of them by the single-experiment
// rule (minorEnergy): its energy in the experiment's rows against that
// experiment's own smallest chemical factor (blockSmallest), from the
// singular values of the experiment's rows in the stack's factors, U_e S. Each experiment alone counts its own components
// against its own sizes; in the stack, a factor that differs between the
// experiments (a species whose proportion does, a background) is counted, and
// the smaller ones after it were measured against that factor instead: on
// two urethane ATR series (../shared/real-data) each alone gives 2
// components, the stack gave 6, of which the fourth to sixth carry about
// 1 % or less of either series' own. It returns the shares, in per cent.
func (c *factorClassifier) minorInEveryBlock(j int) ([]float64, bool) {
	n, p := c.f.U.Dims()
	if len(c.opt.Blocks) < 2 || j >= p || c.chem == 0 {
		return nil, false
	}
	own := c.blockOwn()
	if own == nil {
		return nil, false
	}
	shares := make([]float64, len(own))
	for e, b := range experimentBounds(c.opt.Blocks, n) {
		first, last := b[0], b[1]
		energy := 0.0
		for i := first; i < last; i++ {
			u := c.f.U.At(i, j)
			energy += u * u
		}
		share := energy * c.f.S[j] * c.f.S[j] / own[e]
		if !(share < minorEnergy) {
			return nil, false
		}
		shares[e] = 100 * share
	}
	return shares, true
}

// blockOwn is, for each experiment of the stack, the energy of its own
// smallest chemical factor (blockSmallest) from the singular values of its
// rows in the stack's factors, U_e S; formed at the first use and kept (the
// same for every factor tested), nil when an experiment has too few rows
// or its decomposition fails.
func (c *factorClassifier) blockOwn() []float64 {
	if c.blockDone {
		return c.blockEnergy
	}
	c.blockDone = true
	n, p := c.f.U.Dims()
	ref := 0
	if c.opt.MeanLevel {
		ref = 1
	}
	own := make([]float64, len(c.opt.Blocks))
	for e, bd := range experimentBounds(c.opt.Blocks, n) {
		first, last := bd[0], bd[1]
		if first < 0 || last > n || last-first <= ref {
			return nil
		}
		var b mat.Dense
		b.CloneFrom(c.f.U.Slice(first, last, 0, p))
		for i := 0; i < last-first; i++ {
			row := b.RawRowView(i)
			for k := range row {
				row[k] *= c.f.S[k]
			}
		}
		var svd mat.SVD
		if !svd.Factorize(&b, mat.SVDNone) {
			return nil
		}
		sv := svd.Values(nil)
		if len(sv) <= ref || !(sv[ref] > 0) {
			return nil
		}
		own[e] = c.blockSmallest(sv, ref, last-first)
	}
	c.blockEnergy = own
	return own
}

// blockSmallest is the energy of an experiment's own smallest chemical factor
// by the single-experiment rule, from its singular values sv in the stack's
// factors: from its factor ref (the first after the mean level) on, each
// next one that stands above the experiment's own noise edge σ(√n + √m)
// (Marchenko–Pastur, as the rank criteria take it) and carries at least
// minorEnergy of the one before. An experiment with three species or more
// thus compares with its third or later, as it would alone.
func (c *factorClassifier) blockSmallest(sv []float64, ref, rows int) float64 {
	smallest := sv[ref] * sv[ref]
	if !(c.sigma > 0) {
		return smallest
	}
	edge := c.sigma * (math.Sqrt(float64(rows)) + math.Sqrt(float64(c.m)))
	for k := ref + 1; k < len(sv); k++ {
		if !(sv[k] > edge) || sv[k]*sv[k] < minorEnergy*sv[k-1]*sv[k-1] {
			break
		}
		smallest = sv[k] * sv[k]
	}
	return smallest
}

// minorLooksInBlocks describes a factor minor in every experiment of a stack.
func minorLooksInBlocks(shape string, shares []float64) string {
	var each []string
	for e, sh := range shares {
		each = append(each, fmt.Sprintf("%.2g %% in experiment %d", sh, e+1))
	}
	return shape + fmt.Sprintf("; of each experiment's own smallest component it carries %s: too small beside it in every experiment to tell a species from a change of band shape, so it is not counted (the stack measured it against a smaller factor that differs between the experiments)", strings.Join(each, ", "))
}
