package pipeline

import (
	"fmt"
	"io"
	"math"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/bandsolve/bandsolve/internal/fresh"
	"github.com/bandsolve/bandsolve/io/cmdfile"
	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/report"
	"github.com/bandsolve/bandsolve/io/spectra"
	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/svd"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// UsageError is a problem with the settings themselves (exit code 2).
type UsageError struct{ Msg string }

func (e *UsageError) Error() string { return e.Msg }

func usage(format string, a ...any) error { return &UsageError{Msg: fmt.Sprintf(format, a...)} }

// Experiment is one --data input after assembly.
type Experiment struct {
	Source    string
	Series    *spectra.Series
	Assembled *spectra.Assembled
	FirstRow  int // first row in the stacked matrix
	Rows      int
	RefRows   []int // reference rows, within this experiment
	T0        float64
}

// Result holds everything an analysis computed.
type Result struct {
	Settings    *Settings
	Started     time.Time  // when Run began (for the manifest)
	Supplied    []string   // files the command staged before the results (the demo's data)
	summaryJSON []byte     // summary printed with --json, made before the commit
	manifest    *Manifest  // as written by writeRecord; writeFileList adds the folder's files
	inputSums   *inputSums // the inputs' SHA-256, hashed beside the run (runForFolder) or the writers (finish)
	Experiments []*Experiment
	AxisName    string
	Axis        []float64
	Times       []float64 // per stacked row
	ExpOfRow    []int
	Mode        mcr.Mode
	ModeReason  string
	// D is the matrix resolved. It is the assembled matrix itself, not a
	// copy (at 20 000 × 3000 each copy is 480 MB): rows set aside are
	// imputed and the fitted baseline is subtracted in place, and the
	// experiment's Assembled.Absolute (or .Difference) that it was stacked
	// from shares the change when there is one experiment.
	D *mat.Dense
	// Weights are D's noise weights (row × column, spectra.Weights) and
	// Blind its missing points; DiffWeights those of the difference matrix
	// in species mode.
	Weights, DiffWeights *spectra.Weights
	Blind                *spectra.Blind
	// BlankOffset marks the channels where the blank stood at the
	// detector's ceiling and the sample's points were kept, their spectra
	// determined up to one amount common to the species (blankoffset.go);
	// nil when there is none.
	BlankOffset []bool
	// Scaled is √A D √B, the noise-scaled matrix the factor analysis
	// works on (nil without weights); Factors and Rank are of it then
	// (Factors is ScaledFactors, D itself is not decomposed).
	Scaled *mat.Dense
	// ScaledFactors are the factors of √A D √B (nil without weights): the
	// rank is counted on that matrix, and the compressed weighted ALS of
	// large data works from them.
	ScaledFactors *svd.Factors
	// diffMapRows are the values of the difference matrix (species mode)
	// the report's maps show, kept when the matrix itself is let go
	// (mapRows).
	diffMapRows *mapValues
	// reportMaps is maps.csv as the report reads it, from writeMaps.
	reportMaps *report.Maps
	// early are result files formatted ahead of their writers (finish).
	early earlyFiles
	// earlyEFA is EFA of the noise-scaled factors begun when the factor
	// analysis counted the components (startEFA); nil when not begun.
	earlyEFA *later[efaOutcome]
	// ahead draws the report's figures while the run computes (ahead.go).
	ahead *ahead
	// NoiseSigma is the typical noise standard deviation of D (median over
	// channels) and NoiseSource how it was found.
	NoiseSigma  float64
	NoiseSource string
	// ResidualToNoise is √(χ²/ν) of the weighted fit: 1 = fits to the noise.
	ResidualToNoise float64
	Factors         *svd.Factors
	Rank            *svd.RankReport
	// DiffRank is the rank of the difference matrix when the absolute one
	// was resolved (species mode), nil otherwise.
	DiffRank   *svd.RankReport
	Components int
	Names      []string
	ALS        *mcr.Result
	// SoftALS is the soft solution a hard–soft run (--hard-model) started from.
	SoftALS *mcr.Result
	// Kinetics is the kinetic fit of --model (nil without one).
	Kinetics *Kinetics
	// KineticsErr says why --model was not fitted (nil when it was or
	// there is none); the resolution is written all the same.
	KineticsErr error
	LackOfFit   float64 // on the full data
	// PlainRSS is ‖D − C Sᵀ‖² at the observed points, unweighted: the
	// metric of the uniqueness ranges' rise (mcr.FeasibleBands), whatever
	// the metric of the fit.
	PlainRSS  float64
	Explained float64
	NoiseLOF  float64 // lack of fit % that noise alone would give
	// NoiseDOF is the ν of ResidualToNoise and NoiseLOF: the χ² noise
	// alone leaves after this model (observed − k(n + m − k), less what
	// the profiles absorb of a reference's common noise: referenceDOF); 0
	// without noise weights. ReferenceShift is referenceDOF's part of it.
	NoiseDOF, ReferenceShift float64
	// DataSS is ‖D‖² at the observed points, unweighted, of the data as
	// assembled, before a fitted baseline is taken out of D: the lack of
	// fit's denominator, so that the figure does not move with the split
	// between species and baseline (0 until withoutBaseline sets it).
	DataSS float64
	// BaselineHeld says the baseline order was raised on the constrained
	// fits (raiseBaselineHeld): a background from the first spectrum on,
	// not anchored there as a drift is (baselineAnchors).
	BaselineHeld bool
	Compressed   bool
	EFA          *EFAReport
	Init         string
	Warnings     []string
	Notes        []string
	Advice       []string
	// Constraints: per-component constraints, their checks, uniqueness
	// ranges and bootstrap intervals (constraints.go).
	Constraints *ConstraintReport
	// Nuisances (nuisance.go): the baseline order (−1 none) and how it was
	// chosen, its coefficients (n × b) on its shapes (m × b), the
	// classification of the factors above the noise, and the spectra set
	// aside.
	BaselineOrder int
	// orderFactors are the factors besides the baseline the F-test of
	// --baseline auto fitted, orderOutliers the rows of those of them that
	// were outlier spectra (chooseBaseline); rechooseBaseline takes the same
	// less those whose spectra it sets aside.
	orderFactors  int
	orderOutliers [][]int
	// noBaselineModel, when not empty, says why no baseline model takes a
	// smooth factor (too few points, or the F-test found none needed
	// beside the factors it counted): the classification then counts
	// such factors instead of setting them aside (chooseBaseline).
	noBaselineModel string
	// orderNoise is the correlation along the axis the F-test of --baseline
	// auto measured (raiseBaselineHeld counts its points the same way).
	orderNoise svd.AxisNoise
	// fitDof is ν = observed − k(n + m − k), the fit's degrees of freedom
	// (fitFigures); misfit the test of the residual against the noise
	// (checkMisfit), Limit 0 when not tested.
	fitDof float64
	misfit misfitCheck
	// misfitSpectrum is the spectrum that carries most of the resolution's
	// misfit beyond the noise (findOneSpectrum), when one does: the
	// warnings that blame a constraint or the model name it first.
	misfitSpectrum *oneSpectrum
	// checkScale turns a lack of fit over the data less the fitted
	// baseline (the constraint checks' refits work on it) into one over
	// the data as given, as the iterations' curve and the headline are:
	// √(Σ d²_less / Σ d²_given), weighted as the fit is; 0 without a
	// baseline (nothing to turn).
	checkScale float64
	// asideOrig holds each spectrum set aside as it was before its row
	// was filled, noiseBase the noise measured on every spectrum (before
	// the screen), from which keptNoise measures it again without those
	// set aside.
	asideOrig        map[int][]float64
	noiseBase        *noiseOfAll
	BaselineReason   string
	BaselineProfiles *mat.Dense
	BaselineShapes   *mat.Dense
	Chemical         *svd.ChemicalRank
	DiffChemical     *svd.ChemicalRank
	SetAside         []SetAside
	// Minor factors (minor.go): the refit verdicts, whether they ran, and the minor
	// factors counted as species.
	MinorTests   []MinorVerdict
	MinorTested  bool
	MinorSpecies []svd.NuisanceFactor
	// Vapour is the check for water-vapour lines that change (vapour.go).
	Vapour *svd.VapourCheck
	// LineSpectra are the --vapour spectra on the common axis and
	// LineAmounts their amounts fitted in every row of D (n × len), nil
	// without.
	LineSpectra [][]float64
	LineAmounts *mat.Dense
	// vapourLists are the stack's singular values with and without the
	// vapour's course, measured after the factor analysis (nil when not
	// measured); decideVapourStack reads them at the final count.
	vapourLists *vapourLists
	// earlyFit is the first data fit of hard–soft, begun beside the soft
	// resolution (earlyDataFit); nil outside resolve.
	earlyFit *earlyDataFit
}

// Run carries out the analysis described by s. Progress lines go to log
// (nil for none).
func Run(s *Settings, log io.Writer) (*Result, error) { return run(s, log, false) }

// runForFolder is Run for a command that writes an output folder, whose
// manifest lists every data file's SHA-256. Reading them again is begun
// with the parse, at a low priority (startInputSums): it takes the time a
// core would be idle in the reading (the parse's serial scans and last
// pieces, the assembly's ordered sums) rather than a share of the factor
// analysis, which keeps both cores busy; the run waits for it before it
// returns, on every path, so that no hashing outlives the run, and finish
// takes the sums.
func runForFolder(s *Settings, log io.Writer) (*Result, error) { return run(s, log, true) }

// run reads the data, counts its components by factor analysis, resolves
// them and fits the kinetics, one step after the other. The waits for what
// the steps begin beside the work (the inputs' sums, the figures drawn
// ahead, EFA, the collection after the factor analysis) are deferred here,
// in the order the work is begun, so that none outlives the run on any
// path.
func run(s *Settings, log io.Writer, hashInputs bool) (_ *Result, err error) {
	if log == nil {
		log = io.Discard
	}
	if err := checkRunSettings(s); err != nil {
		return nil, err
	}
	r := &Result{Settings: s, Started: time.Now(), BaselineOrder: -1}
	plan, err := planReading(s)
	if err != nil {
		return nil, err
	}
	if hashInputs {
		// Begun with the parse, at a low priority (startInputSums).
		r.inputSums = startInputSums(fileData(s))
		defer func() {
			if err != nil {
				r.inputSums.abandon() // no manifest: do not read on
			}
			r.inputSums.wait()
		}()
	}
	diffRows, err := readExperiments(r, plan, log)
	if err != nil {
		return nil, err
	}
	if err := setAsideRows(r); err != nil {
		return nil, err
	}
	checkVapour(r)
	if hashInputs {
		// A folder's spectrum files are known now.
		r.inputSums = startInputSumsAfter(r.inputSums, dataFiles(r))
		if s.Report != "off" {
			r.ahead = startAhead()
			defer r.ahead.wait()
		}
	}
	fa, err := factorAnalysis(r, diffRows, log)
	if err != nil {
		return nil, err
	}
	startEFA(r, askedComponents(s, r.Rank.Estimate))
	defer r.earlyEFA.get() // no goroutine outlives the run
	fa.rankFindings()
	r.vapourLists = measureVapourLists(r) // before the resolution changes D
	n, m := r.D.Dims()
	defer collectAfterFactorAnalysis(n, m).get()
	r.ahead.aheadData(r)
	r.ahead.aheadSingular(r)
	if err := chooseComponents(r); err != nil {
		return nil, err
	}
	if r.Components == 0 {
		r.LackOfFit, r.Explained = 0, 100
		nuisanceAdvice(r)
		reportVapour(r)
		return r, nil
	}
	if err := resolveAndFit(r, log); err != nil {
		return nil, err
	}
	reportVapour(r)
	return r, nil
}

// checkRunSettings refuses settings that cannot describe a run before
// anything is read.
func checkRunSettings(s *Settings) error {
	if len(s.Data) == 0 {
		return usage("no input: give --data PATH (a matrix CSV, a folder of spectra or a JCAMP-DX file)")
	}
	if s.Times != "" && s.TimesFromName {
		return usage("--times and --times-from-name both give the times: use one")
	}
	if err := checkBlanks(s); err != nil {
		return err
	}
	return checkKineticsSettings(s)
}

// readingPlan is how the inputs are to be read: a folder's options, the
// kind of spectra asked for and the --reference setting (the mean of the
// first refMean spectra, or the spectrum in refFile; refOwn when that is
// one of a --data folder's own spectra, kept in its series).
type readingPlan struct {
	folder  spectra.FolderOptions
	kind    spectra.Kind
	refMean int
	refFile string
	refOwn  bool
}

// planReading forms the reading's options from the settings. The times,
// blank and reference files are left out of a folder's spectra.
func planReading(s *Settings) (readingPlan, error) {
	kind := spectra.Kind(s.Kind)
	folder := spectra.FolderOptions{TimesFile: s.Path(s.Times), TimesFromName: s.TimesFromName, TimeUnit: inputTimeUnit(s), Resample: s.Resample,
		// Single beams are scanned channel by channel as they are parsed
		// (the assembly's maxima, blind points and noise scales, the same
		// values), while each channel's values are in cache.
		ScanBeams: kind == spectra.SingleBeam, Pre: s.Pre}
	folder.TimesLabel = s.Times
	folder.Drop = s.Drops
	if s.Times != "" {
		folder.Exclude = append(folder.Exclude, s.Path(s.Times))
	}
	for _, b := range s.Blanks {
		if b != "" {
			folder.Exclude = append(folder.Exclude, s.Path(b))
		}
	}
	for _, f := range s.Vapour {
		folder.Exclude = append(folder.Exclude, s.Path(f))
	}
	refMean, refFile, err := spectra.ParseReference(s.Reference)
	if err != nil {
		return readingPlan{}, usage("--%v", err) // it names the value: reference "mean:0": …
	}
	own := refFile != "" && kind == spectra.Absorbance && ownReference(s, refFile, folder)
	if refFile != "" && !own {
		folder.Exclude = append(folder.Exclude, s.Path(refFile))
	}
	return readingPlan{folder: folder, kind: kind, refMean: refMean, refFile: refFile, refOwn: own}, nil
}

// ownReference says the --reference file of absorbance input is one of a
// --data folder's own spectra (spectra.OwnSpectrum): it stays in the
// series at its time and the differences are taken against its row, where
// leaving it out would drop a spectrum and shift the times of a series
// timed from its first file. A reference recorded apart is left out of the
// folder as before, and so is any reference file of other kinds.
func ownReference(s *Settings, refFile string, folder spectra.FolderOptions) bool {
	for _, p := range s.Data {
		if p != "" && spectra.OwnSpectrum(s.Path(p), s.Path(refFile), folder) {
			return true
		}
	}
	return false
}

// readExperiments reads every input, puts them on the channels they share
// and assembles them into r.D. In species mode it returns the difference
// matrix's rows too, whose rank the factor analysis counts beside D's.
func readExperiments(r *Result, p readingPlan, log io.Writer) ([]*mat.Dense, error) {
	s := r.Settings
	series, kind, err := loadSeries(s, r, p.folder, p.kind, log)
	if err != nil {
		return nil, err
	}
	if kind == spectra.Difference && s.Reference != NewSettings().Reference {
		return nil, usage("--reference %s with --kind difference: difference spectra carry their reference already (each is ΔA against the state it was taken against), so no other can be set; leave out --reference, or give the spectra as absorbance (--kind absorbance) to choose the state", s.Reference)
	}
	first := series[0]
	axis, chans, err := commonChannels(s, series)
	if err != nil {
		return nil, err
	}
	blanks, refSpec, err := fixedSpectra(r, first, axis, chans, kind, p.refFile)
	if err != nil {
		return nil, err
	}
	if err := readLineSpectra(r, first, axis, chans); err != nil {
		return nil, err
	}
	if s.Pre > 0 && p.refMean > 1 && p.refMean > s.Pre {
		return nil, usage("--reference mean:%d averages more spectra than the %d before the reaction (--pre %d)", p.refMean, s.Pre, s.Pre)
	}
	opt := spectra.AssembleOptions{Kind: kind,
		Reference: spectra.Reference{Mean: p.refMean, File: refSpec}, Consume: true, Pre: s.Pre,
		BlankOffsetFree: blankOffsetAbsorbed(s)}
	diffRows, err := assembleExperiments(s, r, series, axis, chans, opt, blanks, p)
	if err != nil {
		return nil, err
	}
	if r.Mode == mcr.Species {
		if w := saturationWarning(r); w != "" {
			r.Warnings = append(r.Warnings, w)
		}
	}
	r.Notes = append(r.Notes, spectra.NoiseNotes(first.AxisName, axis, r.Weights.ChannelSigma(), r.Blind)...)
	r.Notes = append(r.Notes, spectrumNoiseNotes(r)...)
	if note := preOneNote(r); note != "" {
		r.Notes = append(r.Notes, note)
	}
	n, m := r.D.Dims()
	fmt.Fprintf(log, "data: %d spectra × %d points, %s mode\n", n, m, r.Mode)
	return diffRows, nil
}

// preOneNote says what --pre 1 does: the noise estimate from spectra before
// the reaction takes successive differences, which one spectrum lacks, so
// only the spectrum's other roles remain (default t0, zero extents); when
// the reference is that first spectrum it has both roles already and the
// run is the same as without --pre. A note, not an error: the setting is
// consistent, just weaker than its user may think.
func preOneNote(r *Result) string {
	if r.Settings.Pre != 1 {
		return ""
	}
	note := "--pre 1: the noise estimate from spectra taken before the reaction needs at least 2 (it takes their successive differences), so the noise comes from the whole series, as without --pre; --pre 1 only makes the first spectrum's time the default --t0 of --model and, in reactions mode, holds its extents at zero"
	if !slices.ContainsFunc(r.Experiments, func(e *Experiment) bool { return !slices.Contains(e.RefRows, 0) }) {
		note += "; the reference spectrum (the first) does both already, so the results are those without --pre"
	}
	return note + "; to measure the noise before the reaction, give --pre the number of spectra taken before it (2 or more)"
}

// setAsideRows sets aside the spectra --drop names: they are imputed in D
// from the others, so that no later step reads them as data.
func setAsideRows(r *Result) error {
	drops, err := parseDrops(r)
	if err != nil {
		return err
	}
	if err := keptEnough(r, drops); err != nil {
		return err
	}
	if len(drops) > 0 {
		r.SetAside = drops
		// As they were read: the noise is measured again with and without
		// them (keptNoise), and a row filled from its neighbours would
		// make a step of zero with the one it copies.
		rememberAside(r)
		imputeRows(r, drops, nil, nil)
	}
	return nil
}

// minKept is the fewest spectra an experiment must keep after --drop: one
// spectrum shows no change in time (difference data needs two, a
// reference and a later one), and a spectrum set aside is filled in from
// the kept ones of its own experiment (imputeRows), so with none kept it
// would be made from nothing.
const minKept = 2

// keptEnough refuses --drop settings that leave an experiment fewer than
// minKept spectra, or fewer spectra in all than --components asks for
// (each component needs a spectrum of its own to be told apart).
func keptEnough(r *Result, drops []SetAside) error {
	if len(drops) == 0 {
		return nil
	}
	kept := make([]int, len(r.Experiments))
	for _, e := range r.Experiments {
		kept[r.ExpOfRow[e.FirstRow]] = e.Rows
	}
	for _, d := range drops {
		kept[r.ExpOfRow[d.Row]]--
	}
	total := 0
	for i, e := range r.Experiments {
		total += kept[i]
		if kept[i] < minKept {
			return usage("--drop sets aside %d of the %d spectra of %s: %d remain, and a resolution needs at least %d of each experiment; drop fewer", e.Rows-kept[i], e.Rows, e.Source, kept[i], minKept)
		}
	}
	if k, err := strconv.Atoi(r.Settings.Components); err == nil && total < k {
		return usage("--drop leaves %d spectra, fewer than the %d components asked for (--components %d); drop fewer, or ask for at most %d components", total, k, k, total)
	}
	return nil
}

// factorRun is the factor analysis' state its steps share.
type factorRun struct {
	r    *Result
	n, m int
	// maxF caps the factors of large data's randomized SVD (0: all).
	maxF int
	// refRow is the single reference row of one experiment in reactions
	// mode (−1: none): its own noise is one fixed pattern in every row.
	refRow int
	rf     *svd.Factors // factors of the matrix the rank is counted on
	f      *svd.Factors // factors of D itself (without weights)
	// noise is the trusted noise level of the rank's inputs (0: svd's
	// own), work the scratch of the scaled matrix's SVD, which the
	// difference matrix's serves again.
	noise float64
	work  *svd.Workspace
	// spare is the difference matrix's memory lent to √A D √B, refs the
	// experiments' fixed spectra it is rebuilt from (borrowDifference);
	// diffRows are the difference matrix's rows when not lent.
	spare    *mat.Dense
	refs     [][]float64
	diffRows []*mat.Dense
}

// factorAnalysis decomposes the data, with noise weights the noise-scaled
// √A D √B, and counts its rank while it chooses the baseline's order
// (chooseBaseline).
func factorAnalysis(r *Result, diffRows []*mat.Dense, log io.Writer) (*factorRun, error) {
	fa := &factorRun{r: r, diffRows: diffRows, refRow: -1}
	fa.n, fa.m = r.D.Dims()
	if largeData(fa.n, fa.m) {
		fa.maxF = largeFactors
	}
	fmt.Fprintf(log, "factor analysis\n")
	if r.Mode == mcr.Reactions && len(r.Experiments) == 1 && len(r.Experiments[0].RefRows) == 1 {
		fa.refRow = r.Experiments[0].RefRows[0]
	}
	if weighted(r) && r.Mode == mcr.Species && r.DiffWeights != nil {
		fa.spare, fa.refs = borrowDifference(r, diffRows)
	}
	r.ahead.aheadData(r)
	var in rankInputs
	var err error
	if weighted(r) {
		in, err = fa.scaledFactors(log)
	} else {
		in, err = fa.plainFactors()
	}
	if err != nil {
		return nil, err
	}
	in.opt.Blank, in.opt.Closed = blankPattern(r)
	noiseOf(r)
	if err := chooseBaseline(r, fa.rf, in); err != nil {
		return nil, err
	}
	fa.noise, fa.work = in.noise, in.work
	return fa, nil
}

// blankPattern says, for the rank of D, whether its rows are absolute
// absorbances against one blank (species mode), whose own noise is one
// pattern in every row, and whether closure holds, under which the
// species' spectra take that pattern up (svd.RankOptions.Blank).
func blankPattern(r *Result) (blank, closed bool) {
	if r.Mode != mcr.Species {
		return false, false
	}
	totals, err := parseTotals(r.Settings.Closure)
	return true, err == nil && totals != nil
}

// scaledFactors decomposes the noise-scaled matrix √A D √B, whose noise is
// white with σ = 1 (docs/measurement.md §2): the rank, the baseline's order
// and the nuisance classification are counted on it.
func (fa *factorRun) scaledFactors(log io.Writer) (rankInputs, error) {
	r := fa.r
	var in rankInputs
	if r.Blind != nil && r.Blind.Count > 0 {
		// Fill the blind points from the noise-scaled low-rank model
		// before the rank is counted: the placeholders are not data.
		rf, _, err := weightedFactors(r, fa.maxF, -1, log)
		if err != nil {
			return in, err
		}
		fa.rf = rf
		in = weightedRankInputs(r, r.Scaled, r.Weights.Row, r.Weights.Col, fa.refRow, fa.maxF)
		// The blind points hold the rank-k model's values now.
		in.missing = r.Blind.Rows
		r.Scaled = nil // not held further: EFA and purest variables use its factors
	} else {
		in = fa.scaleScreened()
	}
	if fa.rf == nil {
		if err := fa.decomposeScaled(&in); err != nil {
			return in, err
		}
	}
	// Every later step reads the factors of √A D √B: the singular
	// values written and drawn beside the rank's noise edge (in the
	// same units), EFA, purest variables and the starts. D itself is
	// not decomposed: the outlier test's noise level in D's units
	// comes from the noise model (plainSigma).
	r.ScaledFactors, r.Factors = fa.rf, fa.rf
	return in, nil
}

// scaleScreened writes √A D √B, into the difference matrix's lent memory
// when there is some, with its screen made as it is written.
func (fa *factorRun) scaleScreened() rankInputs {
	r := fa.r
	scaled := fa.spare
	if scaled == nil {
		scaled = fresh.Matrix(fa.n, fa.m)
	}
	scaled, screen := svd.ScaleIntoScreened(scaled, r.D, r.Weights.Row, r.Weights.Col)
	in := weightedRankInputs(r, scaled, r.Weights.Row, r.Weights.Col, fa.refRow, fa.maxF)
	in.screen = screen
	// The baseline's projection overwrites this copy and
	// rebuilds it from D: one scaled matrix instead of two.
	in.reuse = true
	in.rebuild = func(d *mat.Dense) { svd.ScaleInto(d, r.D, r.Weights.Row, r.Weights.Col) }
	return in
}

// decomposeScaled takes the randomized SVD of the scaled matrix in.d.
func (fa *factorRun) decomposeScaled(in *rankInputs) error {
	r := fa.r
	// D Q for the baseline's choice rides along in the first
	// pass over the scaled matrix instead of a pass of its own.
	in.basis, in.dq = baselineBesides(r, in.d, in.col)
	// The scratch of its randomized SVD serves again for the
	// difference matrix's (lentDifferenceRank), of the same shape.
	in.work = new(svd.Workspace)
	opt := svd.DecomposeOptions{MaxFactors: fa.maxF, Seed: r.Settings.Seed, Screen: in.screen, Beside: in.basis, BesideInto: in.dq, Work: in.work}
	rf, err := svd.Decompose(in.d, opt)
	if err != nil {
		return fmt.Errorf("factor analysis: %w", err)
	}
	fa.rf = rf
	return nil
}

// plainFactors decomposes D itself (no noise weights); the rank's noise
// level is pooled from the rows before the reaction (pooledSigma).
func (fa *factorRun) plainFactors() (rankInputs, error) {
	r, s := fa.r, fa.r.Settings
	f, err := svd.Decompose(r.D, svd.DecomposeOptions{MaxFactors: fa.maxF, Seed: s.Seed})
	if err != nil {
		return rankInputs{}, fmt.Errorf("factor analysis: %w", err)
	}
	fa.f = f
	fa.rf, r.Factors = f, f
	pooled := pooledSigma(s, r, r.D)
	in := rankInputs{d: r.D, opt: svd.RankOptions{PreRows: preRowsFor(s, r), Sigma: pooled, SigmaFrom: pooledWords, Alpha: s.Alpha, ReferenceRow: fa.refRow}, maxF: fa.maxF, noise: pooled}
	if r.Blind != nil && r.Blind.Count > 0 {
		// Without weights the blind points keep their placeholders (not
		// the model's values): only the channels blind everywhere can be
		// left out of the baseline's test.
		in.missing = everywhereBlind(r.Blind.Rows)
	}
	return in, nil
}

// rankFindings says where the rank's noise level came from and adds what
// the rank tells: the difference matrix's own rank in species mode (or the
// number of reactions the differences show), the rank's warnings, and the
// reference's own noise when a factor is that.
func (fa *factorRun) rankFindings() {
	r, s := fa.r, fa.r.Settings
	rank := r.Rank
	switch {
	case weighted(r):
		rank.SigmaSource = "noise model from the data (" + r.NoiseSource + "); the matrix is scaled so that its noise has σ = 1"
	case fa.noise > 0:
		rank.SigmaSource = "pre-reaction rows of every experiment"
	}
	if !weighted(r) {
		r.NoiseSigma, r.NoiseSource = rank.Sigma, rank.SigmaSource
	}
	if fa.spare != nil {
		lentDifferenceRank(r, fa.spare, fa.refs, fa.rf, fa.maxF, fa.work)
		diffAdvice(r, rank)
	} else if r.Mode == mcr.Species {
		copiedDifferenceRank(r, s, fa.diffRows, fa.rf, fa.f, fa.maxF)
		diffAdvice(r, rank)
	} else if rank.Estimate > 0 {
		r.Advice = append(r.Advice, reactionsAdvice(rank.Estimate))
	}
	r.Warnings = append(r.Warnings, rank.Warnings...)
	if note := smoothCountedNote(r); note != "" {
		r.Advice = append(r.Advice, note)
	}
	if rank.ReferencePatternFactor >= 0 {
		r.Advice = append(r.Advice, fmt.Sprintf("factor %d is the reference spectrum's own noise (flat in time, white across the axis): one fixed pattern in every difference spectrum, not a reaction, so it is not counted; averaging several pre-reaction spectra as the reference (--pre N --reference mean:N) shrinks it by √N", rank.ReferencePatternFactor+1))
	}
}

// chooseComponents sets r.Components: --components, or the rank estimate
// with auto, and none when the data does not change.
func chooseComponents(r *Result) error {
	s, rank := r.Settings, r.Rank
	n, m := r.D.Dims()
	k := askedComponents(s, rank.Estimate)
	if s.Components != "auto" {
		if k > min(n, m) {
			return usage("--components %d: the data has only %d spectra × %d points; ask for at most %d", k, n, m, min(n, m))
		}
		if k != rank.Estimate {
			r.Notes = append(r.Notes, fmt.Sprintf("%d components as asked; the rank estimate is %d", k, rank.Estimate))
		}
	}
	unchanged := k > 0 && s.Components == "auto" && r.DiffRank != nil && r.DiffRank.Estimate == 0
	if unchanged {
		// Absorbance of rank k but differences of rank 0: nothing changed,
		// and a profile that never varies cannot be resolved (purest
		// variables and EFA both look for change over time).
		k = 0
		if n := setAsideAboveNoise(r.DiffChemical); n > 0 {
			r.Notes = append(r.Notes, fmt.Sprintf("no change counted: the difference spectra's %d factor(s) above the noise are all set aside as not chemistry (see the advice), so the absorbance's rank %d is taken as the unchanging spectrum itself; nothing to resolve", n, rank.Estimate))
		} else {
			r.Notes = append(r.Notes, fmt.Sprintf("no change: every spectrum equals the first within noise (the difference spectra have rank 0; the absorbance's rank %d is the unchanging spectrum itself); nothing to resolve", rank.Estimate))
		}
	}
	r.Components = k
	if k == 0 && !unchanged {
		if n := setAsideAboveNoise(r.Chemical); n > 0 {
			r.Notes = append(r.Notes, fmt.Sprintf("no component counted: the %d factor(s) above the noise are all set aside as not chemistry (see the advice); nothing to resolve", n))
		} else {
			r.Notes = append(r.Notes, "no change: every spectrum equals the reference within noise, a flat line at zero absorbance; nothing to resolve")
		}
	}
	return nil
}

// setAsideAboveNoise counts the factors above the noise the classification
// set aside, but for the reference's own noise (noise, if fixed in every
// difference spectrum): with any, the spectra do not equal each other
// within noise, whatever the count of components.
func setAsideAboveNoise(cr *svd.ChemicalRank) int {
	if cr == nil {
		return 0
	}
	n := 0
	for _, nf := range cr.Nuisance {
		if nf.Kind != svd.NuisancePattern {
			n++
		}
	}
	return n
}

// resolveAndFit resolves r.Components components, then gives what depends
// on the resolution: the nuisance advice, EFA and the kinetic fit.
func resolveAndFit(r *Result, log io.Writer) error {
	if err := resolve(r, log); err != nil {
		return err
	}
	nuisanceAdvice(r) // after the refit test of minor factors, whose verdicts it gives
	computeEFA(r)
	if err := fitKinetics(r, log); err != nil {
		// The resolution does not depend on the model: keep it, say why the
		// kinetics are missing, and let Execute fail after writing.
		r.Kinetics, r.KineticsErr = nil, err
		r.Warnings = append(r.Warnings, "kinetics not done: "+causeText(err))
	}
	return nil
}

// askedComponents is the number of components to resolve before the check
// for unchanged data: --components, or the rank estimate with auto.
func askedComponents(s *Settings, estimate int) int {
	if s.Components == "auto" {
		return estimate
	}
	k, _ := strconv.Atoi(s.Components)
	return k
}

// singleReferenceRow is the row of the reference spectrum when there is one
// experiment with one reference row, else -1.
func singleReferenceRow(r *Result) int {
	if len(r.Experiments) == 1 && len(r.Experiments[0].RefRows) == 1 {
		return r.Experiments[0].RefRows[0]
	}
	return -1
}

// lentDifferenceRank counts the difference matrix's chemical rank (species
// mode with noise weights) on the scaled differences rebuilt from D and the
// references refs in the memory √A D √B borrowed (borrowDifference).
func lentDifferenceRank(r *Result, spare *mat.Dense, refs [][]float64, rf *svd.Factors, maxF int, work *svd.Workspace) {
	// The differences have their own noise (the reference's added):
	// scaled with their own weights, their noise is white with σ = 1.
	// Rebuilt from D in the lent memory, their randomized SVD starting
	// from the row space √A D √B's factors already found
	// (weightedDifferenceStart).
	ref := singleReferenceRow(r)
	start := weightedDifferenceStart(r, refs, rf)
	scaled, screen := scaledDifferenceInto(spare, r, refs)
	din := weightedRankInputs(r, scaled, r.DiffWeights.Row, r.DiffWeights.Col, ref, maxF)
	din.reuse, din.start, din.screen, din.work = true, start, screen, work
	r.DiffRank, r.DiffChemical, _ = chemicalRank(r, din.d, nil, r.BaselineOrder, din, false)
}

// copiedDifferenceRank counts the difference matrix's chemical rank (species
// mode) on the stacked differences of the experiments, which it lets go of.
func copiedDifferenceRank(r *Result, s *Settings, diffRows []*mat.Dense, rf, f *svd.Factors, maxF int) {
	dd := stack(diffRows)
	ref := singleReferenceRow(r)
	din := rankInputs{opt: svd.RankOptions{PreRows: preRowsFor(s, r), Sigma: pooledSigma(s, r, dd), SigmaFrom: pooledWords, Alpha: s.Alpha, ReferenceRow: ref}, maxF: maxF, noise: pooledSigma(s, r, dd)}
	// The difference matrix's last use: the report keeps its map rows,
	// and the experiments let go of it, so that it is no longer held
	// beside D (1.2 GB at 50 000 × 3000) and may be worked in place.
	// The maps show the experiments' own matrices, which the blind
	// points' filling below reaches only when dd is the one of a
	// single experiment (stack copies several).
	weightedDiff := weighted(r) && r.DiffWeights != nil
	if len(r.Experiments) > 1 {
		r.diffMapRows = mapRows(r, dd)
	}
	if weightedDiff {
		fillDifferenceBlind(r, dd)
	}
	if len(r.Experiments) == 1 {
		r.diffMapRows = mapRows(r, dd)
	}
	for _, e := range r.Experiments {
		e.Assembled.Difference = nil
	}
	if weightedDiff {
		// The differences have their own noise (the reference's added):
		// scaled with their own weights, their noise is white with σ = 1.
		// Scaled and then projected in place: dd is not used again.
		// Its randomized SVD starts from the row space the factors of
		// √A D √B already found (weightedDifferenceStart).
		start := weightedDifferenceStart(r, referenceSpectra(r, dd), rf)
		scaled, screen := svd.ScaleIntoScreened(dd, dd, r.DiffWeights.Row, r.DiffWeights.Col)
		din = weightedRankInputs(r, scaled, r.DiffWeights.Row, r.DiffWeights.Col, ref, maxF)
		din.reuse, din.start, din.screen = true, start, screen
		r.DiffRank, r.DiffChemical, _ = chemicalRank(r, din.d, nil, r.BaselineOrder, din, false)
	} else if r.BaselineOrder >= 0 {
		r.DiffRank, r.DiffChemical, _ = chemicalRank(r, dd, nil, r.BaselineOrder, din, false)
	} else if fd, err := differenceFactors(r, dd, f, maxF); err == nil {
		r.DiffRank, r.DiffChemical, _ = chemicalRank(r, dd, fd, -1, din, false)
	}
}

// differenceRankReason is the difference rank's reason, with each factor above the
// noise it leaves out and why: the advice explains only the main rank's.
func differenceRankReason(r *Result) string {
	var b strings.Builder
	b.WriteString(r.DiffRank.Reason)
	if cr := r.DiffChemical; cr != nil {
		for _, nf := range cr.Nuisance {
			fmt.Fprintf(&b, " Factor %d (%.2g %% of the signal) is not counted: %s.", nf.Factor, nf.SharePercent, nf.Looks)
		}
		if cr.NoiseLike > 0 {
			fmt.Fprintf(&b, " %d factor(s) above the white-noise level have a time vector as white as noise (noise correlated along the axis), not counted.", cr.NoiseLike)
		}
	}
	return b.String()
}

// diffAdvice says what the difference rank adds to the absorbance's rank.
func diffAdvice(r *Result, rank *svd.RankReport) {
	if r.DiffRank == nil {
		return
	}
	switch {
	case r.DiffRank.Estimate == 0 && setAsideAboveNoise(r.DiffChemical) > 0:
		r.Advice = append(r.Advice, fmt.Sprintf("the difference spectra's %d factor(s) above the noise are all set aside as not chemistry: no reaction is counted", setAsideAboveNoise(r.DiffChemical)))
	case r.DiffRank.Estimate == 0:
		r.Advice = append(r.Advice, "the difference spectra show no change beyond noise: nothing reacted")
	case r.DiffRank.Estimate < rank.Estimate:
		r.Advice = append(r.Advice, countsAdvice(r.DiffRank.Estimate, rank.Estimate))
	}
}

// reactionsAdvicePrefix begins the advice on the count of difference data
// alone (reactionsAdvice).
const reactionsAdvicePrefix = "difference data has rank "

// reactionsAdvice says what a count of k reactions of difference data alone
// means.
func reactionsAdvice(k int) string {
	return fmt.Sprintf(reactionsAdvicePrefix+"%d = the number of independent reactions it shows (at least %d species take part; a rank deficiency can hide more); to resolve species give a blank single beam (--blank) or absorbance input", k, k+1)
}

// countsAdvice compares the absolute absorbance's count k with the
// differences' kd (kd < k).
func countsAdvice(kd, k int) string {
	return fmt.Sprintf(rankAdvicePrefix+"%d chemical component(s) and the differences %d: at least %d species take part in %d independent reaction(s) (species whose amounts stay in a fixed ratio, or several closed subsystems, add no rank and can hide)", k, kd, k, kd)
}

// recountAdvice brings the advice comparing the two counts up to date once
// the count of species changed after it was written (a minor factor
// counted as a species): it said "2 chemical components" beside a rank of 3.
func recountAdvice(r *Result) {
	if r.Mode == mcr.Reactions {
		// Difference data alone: its rank is the count of reactions the
		// advice gives, which the count just raised.
		for i, a := range r.Advice {
			if strings.HasPrefix(a, reactionsAdvicePrefix) {
				r.Advice[i] = reactionsAdvice(r.Rank.Estimate)
			}
		}
		return
	}
	if r.DiffRank == nil || r.DiffRank.Estimate == 0 {
		return
	}
	line := ""
	if r.DiffRank.Estimate < r.Rank.Estimate {
		line = countsAdvice(r.DiffRank.Estimate, r.Rank.Estimate)
	}
	for i, a := range r.Advice {
		if strings.HasPrefix(a, rankAdvicePrefix) {
			if line == "" {
				r.Advice = slices.Delete(r.Advice, i, i+1)
			} else {
				r.Advice[i] = line
			}
			return
		}
	}
	if line != "" {
		r.Advice = slices.Insert(r.Advice, 0, line)
	}
}

// addExperiment assembles one experiment's series on the common channels
// (its absorbances or differences, noise model and weights) and appends it
// to r: the experiment, its rows' times and experiment index, its notes and
// warnings. row is its first row in the stacked matrix.
func addExperiment(s *Settings, r *Result, source string, ser, sub *spectra.Series, opt spectra.AssembleOptions, refFile string, row int) (*spectra.Assembled, error) {
	kind, refMean := opt.Kind, opt.Reference.Mean
	n, _ := sub.Values.Dims()
	if n < 2 && kind != spectra.Difference && opt.Reference.File == nil {
		return nil, fmt.Errorf("%s: holds one spectrum only; difference data needs at least two (a reference and a later one)", ser.Source)
	}
	if s.Pre >= n {
		return nil, usage("--pre %d: %s has only %d spectra", s.Pre, ser.Source, n)
	}
	if refFile == "" && kind != spectra.Difference && refMean > n {
		return nil, usage("--reference mean:%d: %s has only %d spectra; average at most %d", refMean, ser.Source, n, n)
	}
	sub.Label = source // notes name the path as written, whatever the working directory
	as, err := spectra.Assemble(sub, opt)
	if err != nil {
		return nil, inputContext(ser.Source, err)
	}
	if err := checkAssembledFinite(ser.Source, sub, as); err != nil {
		return nil, err
	}
	e := &Experiment{Source: source, Series: sub, Assembled: as, FirstRow: row, Rows: n, RefRows: as.ReferenceRows}
	e.T0 = sub.Times[0]
	if len(as.ReferenceRows) > 0 {
		e.T0 = sub.Times[as.ReferenceRows[len(as.ReferenceRows)-1]]
	}
	if s.Pre > 0 {
		e.T0 = sub.Times[s.Pre-1]
	}
	if s.T0 != "" {
		e.T0, _ = strconv.ParseFloat(s.T0, 64)
	}
	r.Experiments = append(r.Experiments, e)
	r.Notes = append(r.Notes, as.Notes...)
	r.Warnings = append(r.Warnings, as.Warnings...)
	if kind == spectra.Difference {
		if w := staticDifferences(source, as.Difference); w != "" {
			r.Warnings = append(r.Warnings, w)
		}
	}
	for i := 0; i < n; i++ {
		r.Times = append(r.Times, sub.Times[i])
		r.ExpOfRow = append(r.ExpOfRow, len(r.Experiments)-1)
	}
	return as, nil
}

// commonChannels checks that the experiments share one axis (or --resample
// is given, then their common range is taken) and returns the axis values
// kept by --region and --exclude with their indices into the common axis
// (the first experiment's own without --resample).
func commonChannels(s *Settings, series []*spectra.Series) ([]float64, []int, error) {
	first := series[0]
	for _, ser := range series[1:] {
		if len(ser.Axis) != len(first.Axis) || !sameAxis(ser.Axis, first.Axis) {
			if !s.Resample {
				return nil, nil, fmt.Errorf("%s: its axis differs from %s's; use --resample or export both on one axis", ser.Source, first.Source)
			}
		}
	}
	// Channels: regions and exclusions on the first experiment's axis.
	var keep, excl []spectra.Range
	for _, v := range s.Regions {
		x, _ := ParseRange(v)
		keep = append(keep, spectra.Range{Lo: x[0], Hi: x[1]})
	}
	for _, v := range s.Excludes {
		x, _ := ParseRange(v)
		excl = append(excl, spectra.Range{Lo: x[0], Hi: x[1]})
	}
	axis := first.Axis
	if s.Resample && len(series) > 1 {
		var others [][]float64
		for _, ser := range series[1:] {
			others = append(others, ser.Axis)
		}
		idx := spectra.CommonRange(axis, others...)
		if len(idx) < 2 {
			return nil, nil, fmt.Errorf("%s: the experiments' axes have no common range", first.Source)
		}
		axis = spectra.KeepValues(axis, idx)
	}
	chans, err := spectra.SelectChannels(axis, keep, excl)
	if err != nil {
		return nil, nil, usage("%s: %v", regionAtFault(s, axis, keep), err)
	}
	return spectra.KeepValues(axis, chans), chans, nil
}

// regionAtFault names the setting that left too few axis points: the
// --region values when they alone select too few, else the --exclude
// values, so that a command file can point at the line at fault.
func regionAtFault(s *Settings, axis []float64, keep []spectra.Range) string {
	if len(s.Regions) == 0 && len(s.Excludes) == 0 {
		return "--data " + strings.Join(s.Data, ", ") // an axis of one point
	}
	if len(s.Excludes) == 0 {
		return "--region " + strings.Join(s.Regions, ", ")
	}
	if _, err := spectra.SelectChannels(axis, keep, nil); len(s.Regions) > 0 && err != nil {
		return "--region " + strings.Join(s.Regions, ", ")
	}
	return "--exclude " + strings.Join(s.Excludes, ", ")
}

// fixedSpectra reads the blank single beams (one per experiment, nil
// without) and the reference spectrum, when given, onto the common channels.
func fixedSpectra(r *Result, first *spectra.Series, axis []float64, chans []int, kind spectra.Kind, refFile string) ([][]float64, *spectra.Spectrum, error) {
	s := r.Settings
	var blanks [][]float64
	if hasBlank(s) {
		if kind != spectra.SingleBeam {
			return nil, nil, usage("--blank is a single beam and goes with --kind single-beam (the data is %s)", kind)
		}
		read := map[string][]float64{} // one file named for several experiments is read once
		for e := range s.Data {
			b := blankOf(s, e)
			if read[b] == nil {
				bs, err := spectra.ReadSpectrum(s.Path(b))
				if err != nil {
					return nil, nil, readFault("blank", err)
				}
				if read[b], err = axisValues(r, bs, "blank "+strconv.Quote(b), first, axis, chans); err != nil {
					return nil, nil, err
				}
			}
			blanks = append(blanks, read[b])
		}
	}
	var refSpec *spectra.Spectrum
	if refFile != "" {
		rs, err := spectra.ReadSpectrum(s.Path(refFile))
		if err != nil {
			return nil, nil, readFault("reference", err)
		}
		v, err := axisValues(r, rs, "reference "+strconv.Quote(refFile), first, axis, chans)
		if err != nil {
			return nil, nil, err
		}
		refSpec = &spectra.Spectrum{Axis: axis, Values: v, Source: refFile}
	}
	return blanks, refSpec, nil
}

// assembleExperiments assembles each experiment on the common channels and
// stacks the rows into r.D: absolute absorbance when every experiment has
// it (species mode), the difference spectra otherwise (reactions mode). It
// returns the experiments' difference rows, which the difference rank reads.
func assembleExperiments(s *Settings, r *Result, series []*spectra.Series, axis []float64, chans []int, opt spectra.AssembleOptions, blanks [][]float64, p readingPlan) ([]*mat.Dense, error) {
	first := series[0]
	var absRows, diffRows []*mat.Dense
	var absW, diffW []*spectra.Weights
	var blinds []*spectra.Blind
	var rowsOf []int
	var lastOffset []bool
	var err error
	row := 0
	for ei, ser := range series {
		var sub *spectra.Series
		if sameAxis(ser.Axis, first.Axis) && !(s.Resample && len(series) > 1) {
			sub = ser.Keep(chans)
		} else {
			sub, err = resampleSeries(ser, axis)
			if err != nil {
				return nil, err
			}
		}
		eopt := ownReferenceRow(s, ser, opt, p)
		if blanks != nil {
			eopt.Blank, eopt.BlankSource = blanks[ei], blankOf(s, ei)
		}
		as, err := addExperiment(s, r, s.Data[ei], ser, sub, eopt, p.refFile, row)
		if err != nil {
			return nil, err
		}
		if note := referenceNote(s, r.Experiments[len(r.Experiments)-1], eopt); note != "" {
			r.Notes = append(r.Notes, note)
		}
		wn, _ := linesAxisOf(first.AxisName, axis)
		if err := subtractLineSpectra(r, as, ser.Source, wn); err != nil {
			return nil, err
		}
		n := r.Experiments[len(r.Experiments)-1].Rows
		row += n
		if as.Absolute != nil {
			absRows = append(absRows, as.Absolute)
		}
		diffRows = append(diffRows, as.Difference)
		absW, diffW = append(absW, as.AbsoluteWeights), append(diffW, as.DifferenceWeights)
		blinds, rowsOf = append(blinds, as.Blind), append(rowsOf, n)
		lastOffset = as.BlankOffset
	}
	r.Blind = spectra.StackBlind(blinds, rowsOf)
	if len(series) == 1 {
		// One experiment: its channels are the stack's (blankOffsetAbsorbed
		// asks for one).
		r.BlankOffset = lastOffset
	}
	r.AxisName, r.Axis = first.AxisName, axis
	if len(absRows) == len(series) {
		r.Mode = mcr.Species
		if hasBlank(s) {
			r.ModeReason = "species: a blank single beam gives absolute absorbance A = −log10(I/I_blank), so each component is one species"
		} else {
			r.ModeReason = "species: the input is absolute absorbance, so each component is one species"
		}
		r.D = stack(absRows)
		r.Weights, r.DiffWeights = spectra.StackWeights(absW), spectra.StackWeights(diffW)
	} else {
		r.Mode = mcr.Reactions
		r.ModeReason = "reactions: difference spectra alone resolve independent reactions (extents and signed reaction spectra), not species; a blank single beam (--blank) or a known spectrum is what separates the species"
		r.D = stack(diffRows)
		r.Weights = spectra.StackWeights(diffW)
	}
	return diffRows, nil
}

// loadSeries reads every --data input with its times and checks its kind
// (beamKind: the kind given, else the first input's own or single beams;
// single beams that look like absorbance are said, or refused when no kind
// was given).
func loadSeries(s *Settings, r *Result, folder spectra.FolderOptions, kind spectra.Kind, log io.Writer) ([]*spectra.Series, spectra.Kind, error) {
	var series []*spectra.Series
	if err := checkTimesSource(s); err != nil {
		return nil, "", err
	}
	for _, p := range s.Data {
		if p == "" {
			return nil, "", usage("--data is empty: give a matrix CSV, a folder of spectra or a JCAMP-DX file")
		}
		if err := needTimes(s, p, folder); err != nil {
			return nil, "", err
		}
		fmt.Fprintf(log, "reading %s\n", cmdfile.Escape(p))
		named := folder
		named.Label = p // warnings name the path as written (Series.Label)
		ser, err := spectra.Load(s.Path(p), named)
		if err != nil {
			return nil, "", err
		}
		if err := spectra.CheckKind(kind, ser); err != nil {
			return nil, "", usage("%v", err)
		}
		r.Warnings = append(r.Warnings, ser.Warnings...)
		for _, n := range ser.Notes {
			r.Notes = append(r.Notes, p+": "+n)
		}
		series = append(series, ser)
	}
	kind, err := beamKind(s, r, series, kind)
	if err != nil {
		return nil, "", err
	}
	if kind == spectra.Transmittance {
		if err := transmittanceToAbsorbance(s, r, series); err != nil {
			return nil, "", err
		}
		kind = spectra.Absorbance
	}
	if kind == spectra.Absorbance || kind == spectra.Difference {
		if why := singleBeamLook(series[0]); why != "" {
			r.Warnings = append(r.Warnings, fmt.Sprintf("%s: the values were taken as %s, but they look like single-beam intensities: %s; if they are single beams, rerun with --kind single-beam (with --blank FILE for absorbance)", s.Data[0], kindWords(kind), why))
		}
	}
	return series, kind, nil
}

// beamKind is the kind the series are read as when given (kind) or not
// (""): the first input's own (JCAMP-DX says it), else single beams. Single
// beams that look like absorbance draw a warning (absorbanceLook), worded
// for a kind the user gave or one taken by default; without a --kind,
// values that cannot be single beams stop the run rather than be guessed,
// while a --kind given is kept: the user may know better than the signs.
func beamKind(s *Settings, r *Result, series []*spectra.Series, kind spectra.Kind) (spectra.Kind, error) {
	given := kind
	if kind == "" {
		kind = spectra.SingleBeam
		if series[0].Kind != "" {
			return spectra.Kind(series[0].Kind), nil
		}
	}
	if kind != spectra.SingleBeam {
		return kind, nil
	}
	if given == "" {
		if why := transmittanceLook(series[0]); why != "" {
			r.Warnings = append(r.Warnings, fmt.Sprintf("%s: no --kind was given, so the values were taken as single beams, but %s; if they are transmittance, rerun with --kind transmittance (read as single beams they give differences only, no absolute absorbance)", s.Data[0], why))
			return kind, nil
		}
	}
	why, sure := absorbanceLook(series[0])
	switch {
	case why == "":
	case given == spectra.SingleBeam:
		r.Warnings = append(r.Warnings, fmt.Sprintf("%s: the values were taken as single beams, as --kind single-beam says, but %s, as absorbances do; if they are absorbance or difference spectra, rerun with --kind absorbance or --kind difference", s.Data[0], why))
	case sure:
		return "", usage("%s: no --kind was given, and the values cannot be single beams: %s, as absorbances do; give --kind absorbance (ratioed to a background) or --kind difference (against the starting state), or --kind single-beam if they are intensities after all", s.Data[0], why)
	default:
		r.Warnings = append(r.Warnings, fmt.Sprintf("%s: no --kind was given, so the values were taken as single beams, but %s, as absorbances do; if they are absorbance or difference spectra, rerun with --kind absorbance or --kind difference", s.Data[0], why))
	}
	return kind, nil
}

// transmittanceToAbsorbance reads every series given as transmittance as
// absorbance (spectra.TransmittanceToAbsorbance) and says in a note which
// scale it took. A JCAMP-DX file that declares its own units is converted
// by them already, and --blank and --reference FILE would be read as
// absorbance: each is refused with what to do.
func transmittanceToAbsorbance(s *Settings, r *Result, series []*spectra.Series) error {
	if hasBlank(s) {
		return usage("--blank is a single beam and goes with --kind single-beam; transmittance is already ratioed to its background")
	}
	if _, file, err := spectra.ParseReference(s.Reference); err == nil && file != "" {
		return usage("--reference %s with --kind transmittance: give the reference state by --reference first or mean:N, or the files as absorbance", file)
	}
	for i, ser := range series {
		if ser.Kind != "" {
			return usage("%s declares its own units (##YUNITS=%s, read as %s by itself): leave out --kind transmittance", declaringFile(s.Data[i], ser), orNone(ser.Units), ser.Kind)
		}
		percent, largest, err := spectra.TransmittanceToAbsorbance(ser)
		if err != nil {
			return inputContext(ser.Source, err)
		}
		scale := "a fraction (largest value %.4g), read as absorbance A = −log10 T"
		if percent {
			scale = "per cent (largest value %.4g), read as absorbance A = −log10(T/100)"
		}
		r.Notes = append(r.Notes, fmt.Sprintf("%s: transmittance taken as "+scale, s.Data[i], largest))
		full := largest
		if percent {
			full /= 100
		}
		if why := notTransmittance(full); why != "" {
			r.Warnings = append(r.Warnings, fmt.Sprintf("%s: the values were taken as transmittance, as --kind transmittance says, but %s; if they are absorbance, rerun with --kind absorbance (or --kind difference for differences)", s.Data[i], why))
		}
	}
	return nil
}

// declaringFile names the file whose own units a series took (JCAMP-DX
// ##YUNITS): the first file of a folder in time order under the folder as
// the user wrote it (shown), else the file given.
func declaringFile(shown string, ser *spectra.Series) string {
	if len(ser.Names) == 0 || filepath.Dir(ser.Names[0]) != filepath.Clean(ser.Source) {
		return shown
	}
	return filepath.Join(shown, filepath.Base(ser.Names[0]))
}

func orNone(units string) string {
	if units == "" {
		return "(none)"
	}
	return units
}

// reactionsRidge is the relative Tikhonov term of the extents step in
// reactions mode (see mcr.Options.Ridge). On the demo's difference data
// without it ALS drifted to two extents with cosine 0.9997 and spectra of
// ±17 absorbance; 1e-6 keeps the fit at the noise level (0.0742 %) with
// spectra of the data's own size, and 1e-4 already biased the fit.
const reactionsRidge = 1e-6

// pooledSigma estimates the noise of several experiments from all their
// pre-reaction spectra: successive differences of rows that should be
// equal, whose variance is 2σ² whatever the common level (a difference
// removes the constant; common practice for replicate spectra). With one
// experiment svd does this itself from PreRows; 0 means "let svd estimate".
func pooledSigma(s *Settings, r *Result, d *mat.Dense) float64 {
	if len(r.Experiments) < 2 || s.Pre < 2 {
		return 0
	}
	_, m := d.Dims()
	ss, cnt := 0.0, 0
	for _, e := range r.Experiments {
		for i := e.FirstRow + 1; i < e.FirstRow+s.Pre && i < e.FirstRow+e.Rows; i++ {
			a, b := d.RawRowView(i - 1)[:m], d.RawRowView(i)[:m]
			for j := range a {
				v := b[j] - a[j]
				ss += v * v
			}
			cnt += m
		}
	}
	if cnt == 0 || !(ss > 0) {
		return 0
	}
	return math.Sqrt(ss / float64(cnt) / 2)
}

func preRowsFor(s *Settings, r *Result) int {
	if len(r.Experiments) == 1 {
		return s.Pre
	}
	return 0
}

func sameAxis(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Abs(a[i]-b[i]) > 1e-6*math.Max(1, math.Abs(a[i])) {
			return false
		}
	}
	return true
}

// axisValues puts a single spectrum of the run (a blank, a reference, a
// vapour spectrum), named what in notes, onto the selected channels: its
// axis first in the unit of the data's (inDataUnit), then on the same
// points or, with --resample, interpolated. A converted axis that still
// differs needs --resample like any other; the error says it was
// converted, since it quotes the points in the data's unit.
func axisValues(r *Result, sp *spectra.Spectrum, what string, first *spectra.Series, axis []float64, chans []int) ([]float64, error) {
	in := inDataUnit(r, sp, what, first)
	if sameAxis(in.Axis, first.Axis) {
		return spectra.KeepValues(in.Values, chans), nil
	}
	v, err := spectra.OnAxis(in, axis, first.Source, r.Settings.Resample)
	if err != nil && in != sp {
		return nil, fmt.Errorf("%w (its %s axis converted to the data's %s first, 10⁷/x)", err, sp.AxisName, first.AxisName)
	}
	return v, err
}

// inDataUnit is spectra.InUnitOf, its notes added to r's once each (a
// file named for several experiments says it once).
func inDataUnit(r *Result, sp *spectra.Spectrum, what string, first *spectra.Series) *spectra.Spectrum {
	in, notes := spectra.InUnitOf(sp, first, what)
	for _, n := range notes {
		if !slices.Contains(r.Notes, n) {
			r.Notes = append(r.Notes, n)
		}
	}
	return in
}

func resampleSeries(ser *spectra.Series, axis []float64) (*spectra.Series, error) {
	n, _ := ser.Values.Dims()
	v := mat.NewDense(n, len(axis), nil)
	for i := 0; i < n; i++ {
		row, err := spectra.Resample(ser.Axis, ser.Values.RawRowView(i), axis)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", ser.Names[i], err)
		}
		v.SetRow(i, row)
	}
	out := *ser
	out.Axis, out.Values = axis, v
	return &out, nil
}

func stack(parts []*mat.Dense) *mat.Dense {
	if len(parts) == 1 {
		return parts[0]
	}
	n := 0
	_, m := parts[0].Dims()
	for _, p := range parts {
		r, _ := p.Dims()
		n += r
	}
	out := mat.NewDense(n, m, nil)
	row := 0
	for _, p := range parts {
		r, _ := p.Dims()
		for i := 0; i < r; i++ {
			out.SetRow(row+i, p.RawRowView(i))
		}
		row += r
	}
	return out
}

// resolve runs ALS and stores spectra, profiles and fit: the start and
// the constraints, the soft resolution with its nuisances (resolved again
// with one more component when a minor factor proves a species), the
// settled solution, hard–soft ALS with --hard-model, then the fit's
// figures, names and warnings and what is done after (finishResolution). The
// first data fit runs beside the soft resolution and is waited for here,
// on every path.
func resolve(r *Result, log io.Writer) error {
	c0, opt, data, err := startResolution(r, log)
	if err != nil {
		return err
	}
	fmt.Fprintf(log, "resolving %d component(s)\n", r.Components)
	// The first fit of the data matrix hard–soft may start from needs
	// nothing of the soft resolution: it runs beside it (earlyDataFit).
	early := beginEarlyDataFit(r, opt)
	r.earlyFit = early
	defer func() {
		early.wait() // on every path: no fit outlives the resolution
		if r.earlyFit == early {
			r.earlyFit = nil
		}
	}()
	saved := saveForMinor(r)
	res, data, shapes, err := resolveNuisance(r, data, c0, opt, saved, log)
	if err != nil {
		return err
	}
	// Every fit from here reports its lack of fit over the spectra kept.
	opt.AsideRows = asideList(r)
	if promoteMinor(r, saved) {
		// The early fit was of the model with one component fewer, which
		// dataStart no longer fits: it and its weighted copy of the data
		// (480 MB at 20 000 × 3000) are let go before resolving again,
		// not held through it.
		early.wait()
		early, r.earlyFit = nil, nil
		return resolve(r, log)
	}
	mark := markOf(r)
	res, data, err = settleResolution(r, data, res, shapes, opt, log)
	if err != nil {
		return err
	}
	order := componentOrder(r, res)
	r.ALS = res
	if r.Settings.Model != "" && r.Settings.HardModel {
		// Hard–soft: the soft solution fixes the map, then ALS restarts from
		// it with mcr.Options.HardModel set (see hardSoft).
		hard, hdata, err := hardSoft(r, data, opt, order, log)
		if err != nil {
			return err
		}
		data = hdata
		r.SoftALS, res = res, absorbBlankOffset(r, data, hard, opt)
		r.ALS = res
	}
	return finishResolution(r, data, opt, mark, log)
}

// startResolution forms what ALS starts from: the initial profiles (r.Init
// says how they were found), the options with every constraint, and the
// data as ALS reads it. With closure every row must be able to close.
func startResolution(r *Result, log io.Writer) (*mat.Dense, mcr.Options, mcr.Data, error) {
	c0, how, err := initialProfiles(r, r.Components)
	if err != nil {
		return nil, mcr.Options{}, nil, err
	}
	r.Init = how
	opt := alsOptions(r, log)
	if r.Settings.EFAWindows == "on" {
		if err := addEFAWindows(r, &opt); err != nil {
			return nil, mcr.Options{}, nil, err
		}
		if err := closableRows(r, opt, "--efa-windows on", "evolving factor analysis finds none of them present"); err != nil {
			return nil, mcr.Options{}, nil, err
		}
	}
	if err := applyConstraints(r, c0, &opt); err != nil {
		return nil, mcr.Options{}, nil, err
	}
	if err := closableRows(r, opt, "--zero-window", ""); err != nil {
		return nil, mcr.Options{}, nil, err
	}
	data := alsData(r, r.Components)
	if opt.Closure {
		if err := checkClosureRows(r); err != nil {
			return nil, mcr.Options{}, nil, err
		}
	}
	return c0, opt, data, nil
}

// alsOptions are ALS's options before the per-component constraints: the
// iterations and progress, closure in species mode (--closure), and in
// reactions mode the ridge and the extents held at zero.
func alsOptions(r *Result, log io.Writer) mcr.Options {
	s := r.Settings
	opt := mcr.Options{Mode: r.Mode, MaxIter: s.MaxIter, Tolerance: s.Tolerance}
	opt.Observe = alsProgress(log, s.MaxIter)
	if r.Mode == mcr.Species && s.Closure != "off" {
		total, _ := strconv.ParseFloat(s.Closure, 64)
		opt.Closure, opt.Total = true, []float64{total}
	}
	if r.Mode == mcr.Reactions {
		opt.Ridge = reactionsRidge
		zero := zeroExtentRows(r)
		opt.ZeroProfiles = make([][]bool, r.Components)
		for j := range opt.ZeroProfiles {
			opt.ZeroProfiles[j] = zero
		}
	}
	return opt
}

// zeroExtentRows marks the rows where every extent is zero: each
// experiment's reference rows and the rows before its reaction starts
// (--pre).
func zeroExtentRows(r *Result) []bool {
	n, _ := r.D.Dims()
	zero := make([]bool, n)
	for _, e := range r.Experiments {
		for _, i := range e.RefRows {
			zero[e.FirstRow+i] = true
		}
		for i := 0; i < r.Settings.Pre && i < e.Rows; i++ {
			zero[e.FirstRow+i] = true
		}
	}
	return zero
}

// settleResolution takes the fitted baseline out of the soft solution and
// the data, refines the blind points, lowers minor factors that are not
// species, checks that every value is finite and, in reactions mode,
// scales each extent to end at one.
func settleResolution(r *Result, data mcr.Data, res *mcr.Result, shapes *mat.Dense, opt mcr.Options, log io.Writer) (*mcr.Result, mcr.Data, error) {
	res, data = withoutBaseline(r, data, res, shapes)
	res, err := settleFit(r, data, res, opt, log)
	return res, data, err
}

// settleFit is settleResolution after the baseline is out: the blind
// points, the minor species, the finite check and the extents' scale. A fit
// adopted from the constraint checks (adoptRestart) goes through it too.
func settleFit(r *Result, data mcr.Data, res *mcr.Result, opt mcr.Options, log io.Writer) (*mcr.Result, error) {
	res, err := refineBlind(r, data, res, opt, log)
	if err != nil {
		return nil, explainResolveError(r, err)
	}
	res = lowerMinor(r, data, res, opt)
	res = absorbBlankOffset(r, data, res, opt)
	if err := checkFinite(res); err != nil {
		return nil, err
	}
	if r.Mode == mcr.Reactions {
		mcr.ScaleExtentsToOne(res.C, res.S)
	}
	return res, nil
}

// componentOrder is the order the components are reported in: as resolved
// when the constraints fix it, else orderComponents'.
func componentOrder(r *Result, res *mcr.Result) []int {
	order := make([]int, r.Components)
	for j := range order {
		order[j] = j
	}
	if !r.Constraints.FixedOrder {
		order = orderComponents(r, res)
	}
	return order
}

// noiseOverestimated warns when the fit leaves less than 0.8 of the noise
// level it is measured against: residualToNoise already divides the
// residual by the degrees of freedom the k components leave, so a fit to
// the noise gives about 1, and well below it the noise is overestimated, and with it the rank's noise floor (a component
// can hide under it) and the standard errors. When the level came from the
// spectra --pre counts as before the reaction, the likely cause is named:
// the step check beside it cannot see it then, since the weights it
// measures steps against came from those same spectra.
func noiseOverestimated(r *Result) []string {
	q, ok := residualToNoise(r)
	if !ok || q >= 0.8 || r.Components == 0 {
		return nil
	}
	w := fmt.Sprintf("the fit's residual is %.3g times the noise level it is measured against (%s): a resolution leaves about the noise, so the noise is overestimated, and with it the rank's noise floor (a component can hide under it) and the standard errors", q, r.NoiseSource)
	if s := r.Settings; s.Pre >= 2 && strings.Contains(r.NoiseSource, "pre-reaction") {
		w += fmt.Sprintf("; some of the %d spectra counted as before the reaction (--pre %d) probably changed already, which inflates it: give --pre the number of spectra taken before the reaction started", s.Pre, s.Pre)
	}
	return []string{w}
}

// rankAdvicePrefix begins the advice comparing the absolute and the
// differences' counts.
const rankAdvicePrefix = "absolute absorbance has "

// nameAndWarn names the components by the mode (species_j, reaction_j)
// and adds the resolution's warnings: ALS's own, the components' (alike
// spectra or profiles), a residual above what the noise alone leaves, and the
// spectra --pre counts as before the reaction that changed already.
func nameAndWarn(r *Result, res *mcr.Result) {
	zw, dead := zeroEverywhereWarnings(r)
	r.Warnings = append(r.Warnings, zw...)
	r.Warnings = append(r.Warnings, withoutVanishedWords(res.Warnings, dead)...)
	r.Warnings = append(r.Warnings, componentWarnings(res, dead)...)
	prefix := "species"
	if r.Mode == mcr.Reactions {
		prefix = "reaction"
	}
	for j := 0; j < r.Components; j++ {
		r.Names = append(r.Names, fmt.Sprintf("%s_%d", prefix, j+1))
	}
	warn, note := misfitWarning(r, res)
	r.Warnings = append(r.Warnings, warn...)
	r.Notes = append(r.Notes, note...)
	r.Warnings = append(r.Warnings, preWarnings(r)...)
}

func sq(x float64) float64 { return x * x }

func frob2(a *mat.Dense) float64 {
	s := 0.0
	r, c := a.Dims()
	for i := 0; i < r; i++ {
		for _, v := range a.RawRowView(i)[:c] {
			s += v * v
		}
	}
	return s
}

func sliceCols(a *mat.Dense, r int) *mat.Dense {
	n, _ := a.Dims()
	return mat.DenseCopyOf(a.Slice(0, n, 0, r))
}

// initialProfiles gives ALS its deterministic start.
func initialProfiles(r *Result, k int) (*mat.Dense, string, error) {
	s := r.Settings
	n, _ := r.D.Dims()
	switch s.Init {
	case "purest", "auto", "":
		src := purestSourceOf(r, k)
		idx, err := src.pick(k, r.Mode == mcr.Reactions)
		if err != nil {
			if s.Components != "auto" {
				return nil, "", usage("--components %d: %v; the data does not hold that many independent components (rank estimate %d): ask for fewer", k, err, r.Rank.Estimate)
			}
			return nil, "", fmt.Errorf("initial estimate: %w", err)
		}
		c := mat.NewDense(n, k, nil)
		for j, ch := range idx {
			col := src.column(ch)
			sum := 0.0
			for _, v := range col {
				sum += v
			}
			if sum < 0 {
				for i := range col {
					col[i] = -col[i]
				}
			}
			c.SetCol(j, col)
		}
		var at []string
		for _, ch := range idx {
			at = append(at, fmt.Sprintf("%g", r.Axis[ch]))
		}
		return c, "purest variables at " + r.AxisName + " " + strings.Join(at, ", "), nil
	case "efa":
		computeEFA(r)
		c := startProfiles(r, k)
		if c == nil {
			return nil, "", fmt.Errorf("initial estimate: evolving factor analysis found no windows for %d components", k)
		}
		return c, "evolving factor analysis windows", nil
	}
	c, err := readProfiles(s.Path(s.Init), r.Times, k)
	if err != nil {
		return nil, "", err
	}
	return c, "profiles from " + filepath.Base(s.Init), nil
}

func addEFAWindows(r *Result, opt *mcr.Options) error {
	if len(r.Experiments) > 1 {
		return usage("--efa-windows on works on one experiment at a time")
	}
	k := r.Components
	e, sigma, _, err := evolvingFactors(r, k)
	if err != nil {
		return fmt.Errorf("evolving factor analysis: %w", err)
	}
	w := e.Windows(k, sigma)
	n, _ := r.D.Dims()
	if opt.ZeroProfiles == nil {
		opt.ZeroProfiles = make([][]bool, k)
	}
	for j := 0; j < k; j++ {
		z := make([]bool, n)
		for i := 0; i < n; i++ {
			if opt.ZeroProfiles[j] != nil && opt.ZeroProfiles[j][i] {
				z[i] = true
			}
			if i < len(w.Present) && j < len(w.Present[i]) && !w.Present[i][j] {
				z[i] = true
			}
		}
		opt.ZeroProfiles[j] = z
	}
	return nil
}

// readProfiles reads an initial profiles CSV (time, one column per component).
func readProfiles(path string, times []float64, k int) (*mat.Dense, error) {
	p, err := spectra.ReadProfiles(path)
	if err != nil {
		return nil, readFault("init", err)
	}
	if len(p.Names) != k {
		return nil, usage("--init %s: has %d profile columns, %d components are being resolved; give --components %d or one column per component", path, len(p.Names), k, len(p.Names))
	}
	c := mat.NewDense(len(times), k, nil)
	for i, t := range times {
		found := -1
		for a, v := range p.Times {
			if math.Abs(v-t) <= 1e-6*math.Max(1, math.Abs(t)) {
				found = a
				break
			}
		}
		if found < 0 {
			return nil, fmt.Errorf("%s: has no row for time %g s; add one row per spectrum's time", path, t)
		}
		for j := 0; j < k; j++ {
			c.Set(i, j, p.Values.At(found, j))
		}
	}
	if err := checkInitColumns(path, p.Names, c); err != nil {
		return nil, err
	}
	return c, nil
}

// orderComponents sorts components by when they matter: species by the
// time of their largest concentration, reactions by the time their extent
// first reaches half its largest value. Ties keep the ALS order. It returns
// the permutation: new column j is old column idx[j].
func orderComponents(r *Result, res *mcr.Result) []int {
	n, k := res.C.Dims()
	key := make([]float64, k)
	for j := 0; j < k; j++ {
		col := mat.Col(nil, j, res.C)
		mx, at := col[0], 0
		for i, v := range col {
			if v > mx+1e-12*math.Abs(mx) {
				mx, at = v, i
			}
		}
		if r.Mode == mcr.Reactions {
			for i, v := range col {
				if v >= mx/2 {
					at = i
					break
				}
			}
		}
		key[j] = r.Times[min(at, n-1)] + 1e9*float64(r.ExpOfRow[min(at, n-1)])
	}
	idx := make([]int, k)
	for j := range idx {
		idx[j] = j
	}
	sort.SliceStable(idx, func(a, b int) bool { return key[idx[a]] < key[idx[b]] })
	c := mat.NewDense(n, k, nil)
	m, _ := res.S.Dims()
	sp := mat.NewDense(m, k, nil)
	for to, from := range idx {
		c.SetCol(to, mat.Col(nil, from, res.C))
		sp.SetCol(to, mat.Col(nil, from, res.S))
	}
	res.C, res.S = c, sp
	return idx
}

// preWarnings checks --pre: the spectra it counts as taken before the reaction must be
// repeats of one state. Each step between them is measured in units of the noise
// (spectra.StepToNoise: ρ ≈ 1 for repeats) and a step whose ρ², divided by the variance
// of the two spectra's own noise (κ², spectra.StepOwnNoise), is above both twice the
// noise variance (room for the noise estimate's own error, pooled over neighbouring
// channels) and the 99.9 % point of χ²_m/m is a change. The noise is the experiment's
// own from second differences in time of all its spectra (preNoise), not the noise
// model, which --pre takes from the very spectra on trial: a change among them inflates
// it and would pass. κ is read where no change reaches (what a fourth difference along
// the axis keeps of the step): spectra recorded fast are often noisier than the series'
// median, and their repeats then differ by more than its noise (catalyst 0.01: 2.3
// times) with nothing changed. The fit leaving less than the noise (noiseOverestimated)
// says the same from the other side. One warning either way: a step found carries the
// overestimate with it.
func preWarnings(r *Result) []string {
	over := noiseOverestimated(r)
	steps := preSteps(r)
	if len(steps) == 0 {
		return over
	}
	if q, _ := residualToNoise(r); len(over) > 0 {
		steps[0] += fmt.Sprintf("; the fit leaves %.3g times the noise level (%s), which is therefore too large, and with it the rank's noise floor and the standard errors", q, r.NoiseSource)
	}
	return steps
}

// preNoise are weights for the --pre step check of experiment e: 1/σ²_j from second
// differences in time of all its spectra (spectra.TimeNoise), spectra set aside kept
// aside; the noise model's own weights when it has fewer than three spectra.
func preNoise(r *Result, e *Experiment) *spectra.Weights {
	sig := spectra.TimeNoise(r.D, r.Times, e.FirstRow, e.FirstRow+e.Rows, r.Blind)
	if sig == nil {
		return r.Weights
	}
	w := &spectra.Weights{Row: make([]float64, len(r.Weights.Row)), Col: make([]float64, len(sig))}
	for i, a := range r.Weights.Row {
		// A spectrum set aside holds the model in D, not data: no step
		// to or from it is judged (StepToNoise skips rows of weight 0).
		if a > 0 && !setAside(r.SetAside, i) {
			w.Row[i] = 1
		}
	}
	for j, sd := range sig {
		if sd > 0 {
			w.Col[j] = 1 / (sd * sd)
		}
	}
	return w
}

// preSteps are the steps between the spectra --pre counts as before the reaction
// that are changes (preWarnings), at most one per experiment; none without a noise
// model.
func preSteps(r *Result) []string {
	s := r.Settings
	if s.Pre < 2 || r.Weights == nil {
		return nil
	}
	var out []string
	_, m := r.D.Dims()
	limit := math.Max(2, distuv.ChiSquared{K: float64(m)}.Quantile(0.999)/float64(m))
	for _, e := range r.Experiments {
		// A spectrum set aside is no repeat: its row holds a fit or its
		// neighbours' mean, not what was recorded. Each step is taken to
		// the next repeat kept.
		var rows []int
		for i := e.FirstRow; i < e.FirstRow+min(s.Pre, e.Rows); i++ {
			if !setAside(r.SetAside, i) {
				rows = append(rows, i)
			}
		}
		w := preNoise(r, e)
		steps := spectra.StepToNoiseRows(r.D, rows, w, r.Blind)
		own := spectra.StepOwnNoiseRows(r.D, rows, e.FirstRow, e.FirstRow+e.Rows, w, r.Blind)
		for a, rho := range steps {
			kappa := 1.0
			if own != nil && own[a] > 0 {
				kappa = own[a]
			}
			if sq(rho/kappa) <= limit {
				continue
			}
			i := rows[a+1]
			where := ""
			if len(r.Experiments) > 1 {
				where = " of " + e.Source
			}
			out = append(out, fmt.Sprintf("spectrum %d%s (t = %s s), counted as before the reaction by --pre %d, differs from the one before it by %.3g times the noise of the two (repeats of one state differ by about 1; %.3g times the series' noise, these two being %.3g times as noisy): it probably changed already; give --pre the number of spectra taken before the reaction started", i-e.FirstRow+1, where, output.Float(r.Times[i]), s.Pre, rho/kappa, rho, kappa))
			break
		}
	}
	return out
}

// ownReferenceRow is opt for the experiment of series ser: when the
// --reference file is one of ser's own spectra (readingPlan.refOwn), the
// reference is that spectrum's row rather than the file read apart.
func ownReferenceRow(s *Settings, ser *spectra.Series, opt spectra.AssembleOptions, p readingPlan) spectra.AssembleOptions {
	if !p.refOwn {
		return opt
	}
	want, err := filepath.Abs(s.Path(p.refFile))
	if err != nil {
		return opt
	}
	for i, name := range ser.Names {
		if a, err := filepath.Abs(name); err == nil && a == want {
			opt.Reference = spectra.Reference{Rows: []int{i}}
			return opt
		}
	}
	return opt
}

// referenceNote says what a --reference other than the default set for
// absorbance input, whose resolution fits A itself: the state of the
// differences ΔA = A − A_ref, which give the rank of ΔA, the report's
// difference map and the kinetics' default t0. Without it the option would
// look ignored, the resolution's files being the same whatever it is. ""
// for other kinds (single beams' differences are the data; difference input
// refuses the option) and for the default.
func referenceNote(s *Settings, e *Experiment, opt spectra.AssembleOptions) string {
	if opt.Kind != spectra.Absorbance || s.Reference == NewSettings().Reference {
		return ""
	}
	times := e.Series.Times
	// Any state averaged from the series' own spectra leaves ΔA spanning
	// the same changes (a_i − Σ w_k a_k with Σ w_k = 1), so its rank does
	// not move; a spectrum recorded apart can add its difference.
	state, span := "", "ΔA's rank is the same against any state of the series' own spectra"
	switch ref := opt.Reference; {
	case ref.File != nil:
		state = fmt.Sprintf("the spectrum in %s, recorded apart from the series", ref.File.Source)
		span = "ΔA's rank also counts that spectrum's difference from the series' states"
	case len(ref.Rows) > 0:
		state = fmt.Sprintf("that file, the series' own spectrum at %g s, kept in the series", times[ref.Rows[0]])
	default:
		rows := e.RefRows
		state = fmt.Sprintf("the mean of the first %d spectra (%g–%g s)", len(rows), times[rows[0]], times[rows[len(rows)-1]])
	}
	return fmt.Sprintf("%s: absorbance input, so --reference %s sets the state the differences ΔA = A − A_ref are taken against: %s; ΔA gives the rank of ΔA, the report's difference map and, unless --pre or --t0 sets it, the kinetics' t0 (here %g s); %s, and the resolution fits the absorbances A themselves, which no reference changes",
		e.Source, s.Reference, state, e.T0, span)
}
