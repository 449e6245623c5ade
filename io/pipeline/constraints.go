package pipeline

import (
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"

	"github.com/bandsolve/bandsolve/internal/fanout"
	"github.com/bandsolve/bandsolve/internal/vecmath"
	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/io/report"
	"github.com/bandsolve/bandsolve/io/spectra"
	"github.com/bandsolve/bandsolve/mcr"
	"gonum.org/v1/gonum/mat"
)

// Types of summary.json, defined in io/output so that the report reads
// the file with the same types the run writes it with.
type (
	ConstraintJSON = output.ConstraintJSON
	BootstrapJSON  = output.BootstrapJSON
)

// ConstraintReport is what the per-component constraints, the checks, the
// uniqueness ranges and the bootstrap produced for one analysis.
type ConstraintReport struct {
	Options mcr.Options // as used by the resolution
	// FixedOrder: per-component constraints name components by number, so
	// the initial estimate is put in time order before ALS and the resolved
	// order is kept (no reordering after ALS).
	FixedOrder bool
	Described  []string // one line per active constraint, in words
	Checks     []mcr.ConstraintCheck
	Bands      *mcr.BandsResult
	// Lifted: with a baseline fitted in species mode, the ranges without
	// non-negative spectra (liftedRangesWarning); nil when not searched.
	Lifted    *mcr.BandsResult
	BandsNote string
	Intervals *mcr.Intervals
	Level     float64
	// checkData is the data the checks refitted (weighted as the run
	// is), on which judgeChecks refits with the named factors allowed.
	checkData mcr.Data
	// adoptions is how many times a restart the checks found replaced
	// the resolution (finishResolution, adoptable).
	adoptions int
	// zeroEverywhere are the components a zero region or window holds at
	// zero at every point (findZeroEverywhere).
	zeroEverywhere []zeroEverywhere
}

// Side names for --nonneg.
const (
	sideBoth     = "both"
	sideProfile  = "profile"
	sideSpectrum = "spectrum"
	sideNone     = "none"
)

// componentSpec splits "COMPONENTS=REST" where COMPONENTS is "all" or a
// comma list of 1-based component numbers.
func componentSpec(v string, k int) ([]int, string, error) {
	left, rest, ok := strings.Cut(v, "=")
	if !ok {
		return nil, "", fmt.Errorf("%q: want COMPONENT=VALUE, e.g. 2=%s", v, "…")
	}
	comps, err := componentList(left, k)
	return comps, strings.TrimSpace(rest), err
}

func componentList(v string, k int) ([]int, error) {
	v = strings.TrimSpace(v)
	if v == "all" {
		out := make([]int, k)
		for j := range out {
			out[j] = j
		}
		return out, nil
	}
	var out []int
	for _, f := range strings.Split(v, ",") {
		n, err := strconv.Atoi(strings.TrimSpace(f))
		if err != nil || n < 1 {
			return nil, fmt.Errorf("%q: components are numbered 1, 2, … or all", f)
		}
		if k > 0 && n > k {
			return nil, fmt.Errorf("component %d: only %d components are being resolved", n, k)
		}
		out = append(out, n-1)
	}
	return out, nil
}

// checkComponentSpec validates a setting's syntax before the number of
// components is known.
func checkComponentSpec(value func(rest string) error) func(*Settings, string) error {
	return func(_ *Settings, v string) error {
		_, rest, err := componentSpec(v, 0)
		if err != nil {
			return err
		}
		return value(rest)
	}
}

func checkSide(rest string) error {
	switch rest {
	case sideBoth, sideProfile, sideSpectrum, sideNone:
		return nil
	}
	return fmt.Errorf("%q: the side is both, profile, spectrum or none", rest)
}

func checkKnown(rest string) error {
	file, _, err := splitWeight(rest)
	if file == "" {
		return fmt.Errorf("%q: want FILE or FILE:WEIGHT", rest)
	}
	return err
}

// splitWeight reads FILE[:WEIGHT]; a colon followed by something that is
// not a number belongs to the file name.
func splitWeight(rest string) (string, float64, error) {
	i := strings.LastIndex(rest, ":")
	if i < 0 {
		return rest, 0, nil
	}
	w, err := parseNumber(rest[i+1:])
	if errors.Is(err, errNotFinite) {
		return rest[:i], 0, fmt.Errorf("weight %s want a positive number (larger = closer to the reference)", numberFault(rest[i+1:], rest[i+1:], err))
	}
	if err != nil {
		return rest, 0, nil
	}
	if !(w > 0) || w > 1e12 {
		return rest[:i], 0, fmt.Errorf("weight %q: want a positive number (larger = closer to the reference)", rest[i+1:])
	}
	return rest[:i], w, nil
}

func checkWindow(rest string) error {
	_, err := ParseRange(rest)
	return err
}

// parseTotals reads the closure setting: off, one total, or one per
// experiment separated by commas.
func parseTotals(v string) ([]float64, error) {
	if v == "off" {
		return nil, nil
	}
	var out []float64
	for _, f := range strings.Split(v, ",") {
		x, err := parseNumber(f)
		if err != nil || !(x > 0) || x > 1e300 {
			return nil, fmt.Errorf("%s want off, a positive total, or one positive total per experiment (comma-separated)", numberFault(v, f, err))
		}
		out = append(out, x)
	}
	return out, nil
}

func parseWeights(v string) ([]float64, error) {
	if strings.TrimSpace(v) == "" {
		return nil, nil
	}
	var out []float64
	pos := false
	for _, f := range strings.Split(v, ",") {
		x, err := parseNumber(f)
		if err != nil || x < 0 || x > 1e300 {
			return nil, fmt.Errorf("%s want one weight ≥ 0 per component, comma-separated, e.g. 1,1,2", numberFault(v, f, err))
		}
		pos = pos || x > 0
		out = append(out, x)
	}
	if !pos {
		return nil, fmt.Errorf("%q: at least one weight must be positive", v)
	}
	return out, nil
}

// hasComponentConstraints says whether any setting names a component.
func hasComponentConstraints(s *Settings) bool {
	return len(s.NonNeg) > 0 || len(s.Unimodal) > 0 || len(s.KnownSpectra) > 0 ||
		len(s.ZeroWindows) > 0 || len(s.ZeroRegions) > 0 || s.ClosureWeights != "" || s.EFAWindows == "on"
}

// applyConstraints turns the settings into the resolution's constraints:
// closure totals per row (one per experiment), stoichiometric weights,
// non-negativity per component and side, unimodality, known spectra on the
// data axis, zero windows in time and on the axis, and the experiment
// blocks. With per-component constraints it also puts c0 in time order.
func applyConstraints(r *Result, c0 *mat.Dense, opt *mcr.Options) error {
	rep := &ConstraintReport{FixedOrder: hasComponentConstraints(r.Settings)}
	r.Constraints = rep
	if rep.FixedOrder {
		sortByTime(r, c0)
	}
	for _, e := range r.Experiments {
		opt.Blocks = append(opt.Blocks, e.FirstRow)
	}
	for _, apply := range []func(*Result, *mcr.Options) error{
		applyClosure, applyNonNeg, applyUnimodal, applyKnownSpectra, applyZeroWindows, applyZeroRegions,
	} {
		if err := apply(r, opt); err != nil {
			return err
		}
	}
	findZeroEverywhere(r, opt)
	return nil
}

// describe adds one active constraint, in words, to the run's report.
func describe(r *Result, what string) {
	r.Constraints.Described = append(r.Constraints.Described, what)
}

// applyClosure sets closure: one total for every row, or one per experiment,
// with optional stoichiometric weights. Closure holds for species
// (absolute absorbance) only: difference data resolves reactions, whose
// amounts need not add up, so there it is noted and left out.
func applyClosure(r *Result, opt *mcr.Options) error {
	s := r.Settings
	opt.Closure, opt.Total = false, nil
	totals, err := parseTotals(s.Closure)
	if err != nil {
		return usage("--closure %v", err)
	}
	switch {
	case r.Mode == mcr.Species && totals != nil:
		if err := closureTotals(r, opt, totals); err != nil {
			return err
		}
	case r.Mode == mcr.Reactions && totals != nil && s.Closure != NewSettings().Closure:
		r.Notes = append(r.Notes, "closure applies to species (absolute absorbance); difference data resolves reactions, so it was not used")
	}
	if s.ClosureWeights != "" && !opt.Closure {
		r.Notes = append(r.Notes, "--closure-weights has no effect without closure")
	}
	return nil
}

// closureTotals puts the closure totals on the rows and reads the weights.
func closureTotals(r *Result, opt *mcr.Options, totals []float64) error {
	s := r.Settings
	switch {
	case len(totals) == 1:
		opt.Total = totals
	case len(totals) == len(r.Experiments):
		n, _ := r.D.Dims()
		opt.Total = make([]float64, n)
		for i := range opt.Total {
			opt.Total[i] = totals[r.ExpOfRow[i]]
		}
	default:
		return usage("--closure %s gives %d totals for %d experiments: give one, or one per experiment", s.Closure, len(totals), len(r.Experiments))
	}
	opt.Closure = true
	w, err := parseWeights(s.ClosureWeights)
	if err != nil {
		return usage("--closure-weights %v", err)
	}
	if w != nil && len(w) != r.Components {
		return usage("--closure-weights %s has %d weights for %d components", s.ClosureWeights, len(w), r.Components)
	}
	opt.ClosureWeights = w
	what := "closure: Σ c_k = " + s.Closure
	if w != nil {
		what = "closure with weights " + s.ClosureWeights + ": Σ w_k c_k = " + s.Closure
	}
	if len(totals) > 1 {
		what += " (one total per experiment)"
	}
	describe(r, what)
	return nil
}

// applyNonNeg sets non-negativity per component and side. By default every
// profile is non-negative, and every spectrum of species; a difference
// spectrum (a reaction's) has negative bands where something is consumed.
func applyNonNeg(r *Result, opt *mcr.Options) error {
	k := r.Components
	nnP := make([]bool, k)
	nnS := make([]bool, k)
	for j := 0; j < k; j++ {
		nnP[j], nnS[j] = true, r.Mode == mcr.Species
	}
	for _, v := range r.Settings.NonNeg {
		comps, side, err := componentSpec(v, k)
		if err != nil {
			return usage("--nonneg %v", err)
		}
		for _, j := range comps {
			nnP[j] = side == sideBoth || side == sideProfile
			nnS[j] = side == sideBoth || side == sideSpectrum
		}
		describe(r, "non-negative "+v)
	}
	opt.NonNegProfiles, opt.NonNegSpectra = nnP, nnS
	return nil
}

// applyUnimodal marks the components whose profiles have one maximum.
func applyUnimodal(r *Result, opt *mcr.Options) error {
	s := r.Settings
	for _, v := range s.Unimodal {
		comps, err := componentList(v, r.Components)
		if err != nil {
			return usage("--unimodal %v", err)
		}
		if opt.Unimodal == nil {
			opt.Unimodal = make([]bool, r.Components)
		}
		for _, j := range comps {
			opt.Unimodal[j] = true
		}
	}
	if opt.Unimodal != nil {
		opt.UnimodalTolerance = s.UnimodalTolerance
		describe(r, fmt.Sprintf("unimodal profiles %s (tolerance %g)", strings.Join(s.Unimodal, ","), s.UnimodalTolerance))
	}
	return nil
}

// applyKnownSpectra reads the known spectra, puts them on the data's axis
// and fixes the components' spectra to them: exactly, or as a soft equality
// of the given weight.
func applyKnownSpectra(r *Result, opt *mcr.Options) error {
	s, k := r.Settings, r.Components
	for _, v := range s.KnownSpectra {
		comps, rest, err := componentSpec(v, k)
		if err != nil {
			return usage("--known-spectrum %v", err)
		}
		file, w, err := splitWeight(rest)
		if err != nil {
			return usage("--known-spectrum %v", err)
		}
		sp, err := spectra.ReadSpectrum(s.Path(file))
		if err != nil {
			return readFault("known-spectrum", err)
		}
		sp = inDataUnit(r, sp, "known spectrum "+strconv.Quote(file), r.Experiments[0].Series)
		vals, err := spectra.OnAxis(sp, r.Axis, r.Experiments[0].Source, true)
		if err != nil {
			return err
		}
		if opt.KnownSpectra == nil {
			opt.KnownSpectra, opt.KnownWeights = make([][]float64, k), make([]float64, k)
		}
		for _, j := range comps {
			opt.KnownSpectra[j], opt.KnownWeights[j] = vals, w
		}
		how := "exactly"
		if w > 0 {
			how = fmt.Sprintf("as a soft equality, weight %g", w)
		}
		describe(r, fmt.Sprintf("known spectrum of component %s from %s (%s)", strings.Split(v, "=")[0], file, how))
	}
	return nil
}

// applyZeroWindows sets the components' profiles to zero in windows of time,
// in every experiment. A window that holds no spectrum is a mistake in the
// settings, not a constraint.
func applyZeroWindows(r *Result, opt *mcr.Options) error {
	n, _ := r.D.Dims()
	for _, v := range r.Settings.ZeroWindows {
		comps, lo, hi, err := zeroSpec(v, r.Components)
		if err != nil {
			return usage("--zero-window %v", err)
		}
		if opt.ZeroProfiles == nil {
			opt.ZeroProfiles = make([][]bool, r.Components)
		}
		if markWindow(opt.ZeroProfiles, comps, n, r.Times, lo, hi) == 0 {
			return usage("--zero-window %s: no spectrum was taken between %g and %g s", v, lo, hi)
		}
		describe(r, "zero profile "+v+" s")
	}
	return nil
}

// applyZeroRegions sets the components' spectra to zero in regions of the
// axis. A region that holds no point is a mistake in the settings.
func applyZeroRegions(r *Result, opt *mcr.Options) error {
	_, m := r.D.Dims()
	for _, v := range r.Settings.ZeroRegions {
		comps, lo, hi, err := zeroSpec(v, r.Components)
		if err != nil {
			return usage("--zero-region %v", err)
		}
		if opt.ZeroSpectra == nil {
			opt.ZeroSpectra = make([][]bool, r.Components)
		}
		if markWindow(opt.ZeroSpectra, comps, m, r.Axis, lo, hi) == 0 {
			return usage("--zero-region %s: the %s axis has no point between %g and %g", v, r.AxisName, lo, hi)
		}
		describe(r, "zero spectrum "+v+" ("+r.AxisName+")")
	}
	return nil
}

// zeroSpec reads COMPONENTS=FROM:TO of a zero window or region, the ends in
// either order.
func zeroSpec(v string, k int) (comps []int, lo, hi float64, err error) {
	comps, rest, err := componentSpec(v, k)
	if err != nil {
		return nil, 0, 0, err
	}
	win, err := ParseRange(rest)
	if err != nil {
		return nil, 0, 0, err
	}
	return comps, math.Min(win[0], win[1]), math.Max(win[0], win[1]), nil
}

// markWindow adds to each component's mask of size points (a new mask
// holding the earlier one's marks) the points whose coordinate lies in
// [lo, hi], and returns how many marks it set.
func markWindow(masks [][]bool, comps []int, size int, coords []float64, lo, hi float64) int {
	hit := 0
	for _, j := range comps {
		z := make([]bool, size)
		if masks[j] != nil {
			copy(z, masks[j])
		}
		for i, x := range coords {
			if x >= lo && x <= hi {
				z[i] = true
				hit++
			}
		}
		masks[j] = z
	}
	return hit
}

// sortByTime puts the initial profiles in the order orderComponents would
// give the resolved ones, so that component numbers in the settings mean
// "first to peak", "second to peak", … before and after ALS.
func sortByTime(r *Result, c0 *mat.Dense) {
	n, k := c0.Dims()
	key := make([]float64, k)
	for j := 0; j < k; j++ {
		at, mx := 0, math.Inf(-1)
		for i := 0; i < n; i++ {
			if v := c0.At(i, j); v > mx {
				mx, at = v, i
			}
		}
		key[j] = r.Times[at] + 1e9*float64(r.ExpOfRow[at])
	}
	idx := make([]int, k)
	for j := range idx {
		idx[j] = j
	}
	sort.SliceStable(idx, func(a, b int) bool { return key[idx[a]] < key[idx[b]] })
	tmp := mat.DenseCopyOf(c0)
	for to, from := range idx {
		c0.SetCol(to, mat.Col(nil, from, tmp))
	}
}

// checkResolution runs the constraint checks and the uniqueness ranges on
// the resolution r.ALS and records their findings (finishResolution may
// then adopt a better fit the checks found and call it again).
func checkResolution(r *Result, data mcr.Data, opt mcr.Options, log io.Writer) {
	rep := r.Constraints
	if rep == nil {
		rep = &ConstraintReport{}
		r.Constraints = rep
	}
	rep.Options = opt
	r.ahead.aheadFit(r)
	s := r.Settings
	// The checks' refits and the uniqueness ranges read the resolution
	// and nothing the other writes: the refits run on a goroutine while
	// the ranges are searched (together they keep both cores busy, the
	// refits alone about one), and their findings are recorded first, so
	// that the warnings come in the order they came one after the other.
	checked := func() {}
	if s.Checks == "on" {
		fmt.Fprintf(log, "checking what each constraint costs\n")
		checked = startChecks(r, data, opt)
	}
	var bandWarnings []string
	if s.Bands == "on" {
		bandWarnings = computeBands(r, opt, log)
	} else {
		rep.BandsNote = "uniqueness ranges not computed (--uniqueness off)"
	}
	checked()
	r.Warnings = append(r.Warnings, bandWarnings...)
}

// bootstrap resolves the bootstrap replicates of the final resolution.
func bootstrap(r *Result, opt mcr.Options, log io.Writer) error {
	s, rep := r.Settings, r.Constraints
	if s.Replicates <= 0 {
		return nil
	}
	if s.Replicates < 2 {
		return usage("--replicates %d: need at least 2 for an interval", s.Replicates)
	}
	fmt.Fprintf(log, "resolving %d bootstrap replicates\n", s.Replicates)
	keep := opt.Closure
	for _, ks := range opt.KnownSpectra {
		keep = keep || ks != nil
	}
	iv, err := mcr.Bootstrap(r.D, r.ALS, opt, mcr.BootstrapOptions{Replicates: s.Replicates, Seed: s.Seed, Blocks: opt.Blocks, KeepScale: keep})
	if err != nil {
		r.Warnings = append(r.Warnings, fmt.Sprintf("no confidence intervals: %v", err))
		return nil
	}
	rep.Intervals = iv
	if iv.Failed > 0 {
		r.Warnings = append(r.Warnings, fmt.Sprintf("%d of %d bootstrap replicates failed to resolve and were left out", iv.Failed, s.Replicates))
	}
	return nil
}

// startChecks begins mcr.CheckConstraintsWith on a goroutine and returns
// the function that waits for it and records the checks and their
// warnings, or panics with the checks' panic (on their goroutine it would
// end the program, past a batch's recovery per run). The goroutine reads
// only the resolution, the data and the figures restartCanMatter judges by.
func startChecks(r *Result, data mcr.Data, opt mcr.Options) func() {
	var checks []mcr.ConstraintCheck
	var err error
	done := make(chan struct{})
	co := mcr.CheckOptions{MaxIter: checkIter, Restart: restartCanMatter(r)}
	var fault fanout.Fault // the checks' panic, raised again by the waiter
	go func() {
		defer close(done)
		defer fault.Catch(nil)
		checks, err = mcr.CheckConstraintsWith(data, r.ALS, opt, co)
	}()
	return func() {
		<-done
		fault.Raise()
		if err != nil {
			r.Warnings = append(r.Warnings, fmt.Sprintf("constraint checks stopped: %v", err))
		}
		r.Constraints.Checks = checks
		r.Constraints.checkData = data
		judgeChecks(r)
	}
}

// checkIter bounds each of the checks' refits.
const checkIter = 300

// judgeChecks turns the refits into warnings. It is a χ² test of the rise
// of the residual sum of squares in units of the noise variance: weighted
// residuals with the noise weights (σ² = 1 by construction), or the
// unweighted ones over the rank step's σ². A constraint that holds costs at
// most one noise variance per value it can pin (common practice for nested
// least squares: the rise is χ² with that many degrees of freedom p); the
// warning asks for a rise above 4p, which χ²_p exceeds with probability
// below 5 % for every p ≥ 1 (χ²₁'s 95 % point is 3.84, and the ratio of the
// point to p falls as p grows; standard tables), and for 5 % of the lack of
// fit besides. p counts what the constraint can pin: one value per row for
// closure, one per row or channel of each component it applies to (k·m for
// non-negative spectra of k components), not one per row or channel.
func judgeChecks(r *Result) {
	// The blank's (or reference's) own noise, one white pattern in every
	// row, is what a freer refit folds into the spectra: its share of the
	// residual is allowed on top of the pinned values (as the rank step
	// sets the reference's pattern aside in reactions mode).
	// It is measured only when a check's rise exceeds what the pinned
	// values alone allow (a pass over the data, needless otherwise).
	pattern, measured := 0.0, false
	blankPattern := func() float64 {
		if !measured && r.ALS != nil {
			var row, col []float64
			if weighted(r) {
				row, col = r.Weights.Row, r.Weights.Col
			}
			if ss, white := mcr.TimeConstantPattern(r.D, r.ALS.C, r.ALS.S, row, col); white {
				pattern = ss
			}
		}
		measured = true
		return pattern
	}
	var dirs *mat.Dense
	var names []string
	found := false
	named := func() (*mat.Dense, []string) {
		if !found {
			dirs, names = namedFactors(r, r.Constraints.checkData)
		}
		found = true
		return dirs, names
	}
	resolved := resolvedCheckLOF(r)
	var cost *mcr.ConstraintCheck // hard–soft: the lowest refit under the other constraints
	for i, c := range r.Constraints.Checks {
		if c.Restarted && c.With < 0.99*resolved {
			// Only a gain a chemist would see (1 % of the lack of fit);
			// smaller ones are the refit polishing a flat valley.
			switch {
			case r.SoftALS != nil && c.With >= 0.99*r.SoftALS.LackOfFitPercent:
				// The refits leave out the kinetic model the resolution
				// holds: a lower fit without it is its cost, not a local
				// minimum, when the soft resolution it started from (the
				// same constraints, no kinetic model) fits as well.
				if cost == nil || c.With < cost.With {
					cost = &r.Constraints.Checks[i]
				}
			case r.SoftALS != nil:
				r.Warnings = append(r.Warnings, fmt.Sprintf("under every constraint a better fit exists (%s %.3g %%, the soft resolution --hard-model started from %.3g %%): found from the fit without %s; that resolution stopped in a local minimum, try another --init or --seed (not adopted: the checks' refits leave out the kinetic model)", checkMetric(r), asGiven(r, c.With), asGiven(r, r.SoftALS.LackOfFitPercent), c.Name))
			case adoptable(r, c):
				// finishResolution adopts it and says so in a note.
			default:
				r.Warnings = append(r.Warnings, fmt.Sprintf("under every constraint a better fit exists (%s %.3g %%, the resolution's %.3g %%): found from the fit without %s; the resolution stopped in a local minimum, try another --init or --seed (%s)", checkMetric(r), asGiven(r, c.With), asGiven(r, resolved), c.Name, notAdoptedWords(r, c)))
			}
		}
		if !riseBeyondPinned(r, c) || rise(c) <= checkAllowance(r, c)+blankPattern() {
			continue
		}
		msg := fmt.Sprintf("%s raises the lack of fit from %.3g %% to %.3g %%%s, also when started from the fit without it: the data disagree with it", c.Name, asGiven(r, c.Without), asGiven(r, c.With), weightedNote(r))
		if dirs, names := named(); dirs != nil && c.Freer != nil {
			along, ok := alongNamed(r, r.Constraints.checkData, c, dirs)
			allow := checkAllowance(r, c) + blankPattern()
			if ok && rise(c)-along <= allow {
				r.Notes = append(r.Notes, namedCostNote(r, c, along, allow, names))
				continue
			}
			if ok {
				msg += fmt.Sprintf("; %.0f %% of the rise lies along the %s named by the rank step, which no component carries, but the rest (%.3g noise variances) exceeds what the constraint may cost (%.3g)",
					100*along/rise(c), namedWords(names), (rise(c)-along)/checkSigma2(r), allow/checkSigma2(r))
			}
		}
		switch {
		case r.misfitSpectrum != nil:
			msg += "; " + r.misfitSpectrum.constraintWords(r)
		case c.Name == "closure":
			msg += "; the total of the concentrations is not constant (sampling, dilution, evaporation, a species left out?): try --closure off, or one total per experiment"
		}
		r.Warnings = append(r.Warnings, msg)
	}
	if cost != nil {
		r.Notes = append(r.Notes, fmt.Sprintf("the kinetic model inside the resolution (--hard-model) costs fit: under every other constraint the data allow a %s of %.3g %% (found from the fit without %s), the hard–soft resolution has %.3g %%; the constraint checks refit without the kinetic model", checkMetric(r), asGiven(r, cost.With), cost.Name, asGiven(r, resolved)))
	}
}

// notAdoptedWords says why a better fit under every constraint was not
// adopted as the resolution (adoptable).
func notAdoptedWords(r *Result, c mcr.ConstraintCheck) string {
	drop, allow := restartDrop(r, c)
	switch {
	case !(allow > 0):
		return "not adopted: no degrees of freedom are left to judge it by"
	case drop <= allow:
		return fmt.Sprintf("not adopted: its residual sum of squares is lower by %.2g of what two fits of the same model differ by from noise alone, the F confidence region at --alpha %g", drop/allow, checkAlpha(r))
	case r.Constraints.adoptions >= maxAdoptions:
		return fmt.Sprintf("not adopted: the resolution was replaced %d times already, the most", maxAdoptions)
	}
	return "not adopted: the restart was not kept"
}

// rise is what dropping the check's constraint took off the residual sum of squares.
func rise(c mcr.ConstraintCheck) float64 { return c.ResidualSSWith - c.ResidualSSWithout }

// checkAllowance is the rise a constraint that holds may cost: 4 noise
// variances per value it can pin (see judgeChecks).
func checkAllowance(r *Result, c mcr.ConstraintCheck) float64 {
	n, m := r.D.Dims()
	sigma2 := checkSigma2(r)
	// What the constraint can pin: one value per row for closure, one
	// per row (channel) for each component it applies to otherwise.
	dof := float64(n)
	if c.Name != "closure" {
		per := n
		if strings.Contains(c.Name, "spectra") {
			per = m
		}
		dof = float64(per * max(1, len(c.ComponentsAffected)))
	}
	return 4 * sigma2 * dof
}

// checkSigma2 is the noise variance in the units of the checks' residual
// sums of squares.
func checkSigma2(r *Result) float64 {
	if weighted(r) {
		return 1 // the refits' residuals are weighted: in units of the noise
	}
	return r.Rank.Sigma * r.Rank.Sigma
}

// namedCostNote says that a check's rise lies, up to what the constraint
// may cost, along the factors the rank step named (judgeChecks).
func namedCostNote(r *Result, c mcr.ConstraintCheck, along, allow float64, names []string) string {
	s2 := checkSigma2(r)
	return fmt.Sprintf("%s costs %.2g %% of %s (%.3g %% with it, %.3g %% without), %.0f %% of that rise along the %s named by the rank step, which no component carries and a freer fit takes up: resolved again with those directions allowed in every spectrum, the two differ by %.3g noise variances, within the %.3g the constraint may cost (4 per value it pins, above χ²'s 95 %% point); the constraint is not what the data disagree with",
		c.Name, asGiven(r, c.With)-asGiven(r, c.Without), checkMetric(r), asGiven(r, c.With), asGiven(r, c.Without), 100*along/rise(c), namedWords(names), (rise(c)-along)/s2, allow/s2)
}

// riseBeyondPinned reports whether the check's rise exceeds what the pinned
// values allow and the lack of fit with the constraint is more than 5 %
// above the one without: the first two conditions of the disagreement
// warning (judgeChecks; the blank's pattern only raises the allowance).
func riseBeyondPinned(r *Result, c mcr.ConstraintCheck) bool {
	return rise(c) > checkAllowance(r, c) && c.With > 1.05*c.Without
}

// resolvedCheckLOF is the resolution's lack of fit in the checks' metric.
func resolvedCheckLOF(r *Result) float64 {
	if weighted(r) {
		return r.ALS.LackOfFitPercent // the refits' figures are weighted too
	}
	return r.LackOfFit
}

// restartCanMatter says which restarts under a constraint
// (mcr.CheckOptions.Restart) can change what judgeChecks concludes. The
// restart only lowers the lack of fit with the constraint (it replaces it
// only when lower), so a check whose rise is already within what the
// pinned values allow, or whose lack of fit with the constraint is within
// 5 % of the one without, cannot turn into a disagreement warning by it.
// What remains is a restart at least 1 % below the resolution's lack of
// fit, which replaces the resolution when beyond noise (adoptable) and is
// the local-minimum warning otherwise: it is run for whenever the freer fit
// itself is that far below, since the restart starts from the freer fit
// and, with the constraint back, ends above it unless that fit was itself
// stuck (an assumption: a constrained fit reached from the freer one more
// than 1 % below it would need the freer refit stopped in a local
// minimum, which its extra freedom makes rare). Those restarts were about
// two thirds of the checks' time on the benchmarks (docs/performance-history.md).
func restartCanMatter(r *Result) func(mcr.ConstraintCheck) bool {
	return func(c mcr.ConstraintCheck) bool {
		return riseBeyondPinned(r, c) || c.Without < 0.99*resolvedCheckLOF(r)
	}
}

// maxBandsComponents is the most components whose ranges are searched by
// default: 6 take about 1.1–1.4 s CPU with the noise allowance on
// 2000 × 3001 (mcr.BenchmarkFeasibleBands, docs/performance-history.md).
const maxBandsComponents = 6

// bandsCostLimit bounds (n + m)·k³, the work of one range search in units of
// one evaluation's flops per unknown: about a few seconds at the limit.
const bandsCostLimit = 4e6

// computeBands searches the uniqueness ranges and returns their warnings,
// for checkResolution to give after the checks'.
func computeBands(r *Result, opt mcr.Options, log io.Writer) []string {
	rep := r.Constraints
	n, m := r.D.Dims()
	k := r.Components
	switch {
	case k < 2:
		rep.BandsNote = "one component: no rotational ambiguity, the uniqueness range is a single value"
	case k > maxBandsComponents:
		rep.BandsNote = fmt.Sprintf("uniqueness ranges not computed: %d components (the search grows as k³; at most %d are computed)", k, maxBandsComponents)
		return nil
	case float64(n+m)*float64(k*k*k) > bandsCostLimit:
		rep.BandsNote = fmt.Sprintf("uniqueness ranges not computed: %d × %d data with %d components would take long", n, m, k)
		return nil
	}
	if opt.HardModel != nil || opt.Unimodal != nil {
		rep.BandsNote = "uniqueness ranges keep non-negativity, closure, known spectra and zero windows; unimodality and the kinetic model are not imposed on the rotations, so the ranges may be wider than the constraints allow"
	}
	alpha := 0.05
	if r.Settings != nil && r.Settings.Alpha > 0 {
		alpha = r.Settings.Alpha
	}
	fmt.Fprintf(log, "computing uniqueness ranges\n")
	known := make([]bool, k)
	for j, ks := range opt.KnownSpectra {
		known[j] = ks != nil && (j >= len(opt.KnownWeights) || opt.KnownWeights[j] == 0)
	}
	bo := mcr.BandOptions{
		Mode: r.Mode, NonNegProfiles: opt.NonNegProfiles, NonNegSpectra: opt.NonNegSpectra,
		Closure: opt.Closure, ClosureWeights: opt.ClosureWeights,
		ZeroProfiles: opt.ZeroProfiles, ZeroSpectra: opt.ZeroSpectra, Known: known,
		ResidualSS: bandsRSS(r), Alpha: alpha,
		// uniqueness.csv's rows of each component are formatted from the
		// moment its range is found, beside the other searches.
		Found: r.ahead.bandsFound(r),
	}
	b, err := mcr.FeasibleBands(r.ALS.C, r.ALS.S, bo)
	if err != nil {
		rep.BandsNote = fmt.Sprintf("uniqueness ranges not computed: %v", err)
		return nil
	}
	rep.Bands = b
	var warn []string
	if w := rankDeficientBands(r, b); w != "" {
		warn = []string{w}
	} else {
		warn = rangeWarnings(r.Names, b)
	}
	given := make([]bool, k)
	for j, ks := range opt.KnownSpectra {
		given[j] = ks != nil
	}
	if w := liftedRangesWarning(r, bo, b, given); w != "" {
		warn = append(warn, w)
	}
	return warn
}

// boolsOrDefault is a species-mode non-negativity list with its default
// (true) where nil or short.
func boolsOrDefault(b []bool, k int) []bool {
	out := make([]bool, k)
	for j := range out {
		out[j] = j >= len(b) || b[j]
	}
	return out
}

// zeroCount is the number of points in component j's zero windows.
func zeroCount(zero [][]bool, j int) int {
	if j >= len(zero) {
		return 0
	}
	n := 0
	for _, z := range zero[j] {
		if z {
			n++
		}
	}
	return n
}

// liftMaterial is how far (as a share of the component's own share of the
// signal) a range without non-negative spectra must reach beyond the
// reported one before liftedRangesWarning speaks: both searches are local
// (FeasibleBands), so a small difference between their ends says little.
const liftMaterial = 0.1

// liftedRangesWarning measures what the uniqueness ranges leave out when a
// baseline is fitted in species mode, and warns when it is material.
//
// With a free polynomial baseline per spectrum, a polynomial of the
// baseline's order added to one species' spectrum and taken off the
// baseline (s_k + Pβ, B − c_k βᵀ) fits exactly the same (mcr/baseline.go);
// with closure a polynomial common to all spectra is one such move. A lift
// makes any rotated spectrum non-negative, so non-negativity of the spectra
// no longer bounds the rotation: only the premise that each spectrum sits
// at zero under its lower polynomial envelope (the lowering ALS applies)
// does, and the ranges, which keep the lowered spectra non-negative, take
// that premise as given. The ranges the remaining constraints (profiles,
// closure, known spectra, zero windows) allow measure the freedom: the
// same search with the spectra free of sign. given marks the components
// with a --known-spectrum (exact or soft), whose advice is not to give one.
func liftedRangesWarning(r *Result, bo mcr.BandOptions, b *mcr.BandsResult, given []bool) string {
	if r.BaselineShapes == nil || r.Mode != mcr.Species {
		return ""
	}
	_, nb := r.BaselineShapes.Dims()
	free := bo
	free.NonNegSpectra = make([]bool, r.Components)
	for j := range free.NonNegSpectra {
		// A zero window of more points than the baseline has terms
		// admits no lift (a polynomial zero there is zero everywhere),
		// so the spectrum keeps its non-negativity.
		free.NonNegSpectra[j] = (j >= len(bo.NonNegSpectra) || bo.NonNegSpectra[j]) && zeroCount(bo.ZeroSpectra, j) > nb
	}
	if slices.Equal(free.NonNegSpectra, boolsOrDefault(bo.NonNegSpectra, r.Components)) {
		return ""
	}
	free.Found = nil
	fb, err := mcr.FeasibleBands(r.ALS.C, r.ALS.S, free)
	if err != nil {
		return ""
	}
	r.Constraints.Lifted = fb
	var parts []string
	for j, band := range b.Bands {
		fr := fb.Bands[j]
		beyond := math.Max(0, band.Min-fr.Min) + math.Max(0, fr.Max-band.Max)
		if beyond <= liftMaterial*band.Value {
			continue
		}
		hi := fmt.Sprintf("%.3g", fr.Max)
		if fr.Max > unboundedBand {
			hi = "unbounded"
		}
		parts = append(parts, fmt.Sprintf("%s %.3g – %s (reported %.3g – %.3g)", r.Names[j], math.Min(fr.Min, band.Min), hi, band.Min, band.Max))
	}
	if len(parts) == 0 {
		return ""
	}
	return fmt.Sprintf("spectra poorly determined with a fitted baseline (%s): a polynomial of the baseline's order added to a species' spectrum and taken off the baseline fits the same, so non-negative spectra no longer bound the rotation; the baseline shown is the drift since the first spectrum (zero there), which fixes the split for the species present in it, and the others are lowered onto zero under their lower polynomial envelope; the uniqueness ranges assume that split and leave this freedom out. Without non-negative spectra the other constraints allow %s: read the spectra as determined only up to a polynomial each and such a rotation; %s",
		baselineName(nb-1), strings.Join(parts, ", "), liftAdvice(r.Names, given))
}

// liftAdvice is what bounds a baseline's lift: a known spectrum of a
// species that has none yet, or a region where a species does not absorb.
// A known spectrum already given is named as not enough alone rather than
// recommended again.
func liftAdvice(names []string, given []bool) string {
	const region = "a region where a species does not absorb (--zero-region, more points than the baseline has terms)"
	var with, without []string
	for j, name := range names {
		if j < len(given) && given[j] {
			with = append(with, name)
		} else {
			without = append(without, name)
		}
	}
	switch {
	case len(with) == 0:
		return "a known spectrum (--known-spectrum) or " + region + " bounds it"
	case len(without) == 0:
		return fmt.Sprintf("the known spectra given (%s) do not bound it; %s does", strings.Join(with, ", "), region)
	}
	return fmt.Sprintf("the known spectrum given for %s does not bound it alone; a known spectrum of %s as well (--known-spectrum) or %s does", strings.Join(with, ", "), strings.Join(without, " or "), region)
}

// rangeWarnings are the warnings the uniqueness ranges give: a range not
// determined, an end whose search stopped on its budget, an unbounded
// range.
func rangeWarnings(names []string, b *mcr.BandsResult) []string {
	var warn []string
	for j, band := range b.Bands {
		if !band.Feasible {
			warn = append(warn, fmt.Sprintf("uniqueness range of %s not determined: the search could not stay within the constraints and the noise allowance; the range shown (%.3g to %.3g) is only the part reached", names[j], band.Min, band.Max))
		} else if ends := report.UnconvergedEnds(band.MinConverged, band.MaxConverged); ends != "" && band.Max <= unboundedBand {
			// (An unbounded range's search stops on its budget: the
			// warning below says so.)
			warn = append(warn, fmt.Sprintf("uniqueness range of %s: the search for its %s stopped on its budget before converging; the range shown (%.4f to %.4f) is at least this wide and may be wider", names[j], ends, band.Min, band.Max))
		}
		// A contribution far above the whole signal is reached only by
		// components that cancel each other: the constraints do not bound
		// the rotation at all, and the maximum is wherever the search stopped.
		if band.Max > unboundedBand {
			warn = append(warn, fmt.Sprintf("uniqueness range of %s is unbounded (its largest share %.3g is where the search stopped): the constraints allow rotations in which components cancel each other, and the answer shown is one of them; a known spectrum (--known-spectrum) or zero windows (--zero-window) bound the rotation, and a kinetic model (--model with --hard-model) picks the one that obeys it", names[j], band.Max))
		}
	}
	return warn
}

// bandsRSS is the residual sum of squares the uniqueness ranges' noise
// allowance scales: unweighted, as the rise they measure (‖C Sᵀ − A₊B₊ᵀ‖²)
// is; with noise weights the fit's own sum is weighted (units of the noise)
// and would make the allowance meaningless.
func bandsRSS(r *Result) float64 {
	if weighted(r) && r.PlainRSS > 0 {
		return r.PlainRSS
	}
	return r.ALS.ResidualSS
}

// unboundedBand: a share of the signal ‖c_k s_kᵀ‖/‖C Sᵀ‖ above this is
// read as "no upper bound" (a single component can exceed 1 only when others
// partly cancel it; a hundredfold needs near-total cancellation).
const unboundedBand = 100.0

// constraintSummary fills the summary keys this file owns.
func constraintSummary(r *Result, s *Summary) {
	rep := r.Constraints
	if rep == nil {
		return
	}
	s.Constraints = nonNil(rep.Described)
	s.UniquenessNote, s.BandsNote = rep.BandsNote, rep.BandsNote
	for _, c := range rep.Checks {
		cj := ConstraintJSON{Constraint: c.Name, LackOfFitWith: round(c.With), LackOfFitWithout: round(c.Without),
			WithOfData: round(asGiven(r, c.With)), WithoutOfData: round(asGiven(r, c.Without))}
		if len(c.ComponentsAffected) < r.Components {
			for _, j := range c.ComponentsAffected {
				cj.Components = append(cj.Components, r.Names[j])
			}
		}
		s.ConstraintChecks = append(s.ConstraintChecks, cj)
	}
	if rep.Bands != nil {
		for j, b := range rep.Bands.Bands {
			lo, hi := b.MinConverged, b.MaxConverged
			s.UniquenessRanges = append(s.UniquenessRanges, BandJSON{Component: r.Names[j], Min: round(b.Min), Max: round(b.Max), NotDetermined: !b.Feasible, Reason: b.Reason, MinConverged: &lo, MaxConverged: &hi})
		}
		s.FeasibleBands = s.UniquenessRanges
	}
	if iv := rep.Intervals; iv != nil {
		s.Bootstrap = &BootstrapJSON{Method: "residual bootstrap (whole spectra drawn within each experiment)", Replicates: r.Settings.Replicates, Resolved: iv.Replicates, Seed: r.Settings.Seed, Level: iv.Level}
	}
}

// writeBandsAndIntervals writes uniqueness.csv and intervals.csv (columns
// in docs/constraints.md). uniqueness.csv is also written as bands.csv, its
// name before the rename, until 1.0 (CONTRACT.md).
func writeBandsAndIntervals(r *Result, st *output.Stage) error {
	rep := r.Constraints
	if rep == nil || r.ALS == nil {
		return nil
	}
	if wantBands(r) {
		f, ok := r.early.bands.get()
		csv := f.csv
		if !ok {
			csv = bandsCSV(r)
		}
		if err := st.Write("uniqueness.csv", csv); err != nil {
			return err
		}
		if err := st.Write("bands.csv", csv); err != nil {
			return err
		}
	}
	if iv := rep.Intervals; iv != nil {
		sr := newSideRows(r)
		var w output.CSV
		w.Grow(sr.size())
		w.Row([]string{"component", "side", "experiment", "position", "estimate", "low", "high", "sd"})
		for j := 0; j < r.Components; j++ {
			sr.write(&w, j, "spectrum", func(i int) float64 { return r.ALS.S.At(i, j) },
				func(i int) float64 { return iv.SpectraLow.At(i, j) }, func(i int) float64 { return iv.SpectraHigh.At(i, j) },
				func(i int) float64 { return iv.SpectraSD.At(i, j) })
			sr.write(&w, j, "profile", func(i int) float64 { return r.ALS.C.At(i, j) },
				func(i int) float64 { return iv.ProfilesLow.At(i, j) }, func(i int) float64 { return iv.ProfilesHigh.At(i, j) },
				func(i int) float64 { return iv.ProfilesSD.At(i, j) })
		}
		if err := st.Write("intervals.csv", w.Bytes()); err != nil {
			return err
		}
	}
	return nil
}

func wantBands(r *Result) bool {
	return r.Constraints != nil && r.ALS != nil && r.Constraints.Bands != nil
}

// bandsCSV makes uniqueness.csv; it only reads r (see earlyFiles).
func bandsCSV(r *Result) []byte {
	sr := newSideRows(r)
	return sr.bandsPart(r, 0, 2*len(r.Constraints.Bands.Bands), sr.size()).Bytes()
}

// bandsHeader is uniqueness.csv's header.
var bandsHeader = []string{"component", "side", "experiment", "position", "solution", "at_min", "at_max", "min_converged", "max_converged"}

// bandsPart is uniqueness.csv's header and its row blocks [from, to), in
// a buffer of size bytes: block 2j is component j's spectrum, 2j+1 its
// profile.
func (sr sideRows) bandsPart(r *Result, from, to, size int) *output.CSV {
	var w output.CSV
	w.Grow(size)
	w.Row(bandsHeader)
	s, c := r.ALS.S, r.ALS.C
	for q := from; q < to; q++ {
		j, band := q/2, &r.Constraints.Bands.Bands[q/2]
		solution := func(i int) float64 { return s.At(i, j) }
		if q%2 == 1 {
			solution = func(i int) float64 { return c.At(i, j) }
		}
		sr.writeBlock(&w, q, solution, band)
	}
	return &w
}

// writeBlock writes uniqueness.csv's row block q (component q/2's
// spectrum when q is even, its profile when odd) of band, the solution's
// values given by solution.
func (sr sideRows) writeBlock(w *output.CSV, q int, solution func(i int) float64, band *mcr.Band) {
	j := q / 2
	conv := []string{strconv.FormatBool(band.MinConverged), strconv.FormatBool(band.MaxConverged)}
	if q%2 == 0 {
		sr.writeText(w, j, "spectrum", conv, solution,
			func(i int) float64 { return band.MinSpectrum[i] }, func(i int) float64 { return band.MaxSpectrum[i] })
	} else {
		sr.writeText(w, j, "profile", conv, solution,
			func(i int) float64 { return band.MinProfile[i] }, func(i int) float64 { return band.MaxProfile[i] })
	}
}

// blockRows is the number of rows of uniqueness.csv's row block q.
func (sr sideRows) blockRows(q int) int {
	if q%2 == 0 {
		return len(sr.axis)
	}
	return len(sr.times)
}

// sideRows writes the rows of uniqueness.csv and intervals.csv: per
// component, one per axis point ("spectrum", no experiment) and one per
// time ("profile", its experiment: the number with several, 1 with one).
// The axis, times and experiments are the same in every component's rows:
// each is formatted once. Cells go straight into the file (output.CSV:
// Table.CSV's bytes without a string per cell).
type sideRows struct {
	names              []string
	axis, times, exper [][]byte
	unmeasured         []bool // spectrum rows whose values are written as 0
}

func newSideRows(r *Result) sideRows { return rowInputsOf(r, false).sideRows() }

// rowInputs are what the rows of uniqueness.csv and intervals.csv take
// from the run besides the values: the component names, the axis, the
// times and, with several experiments, each time's experiment (0-based;
// nil with one).
type rowInputs struct {
	names       []string
	axis, times []float64
	exp         []int
	unmeasured  []bool // unmeasuredChannels: spectrum rows written as 0
}

// rowInputsOf is r's row inputs, copies of them with clone.
func rowInputsOf(r *Result, clone bool) rowInputs {
	in := rowInputs{names: r.Names, axis: r.Axis, times: r.Times, unmeasured: unmeasuredChannels(r)}
	if len(r.Experiments) > 1 {
		in.exp = r.ExpOfRow[:len(r.Times)]
	}
	if clone {
		in = rowInputs{names: slices.Clone(in.names), axis: slices.Clone(in.axis), times: slices.Clone(in.times), exp: slices.Clone(in.exp),
			unmeasured: in.unmeasured} // a slice of its own already
	}
	return in
}

// same says the rows of in and o are the same text: the same names and
// exactly the same numbers.
func (in rowInputs) same(o rowInputs) bool {
	return slices.Equal(in.names, o.names) && vecmath.SameBits(in.axis, o.axis) && vecmath.SameBits(in.times, o.times) &&
		slices.Equal(in.exp, o.exp) && (in.exp == nil) == (o.exp == nil) && slices.Equal(in.unmeasured, o.unmeasured)
}

func (in rowInputs) sideRows() sideRows {
	sr := sideRows{names: in.names, axis: formatted(in.axis), times: formatted(in.times), exper: make([][]byte, len(in.times)), unmeasured: in.unmeasured}
	for i := range sr.exper {
		sr.exper[i] = []byte("1")
		if in.exp != nil {
			sr.exper[i] = strconv.AppendInt(nil, int64(in.exp[i]+1), 10)
		}
	}
	return sr
}

// size is about the bytes of a file of these rows.
func (sr sideRows) size() int { return sizeOfRows((len(sr.axis) + len(sr.times)) * len(sr.names)) }

// sizeOfRows is about the bytes of n rows.
func sizeOfRows(n int) int { return n * 80 }

// write writes component j's rows of one side, the cells after the
// position given by cols.
func (sr sideRows) write(w *output.CSV, j int, side string, cols ...func(i int) float64) {
	sr.writeText(w, j, side, nil, cols...)
}

// writeText is write with the cells of text after those of cols, the same
// in every row.
func (sr sideRows) writeText(w *output.CSV, j int, side string, text []string, cols ...func(i int) float64) {
	pos, exp := sr.axis, [][]byte(nil)
	if side == "profile" {
		pos, exp = sr.times, sr.exper
	}
	for i := range pos {
		w.Text(sr.names[j])
		w.Text(side)
		if exp != nil {
			w.Raw(exp[i])
		} else {
			w.Text("")
		}
		w.Raw(pos[i])
		blind := side == "spectrum" && i < len(sr.unmeasured) && sr.unmeasured[i]
		for _, c := range cols {
			if blind {
				w.Float(0)
			} else {
				w.Float(c(i))
			}
		}
		for _, t := range text {
			w.Text(t)
		}
		w.End()
	}
}

// formatted is each value as output.Float writes it.
func formatted(vs []float64) [][]byte {
	out := make([][]byte, len(vs))
	buf := make([]byte, 0, 16*len(vs))
	for i, v := range vs {
		n := len(buf)
		buf = output.AppendFloat(buf, v)
		out[i] = buf[n:len(buf):len(buf)]
	}
	return out
}

// asGiven is a lack of fit of the constraint checks (over the data less a
// fitted baseline) over the data as given, the denominator of every other
// figure (docs/measurement.md §2): the same residual, so the "with" of the
// table is the iterations' last value.
func asGiven(r *Result, lof float64) float64 {
	if r.checkScale > 0 {
		return lof * r.checkScale
	}
	return lof
}

// checkMetric names the lack of fit the constraint checks compare: with the
// noise weights it is the weighted one, 100·√(χ²/Σ w d²), not the headline's
// unweighted figure.
func checkMetric(r *Result) string {
	if weighted(r) {
		return "weighted lack of fit"
	}
	return "lack of fit"
}

func weightedNote(r *Result) string {
	if weighted(r) {
		return " (weighted by the noise)"
	}
	return ""
}

// printConstraints adds the constraints, checks and uniqueness ranges to the table.
func printConstraints(r *Result, w io.Writer) {
	rep := r.Constraints
	if rep == nil {
		return
	}
	for _, d := range rep.Described {
		fmt.Fprintf(w, "constraint     %s\n", d)
	}
	for _, c := range rep.Checks {
		fmt.Fprintf(w, "  without %-22s %s %.4g %% (with: %.4g %%)\n", c.Name, checkMetric(r), asGiven(r, c.Without), asGiven(r, c.With))
	}
	if rep.Bands != nil {
		for j, b := range rep.Bands.Bands {
			if !b.Feasible {
				fmt.Fprintf(w, "  %-12s uniqueness range not determined (%s; reached %.4f – %.4f, solution %.4f)\n", r.Names[j], b.Reason, b.Min, b.Max, b.Value)
				continue
			}
			hi, stop := fmt.Sprintf("%.4f", b.Max), ""
			if b.Max > unboundedBand { // where the search stopped, not a bound
				hi, stop = "no bound", fmt.Sprintf("; the search stopped at %.3g", b.Max)
			}
			if ends := report.UnconvergedEnds(b.MinConverged, b.MaxConverged); ends != "" && b.Max <= unboundedBand {
				stop += fmt.Sprintf("; search for the %s not converged", ends)
			}
			fmt.Fprintf(w, "  %-12s uniqueness range %.4f – %s of the signal (solution %.4f%s)\n", r.Names[j], b.Min, hi, b.Value, stop)
		}
	} else if rep.BandsNote != "" {
		fmt.Fprintf(w, "note: %s\n", rep.BandsNote)
	}
	if rep.Intervals != nil {
		fmt.Fprintf(w, "intervals      %d bootstrap replicates, %.0f %% level (intervals.csv)\n", rep.Intervals.Replicates, 100*rep.Intervals.Level)
	}
}
