package svd

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"github.com/bandsolve/bandsolve/internal/pvalue"
	"gonum.org/v1/gonum/mat"
)

// Criterion names in RankReport.Criteria, in this order.
const (
	CriterionNoiseFloor = "noise-floor"
	CriterionIND        = "ind"
	CriterionFTest      = "f-test"
	CriterionStructure  = "structure"
)

// Sources of RankReport.SigmaSource.
const (
	SigmaGiven    = "given"
	SigmaPreRows  = "pre-reaction rows"
	SigmaRowPairs = "successive-row differences"
	SigmaSpectrum = "singular-value median"
	SigmaTail     = "tail energy"
	SigmaNone     = "none (all-zero matrix)"
)

// defaultMaxRank caps the candidate list: bilinear resolution of more than a dozen
// components from one experiment is not a well-posed question.
const defaultMaxRank = 12

// twMargin99 is the 99 % point of the Tracy–Widom (β = 1) law of the largest eigenvalue of a
// white Wishart matrix (Johnstone, Ann. Statist. 2001; value 2.02 from memory). Pure noise
// then has its largest singular value above the count threshold in about 1 % of matrices,
// whereas the bare edge σ(√n+√m) is exceeded in roughly one matrix in six.
const twMargin99 = 2.02

// RankOptions controls EstimateRank.
type RankOptions struct {
	Sigma        float64 // known noise standard deviation per point; 0 = estimate
	PreRows      int     // the first PreRows rows precede the reaction: estimate sigma from them (successive differences / sqrt2 is robust to a common offset); one row has no difference, so 1 estimates as 0 does (the pipeline's note says so once, whichever σ it gives)
	Alpha        float64 // significance level of Malinowski's F-test (0 -> 0.05)
	MaxRank      int     // upper bound on the answer (0 = min(n,m)-1, capped at 12)
	ReferenceRow int     // -1 none; for difference data the row used as the reference (its noise is one fixed pattern in every other row: never count it)
	// PatternTime is the time shape of the reference pattern when the rows were scaled
	// (√a_i of a noise-scaled matrix √A D √B: the pattern's row i is then √a_i times the
	// fixed pattern); nil = constant. Time vectors are divided by it before the flatness test.
	PatternTime []float64
	// Blank says the rows are absolute absorbances against one blank (or
	// background) spectrum, with no reference row: the blank's own noise
	// is then the white pattern flat in time in every row, and Closed
	// says closure (Σ c_k constant) holds, under which the pattern lies in
	// the span of the species' spectra (each s_k + e) and adds no factor
	// of its own. Neither is a reference of difference data.
	Blank, Closed bool
	// Screen, when set, stands for the matrix's values where EstimateRank checks
	// them: that every entry is finite and which rows are exactly zero (see Screen).
	// The matrix may then be nil when the factors and the noise level (Sigma > 0) are
	// given, its dimensions being the screen's: a matrix formed only to be screened
	// (the data with a baseline projected out, whose factors follow from the data's,
	// ProjectFactors) is then never stored whole (ScreenRows). A screen of other
	// dimensions than the matrix's is not used.
	Screen *Screen
	// SigmaFrom says in words what a given Sigma is (e.g. the unit of a noise-weighted
	// matrix), for the reason and the noise floor's detail; "" says "given".
	SigmaFrom string
}

// Criterion is one rank criterion's answer.
type Criterion struct {
	Name     string // "noise-floor", "ind", "f-test", "structure"
	Estimate int
	// AtLeast says the count stopped at the most the criteria count
	// (RankReport.Examined, MaxRank) with more above the noise: the true count is
	// larger. The table and the classification look at two factors more
	// (MaxRank + 2), the "examined" of the reason and the notes.
	AtLeast bool
	Source  string // citation
	Detail  string // one sentence
}

// CandidateRow holds the statistics of factor K (1-based): its singular value, Malinowski's
// RE and IND after keeping K factors, the F-test significance level of factor K (probability;
// small = significant), and the lag-1 autocorrelations of its time (U) and spectrum (V) vectors.
type CandidateRow struct {
	K                                                           int
	SingularValue, RE, IND, FSignificance, AutocorrU, AutocorrV float64
	AboveNoiseEdge, ReferencePattern                            bool
	Structured                                                  bool // both vectors smoother than white noise (see Autocorrelation)
}

// RankReport is the outcome of EstimateRank.
type RankReport struct {
	Estimate    int
	Sigma       float64
	SigmaSource string
	NoiseEdge   float64 // σ(√n+√m), the Marchenko–Pastur edge
	Threshold   float64 // what a singular value must exceed to count: the edge plus a Tracy–Widom margin, never below the rounding level
	Criteria    []Criterion
	Table       []CandidateRow
	Reason      string // the consensus in words
	// Examined is the number of factors the criteria count up to (MaxRank, 12 by
	// default); Table holds two more. AboveThreshold counts every singular value of
	// the factors supplied above Threshold, beyond the table too; AboveAtLeast says
	// that all of them were above it and the decomposition was truncated, so the
	// matrix may have more.
	Examined       int
	AboveThreshold int
	AboveAtLeast   bool
	// Singular are the singular values AboveThreshold counted, those of the
	// factors supplied: a caller that projected something out first can write
	// them beside the ones of the data as given.
	Singular []float64
	// ReferencePatternFactor is the index (0-based) of the factor recognised as the
	// reference-noise pattern, -1 none.
	ReferencePatternFactor int
	Warnings               []string
	// consensusWarnings: Warnings from this index on judge the consensus
	// count (replaced when ApplyChemical changes it); ind, fTest are those
	// criteria's counts.
	consensusWarnings int
	ind, fTest        int
	capWarned         bool // the warning that the estimate reached the factors examined was given
}

// EstimateRank estimates how many factors of D carry chemistry. f may be nil (then D is
// decomposed here); if f is truncated, the statistics use f.FrobeniusSq for the tails.
//
// Criteria, each reported with its estimate and, per candidate factor, its statistic:
//
//  1. noise floor: the number of singular values above σ(√n+√m), the edge of the
//     Marchenko–Pastur law that the singular values of an n x m matrix of white noise of
//     standard deviation σ fill (Geman, Ann. Probab. 1980), raised by the 99 % Tracy–Widom
//     fluctuation of the largest noise value (Johnstone 2001). σ is the given value, else the
//     pooled successive differences of the PreRows pre-reaction rows / √2, else the smaller
//     of the robust successive-row estimate (median over row pairs) and the Gavish & Donoho
//     (2014) estimate s_med/√(max(n,m)·μ_β) from the median singular value (μ_β the
//     Marchenko–Pastur median, β = min/max); both are biased only upwards by signal.
//  2. Malinowski's indicator function: with r ≥ c the dimensions and λ_j = s_j²,
//     RE(k) = √(Σ_{j>k} λ_j / (r(c−k))), IND(k) = RE(k)/(c−k)², minimum over k = 0..MaxRank
//     (Malinowski, Anal. Chem. 1977; k = 0 added so that pure noise can answer 0).
//     And Malinowski's F-test on reduced eigenvalues λ_j/((r−j+1)(c−j+1)) (J. Chemometrics 1989):
//     F(1, c−k) = [Σ_{j>k} (r−j+1)(c−j+1)] / [(r−k+1)(c−k+1)] · λ_k / Σ_{j>k} λ_j. Factors are
//     tested from the largest down; the estimate is the number of leading factors significant
//     at level Alpha (stopping at the first that is not), which needs only λ_k and the tail sum.
//  3. structure: a factor is structured when both its time and spectrum vectors have a lag-1
//     autocorrelation (about zero) of at least 0.3 and three white-noise standard deviations
//     (Shrager & Hendler, Anal. Chem. 1982; from memory). Vectors shorter than 12 points pass.
//     The estimate is the number of leading structured factors.
//
// The reference-noise pattern of difference data (ΔA(t) = A(t) − A(ref): the reference's own
// noise e appears as −e in every row but the reference) is one more factor, of size about
// σ√(m(n−1)), often mixed by the SVD with a species of similar size. The K factors above the
// threshold are therefore rotated to the basis of span(V_K) that diagonalizes the lag-1
// autocorrelation (eigenvectors of V_Kᵀ A V_K, A the symmetric lag-1 shift): smooth and white
// parts separate there. The whitest direction is the pattern when its spectrum is white
// (autocorrelation < 0.3 and not significantly positive) and its time vector U_K S_K z is
// constant on all rows but the reference (cos² with the all-ones vector ≥ 0.8). It is
// flagged (ReferencePatternFactor is the factor with the largest share of it) and no
// criterion counts it.
//
// Consensus (Estimate): project the K factors above the threshold off the pattern direction,
// re-diagonalize (SVD of the small K x (K−1) projected core), and count the factors whose
// spectrum vector is structured and whose time vector is not white (within one white-noise
// standard deviation of the white mean counts as white), capped at MaxRank. A side is only
// judged when its length l ≥ 12 and l ≥ 5K, because the K-th of K orthogonal smooth vectors
// oscillates like an orthogonal polynomial (autocorrelation ≈ cos(πK/l)).
// Why: the noise floor is the only criterion with a physical scale (σ) and it fails in one
// direction only — when σ is underestimated, or the noise is not white, it counts factors
// that are not chemistry; those have a white spectrum or a white time vector, which the
// structure test catches, while a species has smooth bands and a smooth profile. The time
// side gets the lenient test because a dozen spectra cannot show smoothness convincingly.
// IND and the F-test need no σ but drift with matrix size and noise colour, so they are
// cross-checks: disagreement becomes a Warning, not a vote.
//
// An all-zero matrix (identical single beams: nothing happened) gives Estimate 0.
func EstimateRank(d *mat.Dense, f *Factors, opt RankOptions) (*RankReport, error) {
	p, err := newRankProblem(d, f, opt)
	if err != nil {
		return nil, err
	}
	if err := p.factorize(); err != nil {
		return nil, err
	}
	rep := p.rep
	if len(p.f.S) < p.maxRank+1 && !p.f.Full() {
		rep.warn("only %d factors were supplied; candidates beyond factor %d are not examined", len(p.f.S), len(p.f.S))
	}
	p.findReferenceRow()
	p.estimateNoise()
	p.setThreshold()
	p.tabulateCandidates()
	if err := p.findReferencePattern(); err != nil {
		return nil, err
	}
	nFloor := min(p.kAbove-p.excluded(p.kAbove), p.maxRank)
	p.countAbove()
	kInd := p.indMinimum()
	nF := p.fTestCount()
	nStruct := p.structureCount()
	est, rough := p.consensus()
	rep.Criteria = p.criteria(nFloor, kInd, nF, nStruct)
	rep.Reason = p.reason(est, rough)
	rep.ind, rep.fTest = kInd, nF
	if p.f.FrobeniusSq > 0 {
		if kInd != est && nF != est {
			rep.warn("%s", disagreement(rep.Criteria, est))
		}
		if nFloor == p.maxRank && est == p.maxRank {
			if p.maxRank < defaultMaxRank && p.maxRank == max(p.c-1, 1) {
				// The size of the data, not a choice, set the bound.
				more := "spectra"
				if p.m < p.n {
					more = "points along the axis"
				}
				rep.warn("the estimate reached the %d factor(s) a %d × %d matrix lets be judged against its noise "+
					"(one fewer than its smaller size): the rank may be higher; more %s would tell", p.maxRank, p.n, p.m, more)
			} else {
				rep.warn("the estimate reached %d, the most the criteria count: the rank may be higher or σ too small", p.maxRank)
			}
			rep.capWarned = true
		}
	}
	return rep, nil
}

// rankProblem is what EstimateRank's steps share: the data's dimensions, its
// factors, the options with their defaults filled in, and the report as it
// grows. Each step below reads what the earlier ones set.
type rankProblem struct {
	d       *mat.Dense // nil when only the screen stands for it
	f       *Factors
	opt     RankOptions
	scr     *Screen
	n, m    int
	c, rr   int // the smaller and the larger dimension, Malinowski's c and r
	alpha   float64
	maxRank int
	rep     *RankReport

	refRow int       // the reference row of difference data, -1 none
	numTol float64   // the rounding level below which a singular value is zero
	mal    indicator // Malinowski's RE and IND of the factors
	kAbove int       // factors of the table above the count threshold
	beyond int       // smooth directions above the noise beyond maxRank (consensus)
	dirs   []direction
	patDir int // the direction of dirs that is the reference-noise pattern, -1 none
}

// warn adds one warning to the report.
func (rep *RankReport) warn(format string, a ...any) {
	rep.Warnings = append(rep.Warnings, fmt.Sprintf(format, a...))
}

// newRankProblem checks the options against the data's dimensions (or its
// screen's, when there is no matrix) and fills in their defaults.
func newRankProblem(d *mat.Dense, f *Factors, opt RankOptions) (*rankProblem, error) {
	p := &rankProblem{d: d, f: f, opt: opt, scr: opt.Screen, patDir: -1}
	if d == nil {
		if !p.scr.complete() || f == nil || f.U == nil || f.V == nil || !(opt.Sigma > 0) {
			return nil, fmt.Errorf("svd: estimate rank: no matrix: give its screen, its factors and the noise level")
		}
		p.n, p.m = p.scr.Rows, p.scr.Cols
	} else {
		p.n, p.m = d.Dims()
		p.scr = p.scr.of(d)
	}
	if err := p.scr.check(d); err != nil {
		return nil, fmt.Errorf("svd: estimate rank: %w", err)
	}
	n := p.n
	p.c, p.rr = min(n, p.m), max(n, p.m)
	p.alpha = opt.Alpha
	switch {
	case p.alpha == 0:
		p.alpha = 0.05
	case !(p.alpha > 0 && p.alpha < 1):
		return nil, fmt.Errorf("svd: estimate rank: Alpha %v outside (0, 1)", opt.Alpha)
	}
	if opt.Sigma < 0 || math.IsNaN(opt.Sigma) || math.IsInf(opt.Sigma, 0) {
		return nil, fmt.Errorf("svd: estimate rank: noise level %v must be finite and ≥ 0", opt.Sigma)
	}
	if opt.PreRows < 0 || opt.PreRows > n {
		return nil, fmt.Errorf("svd: estimate rank: %d pre-reaction spectra, outside 0..%d", opt.PreRows, n)
	}
	if opt.MaxRank < 0 {
		return nil, fmt.Errorf("svd: estimate rank: largest rank %d is negative", opt.MaxRank)
	}
	if opt.ReferenceRow < -1 || opt.ReferenceRow >= n {
		return nil, fmt.Errorf("svd: estimate rank: ReferenceRow %d outside -1..%d", opt.ReferenceRow, n-1)
	}
	p.maxRank = opt.MaxRank
	if p.maxRank == 0 {
		p.maxRank = min(max(p.c-1, 1), defaultMaxRank)
	}
	p.maxRank = min(p.maxRank, p.c)
	p.rep = &RankReport{ReferencePatternFactor: -1}
	return p, nil
}

// factorize decomposes the data when no factors were given, keeping only
// enough factors for the table when the exact SVD would cost too much (the
// tails then come from FrobeniusSq), and checks given factors against the
// data's dimensions.
func (p *rankProblem) factorize() error {
	f := p.f
	if f != nil {
		if f.U == nil || f.V == nil {
			return fmt.Errorf("svd: estimate rank: factors have nil U or V")
		}
		un, ur := f.U.Dims()
		vm, vr := f.V.Dims()
		if un != p.n || vm != p.m || ur != len(f.S) || vr != len(f.S) {
			return fmt.Errorf("svd: estimate rank: factors (U %dx%d, %d values, V %dx%d) do not match the %dx%d data", un, ur, len(f.S), vm, vr, p.n, p.m)
		}
		return nil
	}
	dopt := DecomposeOptions{}
	if float64(p.n)*float64(p.m)*float64(p.c) > exactWork {
		dopt.MaxFactors = p.maxRank + 2
	}
	var err error
	if p.f, err = Decompose(p.d, dopt); err != nil {
		return fmt.Errorf("svd: estimate rank: %w", err)
	}
	return nil
}

// findReferenceRow takes the given reference row or, when none was given, a
// single exactly zero row of a non-zero matrix with at least three rows:
// difference data subtracted from that row, so its noise is a pattern
// repeated in every other row.
func (p *rankProblem) findReferenceRow() {
	p.refRow = p.opt.ReferenceRow
	if p.refRow >= 0 {
		return
	}
	var z []int
	if p.scr != nil {
		z = p.scr.zero
	} else {
		z = zeroRows(p.d)
	}
	if len(z) == 1 && p.n >= 3 && p.f.FrobeniusSq > 0 {
		p.refRow = z[0]
		p.rep.warn("row %d is exactly zero: treated as the reference row of difference data", p.refRow)
	}
}

// estimateNoise sets the report's σ and its source: the given value, else the
// pre-reaction rows' successive differences, else the smaller of the
// spectrum's estimate and the successive-row estimate (both biased only
// upwards by signal, so the smaller is the less biased).
func (p *rankProblem) estimateNoise() {
	f, opt, n, m := p.f, p.opt, p.n, p.m
	sigma, src := opt.Sigma, SigmaGiven
	switch {
	case opt.Sigma > 0:
	case f.FrobeniusSq == 0:
		sigma, src = 0, SigmaNone
	case opt.PreRows >= 2:
		sigma, src = sigmaFromRowPairs(p.d, 0, opt.PreRows, false), SigmaPreRows
	default:
		var specSigma float64
		specSrc := SigmaSpectrum
		if f.Full() {
			specSigma = sigmaFromSpectrum(f.S, n, m)
		} else {
			// Residual degrees of freedom of a rank-k fit: (n−k)(m−k).
			k := len(f.S)
			specSigma = math.Sqrt(f.TailSq(k) / (float64(n-k) * float64(m-k)))
			specSrc = SigmaTail
		}
		sigma, src = specSigma, specSrc
		if n >= 3 {
			if rs := sigmaFromRowPairs(p.d, 0, n, true); rs < sigma {
				sigma, src = rs, SigmaRowPairs
			}
		}
		if p.c < 20 {
			p.rep.warn("σ estimated from a matrix with only %d rows or columns: the noise floor is uncertain; give the noise level or the pre-reaction spectra (--pre N)", p.c)
		}
	}
	p.rep.Sigma, p.rep.SigmaSource = sigma, src
}

// setThreshold sets the Marchenko–Pastur edge and the count threshold above
// it (the Tracy–Widom margin), never below the rounding level, which it
// keeps as numTol.
func (p *rankProblem) setThreshold() {
	rep, sigma := p.rep, p.rep.Sigma
	sn, sm := math.Sqrt(float64(p.n)), math.Sqrt(float64(p.m))
	rep.NoiseEdge = sigma * (sn + sm)
	mu := (sn + sm) * (sn + sm)
	tau := (sn + sm) * math.Cbrt(1/sn+1/sm)
	rep.Threshold = sigma * math.Sqrt(mu+tau*twMargin99)
	var s1 float64
	if len(p.f.S) > 0 {
		s1 = p.f.S[0]
	}
	p.numTol = s1 * float64(p.rr) * eps // rank tolerance of numpy.linalg.matrix_rank
	if rep.Threshold < p.numTol {
		rep.Threshold = p.numTol
	}
}

// indicator computes Malinowski's statistics from the factors' tail sums.
type indicator struct {
	f     *Factors
	rr, c int
	tailW []float64 // tailW[k] = Σ_{j>k} weight(j)
}

func newIndicator(f *Factors, rr, c int) indicator {
	in := indicator{f: f, rr: rr, c: c, tailW: make([]float64, c+2)}
	for k := c - 1; k >= 0; k-- {
		in.tailW[k] = in.tailW[k+1] + in.weight(k+1)
	}
	return in
}

// weight is the F-test's reduced-eigenvalue weight (r−j+1)(c−j+1) of factor j (1-based).
func (in indicator) weight(j int) float64 { return float64(in.rr-j+1) * float64(in.c-j+1) }

// ind is RE(k) and IND(k) after keeping k factors.
func (in indicator) ind(k int) (re, indv float64) {
	if k >= in.c {
		return 0, 0
	}
	re = math.Sqrt(in.f.TailSq(k) / (float64(in.rr) * float64(in.c-k)))
	return re, re / (float64(in.c-k) * float64(in.c-k))
}

// tabulateCandidates fills the report's table with each candidate factor's
// statistics, and counts the factors above the threshold.
func (p *rankProblem) tabulateCandidates() {
	f, rep := p.f, p.rep
	p.mal = newIndicator(f, p.rr, p.c)
	kScan := min(len(f.S), p.maxRank+2, p.c)
	var colU, colV []float64 // one column at a time, the memory kept
	for k := 1; k <= kScan; k++ {
		s := f.S[k-1]
		row := CandidateRow{K: k, SingularValue: s}
		row.RE, row.IND = p.mal.ind(k)
		row.FSignificance = fSignificance(s*s, f.TailSq(k), p.mal.tailW[k], p.mal.weight(k), p.c-k)
		colU, colV = columnInto(colU, f.U, k-1), columnInto(colV, f.V, k-1)
		row.AutocorrU = Autocorrelation(colU)
		row.AutocorrV = Autocorrelation(colV)
		row.AboveNoiseEdge = s > rep.Threshold && s > 0
		row.Structured = s > p.numTol && s > 0 && structured(row.AutocorrU, p.n) && structured(row.AutocorrV, p.m)
		rep.Table = append(rep.Table, row)
		if row.AboveNoiseEdge {
			p.kAbove++
		}
	}
}

// findReferencePattern rotates the factors above the threshold to their
// smoothest basis and takes its whitest direction for the reference-noise
// pattern when its spectrum is white and its time vector flat beside the
// reference row. With no reference row known, such a direction is warned
// about where the consensus counts it (spectra too short to judge), unless
// it is a blank's noise under closure (RankOptions.Blank), which adds no
// factor.
func (p *rankProblem) findReferencePattern() error {
	opt, rep := p.opt, p.rep
	if opt.PatternTime != nil && len(opt.PatternTime) != p.n {
		return fmt.Errorf("svd: estimate rank: PatternTime has %d values for %d rows", len(opt.PatternTime), p.n)
	}
	p.dirs = smoothestBasis(p.f, p.kAbove, p.refRow, opt.PatternTime)
	if len(p.dirs) == 0 {
		return nil
	}
	d0 := p.dirs[0]
	white := d0.autocorrV < 0.3 && !structured(d0.autocorrV, p.m)
	// The consensus leaves out a direction with a white spectrum wherever
	// the spectra are long enough to judge (consensus): only where they
	// are not is such a direction counted, and worth a warning.
	counted := !judgeable(p.m, p.kAbove)
	switch {
	case p.refRow >= 0 && p.n >= 3 && white && d0.flatness >= 0.8:
		p.patDir = 0
		main := 0
		for k, z := range d0.weights {
			if math.Abs(z) > math.Abs(d0.weights[main]) {
				main = k
			}
		}
		rep.Table[main].ReferencePattern = true
		rep.ReferencePatternFactor = main
	case p.refRow < 0 && white && counted && opt.Blank && !opt.Closed && flatness(unscaled(d0.time, opt.PatternTime), -1) >= 0.8:
		rep.warn("the significant factors hold a direction that is flat in time and white across the axis, like the blank's own noise, which is the same in every absorbance spectrum; without closure it is a factor of its own and was counted: record the blank with more scans, or keep closure on, under which each species' spectrum takes it up")
	case p.refRow < 0 && white && counted && !opt.Blank && flatness(unscaled(d0.time, opt.PatternTime), -1) >= 0.8:
		rep.warn("the significant factors hold a direction that is flat in time and white across the axis, like the reference spectrum's own noise in difference data; it was counted, since no single reference row was known (several experiments, or difference input): average more reference spectra (--reference mean:N) to shrink it")
	}
	return nil
}

// excluded is 1 when a criterion's first k factors include the reference-noise
// pattern, which no criterion counts.
func (p *rankProblem) excluded(k int) int {
	if pat := p.rep.ReferencePatternFactor; pat >= 0 && (pat < k || k >= p.kAbove) {
		return 1
	}
	return 0
}

// indMinimum is where IND is smallest over k = 0..min(maxRank, c−1), one
// further when the pattern is among them (it is then not counted).
func (p *rankProblem) indMinimum() int {
	if p.f.FrobeniusSq == 0 {
		return 0
	}
	kInd := 0
	best := math.Inf(1)
	top := min(p.maxRank+p.excluded(p.maxRank), p.c-1, len(p.f.S))
	for k := 0; k <= top; k++ {
		_, v := p.mal.ind(k)
		if v < best {
			best, kInd = v, k
		}
	}
	kInd -= p.excluded(kInd)
	return max(kInd, 0)
}

// fTestCount is the number of leading factors significant in the F-test,
// tested from the largest down and stopping at the first that is not.
func (p *rankProblem) fTestCount() int {
	var nF int
	for _, row := range p.rep.Table {
		if row.SingularValue <= p.numTol || row.SingularValue == 0 || nF >= p.maxRank {
			break
		}
		if row.FSignificance >= p.alpha {
			break
		}
		if !row.ReferencePattern {
			nF++
		}
	}
	return nF
}

// structureCount is the number of leading structured factors, the pattern
// skipped.
func (p *rankProblem) structureCount() int {
	var nStruct int
	for _, row := range p.rep.Table {
		if row.ReferencePattern {
			continue
		}
		if !row.Structured || nStruct >= p.maxRank {
			break
		}
		nStruct++
	}
	return nStruct
}

// consensus counts the factors above the threshold, re-diagonalized without
// the pattern direction, that have a structured spectrum and a time vector
// that is not white (the estimate, capped at maxRank), and those that do not
// (rough). It sets the estimate and warns of structured factors beyond the cap.
func (p *rankProblem) consensus() (est, rough int) {
	beyond := 0
	for _, sf := range signalFactors(p.f, p.kAbove, p.dirs, p.patDir) {
		aU, aV := Autocorrelation(sf.u), Autocorrelation(sf.v)
		switch {
		case (!judgeable(p.m, p.kAbove) || structured(aV, p.m)) && (!judgeable(p.n, p.kAbove) || notWhite(aU, p.n)):
			if est < p.maxRank {
				est++
			} else {
				beyond++
			}
		default:
			rough++
		}
	}
	p.rep.Estimate, p.beyond = est, beyond
	p.rep.consensusWarnings = len(p.rep.Warnings)
	if beyond > 0 {
		p.rep.warn("%d more structured factor(s) above the noise lie beyond the %d the criteria count", beyond, p.maxRank)
	}
	return est, rough
}

// criteria reports each criterion's count with its source and a sentence on
// how it was reached.
func (p *rankProblem) criteria(nFloor, kInd, nF, nStruct int) []Criterion {
	rep, pat := p.rep, p.rep.ReferencePatternFactor
	patNote := ""
	if pat >= 0 {
		patNote = fmt.Sprintf("; the reference-noise pattern (mostly factor %d) not counted", pat+1)
	}
	floor := fmt.Sprintf("%d singular values exceed %.4g (σ = %.4g, %s; edge %.4g)%s", nFloor, rep.Threshold, rep.Sigma, p.sigmaWords(), rep.NoiseEdge, patNote)
	atLeast := rep.AboveThreshold-p.excluded(p.kAbove) > nFloor
	if atLeast {
		floor = fmt.Sprintf("%s of the %d singular values computed exceed %.4g (σ = %.4g, %s; edge %.4g)%s; counted up to %d, the most the criteria count", p.aboveWords(), len(p.f.S), rep.Threshold, rep.Sigma, p.sigmaWords(), rep.NoiseEdge, patNote, p.maxRank)
	}
	return []Criterion{
		{Name: CriterionNoiseFloor, Estimate: nFloor, AtLeast: atLeast,
			Source: "the largest singular value noise alone reaches, σ(√n+√m) (Marchenko–Pastur edge; Geman, Ann. Probab. 1980), raised by its chance fluctuation at the 99 % level (Tracy–Widom margin; Johnstone, Ann. Statist. 2001); σ by Gavish & Donoho (IEEE Trans. Inf. Theory 2014) when estimated from the spectrum",
			Detail: floor},
		{Name: CriterionIND, Estimate: kInd,
			Source: "Malinowski, Anal. Chem. 1977 (indicator function IND = RE/(c−k)²)",
			Detail: fmt.Sprintf("IND(k) = RE(k)/(c−k)² is smallest at k = %d over k = 0..%d%s", kInd+p.excluded(kInd+1), min(p.maxRank+p.excluded(p.maxRank), p.c-1), patNote)},
		{Name: CriterionFTest, Estimate: nF,
			Source: "Malinowski, J. Chemometrics 1989 (F-test on reduced eigenvalues)",
			Detail: fmt.Sprintf("%d leading factors are significant at level %.3g against the pooled reduced eigenvalues of the rest%s", nF, p.alpha, patNote)},
		{Name: CriterionStructure, Estimate: nStruct,
			Source: "Shrager & Hendler, Anal. Chem. 1982 (lag-1 autocorrelation of singular vectors; from memory)",
			Detail: fmt.Sprintf("%d leading factors have smooth time and spectrum vectors (lag-1 autocorrelation ≥ 0.3 and 3 white-noise standard deviations)%s", nStruct, patNote)},
	}
}

// reason puts the consensus in words: how many factors stand above the noise
// (AboveThreshold: all the singular values computed), how many the consensus
// looks at (the table's), how many smooth directions it finds there and which
// sides it could judge, and how many of them it counts (at most maxRank).
func (p *rankProblem) reason(est, rough int) string {
	rep := p.rep
	if p.f.FrobeniusSq == 0 {
		return "the matrix is exactly zero (identical single beams: nothing happened), so there are no factors"
	}
	var b strings.Builder
	fmt.Fprintf(&b, "%s factor(s) above the noise threshold %.4g (σ = %.4g, %s)", p.aboveWords(), rep.Threshold, rep.Sigma, p.sigmaWords())
	if rep.AboveThreshold > p.kAbove {
		fmt.Fprintf(&b, "; the first %d are examined", p.kAbove)
	}
	if p.kAbove > 0 {
		fmt.Fprintf(&b, "; in their span %d smooth direction(s) (%s)", est+p.beyond, p.judgedSides())
		if p.beyond > 0 {
			fmt.Fprintf(&b, ", of which %d are counted, the most the criteria count", est)
		} else {
			b.WriteString(" are counted")
		}
	}
	if rough > 0 {
		white := "time or spectrum vector"
		switch tj, sj := judgeable(p.n, p.kAbove), judgeable(p.m, p.kAbove); {
		case sj && !tj:
			white = "spectrum vector"
		case tj && !sj:
			white = "time vector"
		}
		fmt.Fprintf(&b, "; %d direction(s) with a white %s are not", rough, white)
	}
	if p.patDir >= 0 {
		fmt.Fprintf(&b, "; one direction (mostly factor %d) is the reference-noise pattern of row %d, not a species", rep.ReferencePatternFactor+1, p.refRow)
	}
	fmt.Fprintf(&b, ": estimate %d.", est)
	return b.String()
}

// judgedSides says what made a direction smooth for the consensus: both of its
// vectors, or only the side long enough to judge for kAbove directions
// (judgeable), so that a reader does not take the consensus for the structure
// criterion, which judges each factor's own two vectors.
func (p *rankProblem) judgedSides() string {
	k := p.kAbove
	need := max(minStructureLen, 5*k)
	tj, sj := judgeable(p.n, k), judgeable(p.m, k)
	switch {
	case tj && sj:
		return "time and spectrum both structured"
	case sj:
		return fmt.Sprintf("spectrum structured; the time side is not judged: %d spectra are too few for %d directions, which need %d", p.n, k, need)
	case tj:
		return fmt.Sprintf("time vector not white; the spectrum side is not judged: %d points are too few for %d directions, which need %d", p.m, k, need)
	}
	return fmt.Sprintf("neither side judged: %d spectra and %d points are too few for %d directions, which need %d", p.n, p.m, k, need)
}

// countAbove counts every singular value supplied above the threshold, the
// table's and beyond (AboveThreshold).
func (p *rankProblem) countAbove() {
	rep := p.rep
	rep.Examined = p.maxRank
	rep.AboveThreshold = 0
	for _, s := range p.f.S {
		if s > rep.Threshold && s > 0 {
			rep.AboveThreshold++
		}
	}
	rep.AboveAtLeast = rep.AboveThreshold == len(p.f.S) && !p.f.Full()
	rep.Singular = slices.Clone(p.f.S)
}

// aboveWords is AboveThreshold, "at least N" when the truncated
// decomposition had no value left below the threshold.
func (p *rankProblem) aboveWords() string {
	if p.rep.AboveAtLeast {
		return fmt.Sprintf("at least %d", p.rep.AboveThreshold)
	}
	return fmt.Sprintf("%d", p.rep.AboveThreshold)
}

// sigmaWords says where σ came from: SigmaFrom for a given σ when the caller
// said what it is.
func (p *rankProblem) sigmaWords() string {
	if p.rep.SigmaSource == SigmaGiven && p.opt.SigmaFrom != "" {
		return p.opt.SigmaFrom
	}
	return p.rep.SigmaSource
}

// disagreement says which rank criteria differ from the estimate and which
// agree with it, so that "both differ" is not read as "all the others say
// the estimate".
func disagreement(crit []Criterion, est int) string {
	var agree, differ []string
	for _, c := range crit {
		e := fmt.Sprintf("%s %d", c.Name, c.Estimate)
		if c.Estimate == est {
			agree = append(agree, e)
		} else {
			differ = append(differ, e)
		}
	}
	msg := fmt.Sprintf("%sthe estimate is %d, but %s", disagreePrefix, est, strings.Join(differ, ", "))
	if len(agree) > 0 {
		msg += fmt.Sprintf("; only %s give(s) %d", strings.Join(agree, ", "), est)
	} else {
		msg += fmt.Sprintf("; no single criterion gives %d (it counts the smooth factors above the noise floor)", est)
	}
	return msg + disagreeAdvice
}

// disagreePrefix begins the warning that the criteria disagree and
// disagreeAdvice ends it (accountDisagreement finds and rewords it).
const (
	disagreePrefix = "rank criteria disagree: "
	disagreeAdvice = ": check the noise level (--pre names the spectra taken before the reaction) and look at the singular values in the report"
)

// fSignificance is the upper-tail probability of Malinowski's F(1, dof) statistic for an
// eigenvalue lam against the pooled tail; 1 when it cannot be tested.
func fSignificance(lam, tail, tailW, w float64, dof int) float64 {
	if dof < 1 || lam <= 0 {
		return 1
	}
	if tail <= 0 {
		return 0 // exactly low rank: nothing left to compare with
	}
	fstat := tailW / w * lam / tail
	p := pvalue.FUpper(fstat, 1, float64(dof))
	if math.IsNaN(p) {
		return 1
	}
	return math.Min(math.Max(p, 0), 1)
}

// flatness is cos² of the angle between u (without row skip) and the all-ones vector: 1 for
// a time vector that is constant on every other row.
func flatness(u []float64, skip int) float64 {
	var sum, sq float64
	var cnt int
	for i, v := range u {
		if i == skip {
			continue
		}
		sum += v
		sq += v * v
		cnt++
	}
	if sq == 0 || cnt == 0 {
		return 0
	}
	return sum * sum / (float64(cnt) * sq)
}

// unscaled divides u by the expected time shape (u itself when nil; zero
// where the shape is not positive).
func unscaled(u, shape []float64) []float64 {
	if shape == nil {
		return u
	}
	out := make([]float64, len(u))
	for i, v := range u {
		if shape[i] > 0 {
			out[i] = v / shape[i]
		}
	}
	return out
}

func zeroRows(d *mat.Dense) []int {
	n, _ := d.Dims()
	var z []int
	for i := 0; i < n; i++ {
		if allZero(d.RawRowView(i)) {
			z = append(z, i)
		}
	}
	return z
}

// direction is one vector w = V_K z of the smoothest basis of the leading K factors.
type direction struct {
	weights              []float64 // z: coordinates on the factors
	autocorrV, autocorrU float64   // of w and of its time vector U_K S_K z
	flatness             float64   // of the time vector, the reference row skipped
	time                 []float64
}

// smoothestBasis rotates the leading k factors to the orthonormal basis of span(V_k) that
// diagonalizes the lag-1 autocorrelation: w = V_k z with z the eigenvectors of the k x k
// matrix M = V_kᵀ A V_k, (wᵀAw = Σ w_j w_{j+1}), so that zᵀMz is each direction's
// autocorrelation. Why rotate: when two singular values are close (a weak species and the
// reference-noise pattern of similar size) the SVD mixes them and neither factor looks
// like what it is; the smooth and the white parts of the subspace separate cleanly
// because they differ in exactly the property M measures. Returned in ascending
// autocorrelation order (the whitest first).
func smoothestBasis(f *Factors, k, refRow int, patternTime []float64) []direction {
	if k <= 0 {
		return nil
	}
	n, _ := f.U.Dims()
	m, _ := f.V.Dims()
	mm := mat.NewSymDense(k, nil)
	for a := 0; a < k; a++ {
		for b := a; b < k; b++ {
			var s float64
			for j := 0; j+1 < m; j++ {
				s += f.V.At(j, a)*f.V.At(j+1, b) + f.V.At(j+1, a)*f.V.At(j, b)
			}
			mm.SetSym(a, b, s/2)
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(mm, true) {
		return nil
	}
	vals := eig.Values(nil)
	var z mat.Dense
	eig.VectorsTo(&z)
	out := make([]direction, k)
	for l := 0; l < k; l++ {
		w := make([]float64, k)
		for a := range w {
			w[a] = z.At(a, l)
		}
		t := make([]float64, n)
		for i := range t {
			var s float64
			for a := 0; a < k; a++ {
				s += f.U.At(i, a) * f.S[a] * w[a]
			}
			t[i] = s
		}
		out[l] = direction{weights: w, autocorrV: vals[l], autocorrU: Autocorrelation(t), flatness: flatness(unscaled(t, patternTime), refRow), time: t}
	}
	if patternTime != nil {
		// Noise-scaled data: the signal stands thousands of noise units
		// above the pattern, so the whitest direction's time vector carries
		// a visible share of a smooth direction's (a rotation weight of 1e-3
		// on a factor 4000 times larger). Judge its flatness in the
		// complement of the smooth directions' time vectors: a pattern is
		// constant plus chemistry, and only the constant is left there.
		var smooth [][]float64
		for l := range out {
			if out[l].autocorrV >= 0.3 {
				smooth = append(smooth, unscaled(out[l].time, patternTime))
			}
		}
		for l := range out {
			if out[l].autocorrV < 0.3 {
				out[l].flatness = flatnessBeside(unscaled(out[l].time, patternTime), smooth, refRow)
			}
		}
	}
	return out
}

// flatnessBeside is cos² between u and the all-ones vector after both are
// projected off span(others) (row skip left out): 1 when u is a constant
// plus a combination of the others.
func flatnessBeside(u []float64, others [][]float64, skip int) float64 {
	n := len(u)
	if len(others) == 0 {
		return flatness(u, skip)
	}
	q := mat.NewDense(n, len(others), nil)
	for c, o := range others {
		for i, v := range o {
			if i != skip {
				q.Set(i, c, v)
			}
		}
	}
	if n < len(others)+2 {
		return flatness(u, skip)
	}
	orthonormalize(q)
	perp := func(x []float64) []float64 {
		y := append([]float64(nil), x...)
		if skip >= 0 && skip < n {
			y[skip] = 0
		}
		for c := range others {
			var d float64
			for i := 0; i < n; i++ {
				d += q.At(i, c) * y[i]
			}
			for i := 0; i < n; i++ {
				y[i] -= d * q.At(i, c)
			}
		}
		return y
	}
	ones := make([]float64, n)
	for i := range ones {
		ones[i] = 1
	}
	a, b := perp(u), perp(ones)
	var ab, aa, bb float64
	for i := range a {
		if i == skip {
			continue
		}
		ab += a[i] * b[i]
		aa += a[i] * a[i]
		bb += b[i] * b[i]
	}
	if aa == 0 || bb == 0 {
		return 0
	}
	return ab * ab / (aa * bb)
}

type signalFactor struct {
	s    float64
	u, v []float64
}

// signalFactors returns the SVD of the leading k factors projected off the pattern
// direction dirs[patDir] (all k factors unchanged when patDir < 0). With Z the remaining
// eigenvectors (k x (k−1)) and S_k Z = P Σ Qᵀ, the projection U_k S_k Z Zᵀ V_kᵀ has the
// factors U_k P, Σ, V_k Z Q.
func signalFactors(f *Factors, k int, dirs []direction, patDir int) []signalFactor {
	if k <= 0 {
		return nil
	}
	if patDir < 0 || len(dirs) != k {
		out := make([]signalFactor, k)
		for a := range out {
			out[a] = signalFactor{s: f.S[a], u: column(f.U, a), v: column(f.V, a)}
		}
		return out
	}
	if k == 1 {
		return nil
	}
	z := mat.NewDense(k, k-1, nil)
	col := 0
	for l, dr := range dirs {
		if l == patDir {
			continue
		}
		for a := 0; a < k; a++ {
			z.Set(a, col, dr.weights[a])
		}
		col++
	}
	sz := mat.NewDense(k, k-1, nil)
	for a := 0; a < k; a++ {
		for b := 0; b < k-1; b++ {
			sz.Set(a, b, f.S[a]*z.At(a, b))
		}
	}
	var sv mat.SVD
	if !sv.Factorize(sz, mat.SVDThin) {
		return nil
	}
	vals := sv.Values(nil)
	var p, q mat.Dense
	sv.UTo(&p)
	sv.VTo(&q)
	n, _ := f.U.Dims()
	m, _ := f.V.Dims()
	var u, zq, v mat.Dense
	u.Mul(f.U.Slice(0, n, 0, k), &p)
	zq.Mul(z, &q)
	v.Mul(f.V.Slice(0, m, 0, k), &zq)
	out := make([]signalFactor, len(vals))
	for a := range out {
		out[a] = signalFactor{s: vals[a], u: column(&u, a), v: column(&v, a)}
	}
	return out
}

// notWhite is the lenient test for time vectors, which are often short (a dozen spectra):
// it fails only a vector whose autocorrelation is within one white-noise standard deviation
// of the white mean −1/l, i.e. looks like noise; short smooth-but-noisy profiles pass.
func notWhite(a float64, l int) bool {
	if l < minStructureLen {
		return true
	}
	return (a+1/float64(l))*math.Sqrt(float64(l)) >= notWhiteZ
}

const notWhiteZ = 1

// judgeable reports whether vectors of length l can show their smoothness when k of them
// span the signal: the k-th of k orthogonal smooth vectors changes sign about k−1 times
// (like an orthogonal polynomial), and its lag-1 autocorrelation, ≈ cos(πk/l), stays clearly
// above white noise only while l ≥ 5k (cos(π/5) ≈ 0.8).
func judgeable(l, k int) bool { return l >= minStructureLen && l >= 5*k }
