package pipeline

// Kinetic analysis of a resolution (--model): the resolved profiles, or the
// data matrix itself, are fitted by a reaction scheme in the chemist's
// notation, and with --hard-model the scheme becomes a constraint inside ALS.
//
// Rate laws are mass action with the IUPAC rate of reaction r_j = k_j Π c_i^ν_ij
// (mcr/kinetics): 2 A -> P has r = k[A]² and d[A]/dt = −2k[A]², so
// 1/[A] − 1/[A]0 = 2kt and t½ = 1/(2k[A]0).
//
// Species mode fits concentrations; with closure they are in units of the
// closure total and no scale is free. Without closure, and in reactions mode
// (extents, scaled to a largest value of 1 by resolve), each profile is a free
// multiple of its model column (amplitudes, solved linearly). Hard–soft
// resolution follows de Juan, Maeder, Martínez & Tauler (Chemom. Intell. Lab.
// Syst. 2000): in every ALS cycle the mapped profiles are replaced by their
// kinetic fit, which removes the rotational ambiguity a soft resolution keeps.

import (
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/bandsolve/bandsolve/io/output"
	"github.com/bandsolve/bandsolve/mcr"
	"github.com/bandsolve/bandsolve/mcr/kinetics"
	"gonum.org/v1/gonum/mat"
)

// Types of summary.json, defined in io/output so that the report reads
// the file with the same types the run writes it with.
type (
	KineticMapJSON       = output.KineticMapJSON
	InitialConcentration = output.InitialConcentration
	KineticFitJSON       = output.KineticFitJSON
	DeterminedSum        = output.DeterminedSum
)

// Kinetics is the kinetic analysis of one resolution.
type Kinetics struct {
	Scheme *kinetics.Scheme
	T0     float64
	// Extents: reactions mode fits the extents ξ_j of the steps, species
	// mode the species' concentrations.
	Extents bool
	// Amplitudes: each profile is a free multiple of its model column.
	Amplitudes bool
	// Components[j] (0-based, profiles.csv order) is described by model
	// column Columns[j] (a species, or a step with Extents).
	Components, Columns []int
	MapSource           string
	C0                  []float64
	FitC0               bool
	// FitT0: t0 is fitted too, from T0, within T0Lo to T0Hi (the spectra
	// either side of T0, kinetics.T0Bracket).
	FitT0      bool
	T0Lo, T0Hi float64
	// KStart and KFixed per step; NaN in KStart means "choose".
	KStart []float64
	KFixed []bool
	// UnitName is the concentration unit in words ("closure total", "[A]0").
	UnitName string
	Unit     string
	// Fits are every fit made; Fits[Primary] is the one reported as
	// rate_constants.
	Fits    []*KineticFit
	Primary int
	// reduced is the data fits' reduction of the data (kinetics.FitData),
	// kept so that refits of the same data do not repeat it.
	reduced *mat.Dense
	// batch, while set, keeps the data the fits of one batch (dataStart,
	// fitKinetics: a fit and its other orders) share, see dataBatch.
	batch *dataBatch
	// lastScaled is the weighted data of the last batch, kept for the next
	// one: a batch takes it when it is bit for bit what it would form
	// (kinetics.ScaledFrom), as it is after hard–soft unless hard–soft
	// re-estimated a baseline. One pass that reads instead of one that
	// allocates and writes a data-sized matrix.
	lastScaled *mat.Dense
	// refits are swapCheck's refits from exchanged starts (refitMemo).
	refits []*refitMemo
	// profileFits are the fits of profiles made so far (profileFit).
	profileFits []profileFit
}

// dataBatch is what the data fits of one batch share: the rows fitData
// fits (the baseline projected out, spectra set aside left out) and their
// noise-weighted form. Forming each is a pass over the whole data, and a
// batch makes up to 25 fits of one matrix. It lives only for one batch, so
// that a change of r.D between batches (hard–soft re-estimates the
// baseline) is always seen.
type dataBatch struct {
	d      *mat.Dense
	times  []float64
	scaled *mat.Dense
}

// startBatch begins a batch of data fits; the returned function ends it.
func (kn *Kinetics) startBatch() func() {
	kn.batch = &dataBatch{}
	return func() { kn.batch = nil }
}

// KineticFit is one fit of the scheme.
type KineticFit struct {
	// Method is "profiles" (the resolved profiles), "soft-profiles" (the soft
	// solution of a hard–soft run), "hard-soft" (the kinetic fit inside the
	// last hard–soft ALS cycle) or "data" (the data matrix, variable projection).
	Method string
	Fit    *kinetics.FitResult
	// Observed are the profile columns fitted (n × mapped), nil for "data".
	Observed *mat.Dense
	// Spectra of the data fit (m × model columns), nil otherwise.
	Spectra *mat.Dense
	// OneLevel, of a data fit whose spectra were weighted each by its own
	// noise, is the fit with one level for all (kinetics_onelevel.go).
	OneLevel []oneLevelRate
	// OneLevelSum is the same for the sum of the constants the data
	// determine only together (nil when there is none).
	OneLevelSum *oneLevelRate
	// EachWeighted holds, when the fit with one level is the one reported
	// (the weights moved the constants beyond the noise), the constants of
	// the fit with each spectrum weighted by its own level, and
	// ownToLevel each kept spectrum's own weight over the level it was
	// fitted with (for the residual in units of each spectrum's noise).
	EachWeighted    []rateWithError
	EachWeightedSum *rateWithError
	ownToLevel      []float64
	oneLevel        *oneLevelFitted // the fit with one level, made by oneLevelFit
}

// Reported returns the fit behind rate_constants.
func (kn *Kinetics) Reported() *KineticFit {
	if kn == nil || len(kn.Fits) == 0 {
		return nil
	}
	return kn.Fits[kn.Primary]
}

// Find returns the fit made by method, nil if none.
func (kn *Kinetics) Find(method string) *KineticFit {
	if kn == nil {
		return nil
	}
	for _, f := range kn.Fits {
		if f.Method == method {
			return f
		}
	}
	return nil
}

type assignment struct{ key, value string }

// parseAssignments reads "KEY=VALUE,KEY=VALUE". A step's text may hold '=>'
// as its arrow, so each pair splits at its last '='.
func parseAssignments(flag, v, example string) ([]assignment, error) {
	var out []assignment
	for _, part := range strings.Split(v, ",") {
		part = strings.TrimSpace(part)
		if part == "" {
			continue
		}
		i := strings.LastIndex(part, "=")
		if i <= 0 || i == len(part)-1 {
			return nil, usage("--%s %q: want NAME=VALUE pairs separated by commas, e.g. --%s %s", flag, part, flag, example)
		}
		out = append(out, assignment{strings.TrimSpace(part[:i]), strings.TrimSpace(part[i+1:])})
	}
	if len(out) == 0 {
		return nil, usage("--%s is empty: want NAME=VALUE pairs, e.g. --%s %s", flag, flag, example)
	}
	return out, nil
}

func normStep(t string) string {
	t = strings.ReplaceAll(t, "→", "->")
	t = strings.ReplaceAll(t, "=>", "->")
	return strings.Join(strings.Fields(t), "")
}

// stepIndex finds a step by its number (1-based, in the order written) or
// its text.
func stepIndex(sch *kinetics.Scheme, key string) (int, bool) {
	if n, err := strconv.Atoi(key); err == nil {
		if n >= 1 && n <= len(sch.Steps) {
			return n - 1, true
		}
		return -1, false
	}
	for j, st := range sch.Steps {
		if normStep(st.Text) == normStep(key) {
			return j, true
		}
	}
	return -1, false
}

func stepList(sch *kinetics.Scheme) string {
	var parts []string
	for j, st := range sch.Steps {
		parts = append(parts, fmt.Sprintf("%d = %s", j+1, st.Text))
	}
	return strings.Join(parts, ", ")
}

func parseScheme(s *Settings) (*kinetics.Scheme, error) {
	sch, err := kinetics.ParseScheme(s.Model)
	if err != nil {
		msg := strings.TrimPrefix(err.Error(), "kinetics: reaction scheme: ")
		return nil, usage("--model %q: %s; write steps like 'A -> B -> C', 'A -> B; A -> C' or '2 A -> P'", s.Model, msg)
	}
	return sch, nil
}

// checkKineticsSettings finds mistakes in the kinetic settings before any
// data is read. Every kinetic option needs --model: without it none is
// read, and a run that took one silently would let the user think it
// acted (--kinetic-fit data is the default, so only profiles is a choice;
// --t0 moves nothing but the kinetics).
func checkKineticsSettings(s *Settings) error {
	if s.Model == "" {
		for _, x := range []struct {
			on   bool
			name string
		}{{s.Map != "", "--map"}, {s.HardModel, "--hard-model"}, {s.C0 != "", "--c0"}, {s.FitC0, "--fit-c0"}, {s.FitT0, "--fit-t0"},
			{s.KStart != "", "--k-start"}, {s.KFixed != "", "--k-fixed"},
			{s.KineticFit == "profiles", "--kinetic-fit profiles"}, {s.T0 != "", "--t0"}} {
			if x.on {
				return usage("%s needs --model, e.g. --model 'A -> B -> C'", x.name)
			}
		}
		return nil
	}
	sch, err := parseScheme(s)
	if err != nil {
		return err
	}
	if len(s.Data) > 1 {
		return usage("--model fits one experiment at a time: give one --data, or fit each experiment in a run of its own")
	}
	if _, _, _, err := kineticValues(s, sch, 1); err != nil {
		return err
	}
	if s.Map != "" {
		pairs, err := parseAssignments("map", s.Map, "A=1,B=2")
		if err != nil {
			return err
		}
		for _, p := range pairs {
			_, isStep := stepIndex(sch, p.key)
			if sch.SpeciesIndex(p.key) < 0 && !isStep {
				return usage("--map %s=%s: %q is not a species of the model %q (species: %s)", p.key, p.value, p.key, s.Model, strings.Join(sch.Species, ", "))
			}
			if n, err := strconv.Atoi(p.value); err != nil || n < 1 {
				return usage("--map %s=%s: want a component number ≥ 1 (the column of profiles.csv after time)", p.key, p.value)
			}
		}
	}
	return nil
}

// The range of rate constants --k-start and --k-fixed take. The fit works
// in ln k and refuses |ln k| > 700 (exp(700) ≈ 1e304 stays a float64 with
// room for the products the model forms, kinetics' fitProblem.unpack): a
// starting 1e308 failed the fit at its first point. The bounds leave the
// fit a few units of ln k either side; no rate constant of a reaction
// followed by spectra comes near them.
//
// A starting concentration is bounded as data values are (spectra's
// maxMagnitude, 1e100): 1e300 could not be evaluated at any starting guess.
const (
	minRateConstant  = 1e-300
	maxRateConstant  = 1e300
	maxConcentration = 1e100
)

// kineticValues reads --c0, --k-start and --k-fixed. Without --c0 the
// starting species (those no step forms) share total; with --c0 the species
// not named start at 0.
func kineticValues(s *Settings, sch *kinetics.Scheme, total float64) (c0, kstart []float64, kfixed []bool, err error) {
	ns, nr := len(sch.Species), len(sch.Steps)
	c0 = make([]float64, ns)
	if s.C0 == "" {
		formed := make([]bool, ns)
		for _, st := range sch.Steps {
			for _, t := range st.Products {
				formed[t.Species] = true
			}
		}
		var start []int
		for i := range sch.Species {
			if !formed[i] {
				start = append(start, i)
			}
		}
		if len(start) == 0 {
			start = []int{0}
		}
		for _, i := range start {
			c0[i] = total / float64(len(start))
		}
	} else {
		pairs, err := parseAssignments("c0", s.C0, "A=1,B=0")
		if err != nil {
			return nil, nil, nil, err
		}
		any := false
		for _, p := range pairs {
			i := sch.SpeciesIndex(p.key)
			if i < 0 {
				return nil, nil, nil, usage("--c0 %s=%s: %q is not a species of the model (species: %s)", p.key, p.value, p.key, strings.Join(sch.Species, ", "))
			}
			v, err := parseNumber(p.value)
			if err != nil || !(v >= 0) {
				return nil, nil, nil, usage("--c0 %s=%s: %swant a concentration ≥ 0", p.key, p.value, finiteNote(err))
			}
			if v != 0 && (v < 1/maxConcentration || v > maxConcentration) {
				return nil, nil, nil, usage("--c0 %s=%s: outside the %g to %g a concentration can take in the fit (its products and squares must stay finite); give it in the closure's units, e.g. %s=1", p.key, p.value, 1/maxConcentration, maxConcentration, p.key)
			}
			c0[i] = v
			any = any || v > 0
		}
		if !any {
			return nil, nil, nil, usage("--c0 %s: every initial concentration is zero, so nothing can react", s.C0)
		}
	}
	kstart = make([]float64, nr)
	for j := range kstart {
		kstart[j] = math.NaN()
	}
	kfixed = make([]bool, nr)
	for _, which := range []struct {
		flag, v string
		fixed   bool
	}{{"k-start", s.KStart, false}, {"k-fixed", s.KFixed, true}} {
		if which.v == "" {
			continue
		}
		pairs, err := parseAssignments(which.flag, which.v, "1=4e-3")
		if err != nil {
			return nil, nil, nil, err
		}
		for _, p := range pairs {
			j, ok := stepIndex(sch, p.key)
			if !ok {
				return nil, nil, nil, usage("--%s %s=%s: %q is not a step of the model (steps: %s)", which.flag, p.key, p.value, p.key, stepList(sch))
			}
			v, err := parseNumber(p.value)
			if err != nil || !(v > 0 || (which.fixed && v == 0)) {
				return nil, nil, nil, usage("--%s %s=%s: %swant a rate constant > 0", which.flag, p.key, p.value, finiteNote(err))
			}
			if v != 0 && (v < minRateConstant || v > maxRateConstant) {
				return nil, nil, nil, usage("--%s %s=%s: outside the %g to %g per second a rate constant can be fitted in (the fit works in ln k); give a value near 1 over the time the step takes, e.g. %s=1e-3", which.flag, p.key, p.value, minRateConstant, maxRateConstant, p.key)
			}
			if which.fixed {
				kfixed[j] = true
			} else if kfixed[j] {
				continue
			}
			kstart[j] = v
		}
	}
	return c0, kstart, kfixed, nil
}

// kineticsSettings is the part of the kinetic analysis the settings and
// the data's times fix, before anything is resolved: the scheme, t0, the
// initial concentrations, the starting and fixed rate constants and the
// units. newKinetics adds the map.
func kineticsSettings(r *Result) (*Kinetics, error) {
	s := r.Settings
	sch, err := parseScheme(s)
	if err != nil {
		return nil, err
	}
	kn := &Kinetics{Scheme: sch, T0: r.Experiments[0].T0, Extents: r.Mode == mcr.Reactions, FitC0: s.FitC0}
	closure := r.Mode == mcr.Species && s.Closure != "off"
	total := 1.0
	if closure {
		total, _ = strconv.ParseFloat(s.Closure, 64)
	}
	kn.Amplitudes = !closure
	if kn.C0, kn.KStart, kn.KFixed, err = kineticValues(s, sch, total); err != nil {
		return nil, err
	}
	if err := kn.setT0Range(r); err != nil {
		return nil, err
	}
	switch {
	case closure:
		kn.UnitName = "closure total"
		kn.Unit = fmt.Sprintf("concentrations in units of the closure total (the species sum to %s)", s.Closure)
	default:
		kn.UnitName = "c0 unit"
		start := -1
		for i, v := range kn.C0 {
			if v > 0 {
				if start >= 0 {
					start = -2
					break
				}
				start = i
			}
		}
		if start >= 0 && kn.C0[start] == 1 {
			kn.UnitName = "[" + sch.Species[start] + "]0"
		}
		kn.Unit = fmt.Sprintf("concentrations relative to the initial ones (%s); the profiles' own scale is free (one amplitude per profile), so a second-order k is per %s per second: divide by %s in mol/L for L mol^-1 s^-1", c0Text(sch, kn.C0), kn.UnitName, kn.UnitName)
	}
	return kn, nil
}

// newKinetics sets the fit up on the resolved profiles c (profiles.csv
// order) and fixes the map: --map, or the best fit over every assignment
// (kinetics.AutoMap).
func newKinetics(r *Result, c *mat.Dense) (*Kinetics, error) {
	kn, err := kineticsSettings(r)
	if err != nil {
		return nil, err
	}
	s, sch := r.Settings, kn.Scheme
	_, k := c.Dims()
	// one names a single one: "species" is its own singular.
	nModel, what, one := len(sch.Species), "species", "species"
	if kn.Extents {
		nModel, what, one = len(sch.Steps), "steps", "step"
	}
	if s.Map != "" {
		pairs, err := parseAssignments("map", s.Map, "A=1,B=2")
		if err != nil {
			return nil, err
		}
		usedComp := map[int]string{}
		usedCol := map[int]string{}
		for _, p := range pairs {
			col := -1
			if kn.Extents {
				j, ok := stepIndex(sch, p.key)
				if !ok {
					return nil, usage("--map %s=%s: in reactions mode the components are reactions: map steps by number or text (%s), e.g. --map 1=1,2=2", p.key, p.value, stepList(sch))
				}
				col = j
			} else {
				col = sch.SpeciesIndex(p.key)
				if col < 0 {
					return nil, usage("--map %s=%s: %q is not a species of the model %q (species: %s)", p.key, p.value, p.key, s.Model, strings.Join(sch.Species, ", "))
				}
			}
			n, err := strconv.Atoi(p.value)
			if err != nil || n < 1 || n > k {
				return nil, usage("--map %s=%s: component %s does not exist; the resolution has %d component(s), numbered 1..%d as in profiles.csv", p.key, p.value, p.value, k, k)
			}
			if prev, ok := usedComp[n-1]; ok {
				return nil, usage("--map: component %d is given to both %s and %s; each component is one %s", n, prev, p.key, one)
			}
			if prev, ok := usedCol[col]; ok {
				return nil, usage("--map: %s and %s name the same %s", prev, p.key, one)
			}
			usedComp[n-1], usedCol[col] = p.key, p.key
			kn.Components = append(kn.Components, n-1)
			kn.Columns = append(kn.Columns, col)
		}
		kn.MapSource = "--map"
		return kn, nil
	}
	if k > nModel {
		return nil, usage("the resolution has %d components and the model %q only %d %s: say which components it describes with --map", k, s.Model, nModel, what)
	}
	obs := mat.DenseCopyOf(c)
	first := kn.firstStart(r.Times)
	cols, fit, err := kinetics.AutoMapFit(sch, r.Times, obs, kn.options(first))
	if err != nil {
		return nil, fmt.Errorf("kinetics: %w", err)
	}
	kn.remember(obs, cols, [][]float64{first}, fit)
	for j := 0; j < k; j++ {
		kn.Components = append(kn.Components, j)
	}
	kn.Columns = cols
	kn.MapSource = "auto: the assignment of components to " + what + " with the lowest residual"
	if n := unmapped(sch, kn.Extents, cols); len(n) > 0 {
		w := leftWordsFor(len(n), kn.Extents)
		r.Notes = append(r.Notes, fmt.Sprintf("kinetics: the model %q has %d %s and the resolution %d component(s): %s %s no component, so the fit takes %s as leaving no trace of %s own in the spectra; that holds when %s, or when %s in step with others' (a reactant consumed with another, as in A + B -> C), whose components then carry %s bands; otherwise the model has more %s than the data show",
			s.Model, nModel, what, k, strings.Join(n, ", "), w.has, w.it, w.its, w.silent, w.moves, w.its, what))
	}
	passed := fit.MapNote
	if seen, note := kn.c0FromProfiles(r, c); seen != nil {
		passed = kn.tryC0(r, c, obs, seen, note, passed)
	}
	switch {
	case strings.HasPrefix(passed, kinetics.MapNoteEveryOpposed):
		// The rule found no assignment to keep: the map is the lowest residual's, and its
		// profile moving against its species is a fault of the fit, not a choice.
		r.Warnings = append(r.Warnings, "kinetics: "+passed+"; check the map with --map")
	case passed != "":
		// Said only when it decided, so that runs it did not change keep their bytes.
		kn.MapSource += " among those whose profiles each move with their " + what
		r.Notes = append(r.Notes, "kinetics: "+passed+"; --map chooses another")
	}
	return kn, nil
}

// profileFitWarnings are the warnings on a fit to the resolved profiles f:
// residuals correlated in time, and the hard–soft fit's standard errors.
// Both send the reader to the data fit's standard errors, only when there
// is one (dataFit: it may have failed, with a warning of its own); a run
// with --hard-model (hardModel) is not told to try it.
func profileFitWarnings(f *KineticFit, hardModel, dataFit bool) []string {
	var out []string
	if rho, ok := kinetics.Lag1(f.Fit.Residual); ok && rho > 0.5 {
		quote := "; the data fit's are the ones to quote"
		if !dataFit {
			quote = ""
		}
		try := ", or try --hard-model"
		switch {
		case hardModel:
			try = "" // a run that has it is not told to try it
		case !dataFit:
			try = "; try --hard-model"
		}
		out = append(out, fmt.Sprintf("the residuals are correlated in time (lag-1 autocorrelation %.2f; white noise gives about 0): the profiles carry a systematic error, e.g. rotational ambiguity, so these standard errors understate the uncertainty%s%s", rho, quote, try))
	}
	if f.Method == "hard-soft" {
		honest := "; the data fit (variable projection) gives the honest ones"
		if !dataFit {
			honest = ""
		}
		out = append(out, "the standard errors of the hard–soft fit treat the last cycle's spectra as known and so come out too small"+honest)
	}
	return out
}

// fitsDisagree says where a profile fit's rate constants and the data
// fit's differ by more than 25 % and by more than 3 of their combined
// standard errors (√(σ_p² + σ_d²)), or by more than a factor 10 whatever
// the errors (a profile fit whose error exceeds its value pins nothing).
// Smaller gaps are what rotational ambiguity leaves in profiles that do
// follow the model (7 % and 14 % on the demo), which the warning on
// correlated residuals covers. Beyond them the profiles
// then do not follow the model the way the data do (rotational ambiguity,
// or profiles that do not start where the model does), and the profile
// fit is no second measurement of the same constants.
//
// kn.KFixed says which steps --k-fixed holds (nil: none); a fit without the
// degrees of freedom for errors reports them as 0 or NaN, and then only the
// factor counts. Each constant is said with its unit: the terminal's table
// may show another time unit (--time-unit), the warning's are per second.
func fitsDisagree(kn *Kinetics, p, d *kinetics.FitResult) []string {
	sch, fixed := kn.Scheme, kn.KFixed
	var parts []string
	for j := range min(len(p.K), len(d.K)) {
		if (j < len(fixed) && fixed[j]) || !(p.K[j] > 0 && d.K[j] > 0) {
			continue // held fixed, or not a rate
		}
		if notDetermined(p, j) || notDetermined(d, j) {
			continue // a value the data do not fix: its sum is compared below
		}
		name, unit := fmt.Sprintf("k%d", j+1), ""
		if j < len(sch.Steps) {
			name, unit = fmt.Sprintf("k%d (%s)", j+1, sch.Steps[j].Text), " "+kn.rateUnit(sch.Steps[j].Order)
		}
		if part, ok := rateGap(name, unit, p.K[j], d.K[j], p.KStdErr[j], d.KStdErr[j]); ok {
			parts = append(parts, part)
		}
	}
	if sum := determinedSum(d); sum != "" && slices.Equal(p.SumSteps, d.SumSteps) && p.SumK > 0 && d.SumK > 0 {
		unit := " " + kn.rateUnit(sch.Steps[d.SumSteps[0]].Order)
		if part, ok := rateGap(sum, unit, p.SumK, d.SumK, p.SumKStdErr, d.SumKStdErr); ok {
			parts = append(parts, part)
		}
	}
	if len(parts) == 0 {
		return nil
	}
	return []string{fmt.Sprintf("its rate constants differ from the data fit's: %s. The resolved profiles do not follow the model the way the data do (rotational ambiguity, or profiles that do not start where the model does: --c0, --fit-c0), so this fit is not a second measurement of them; quote the data fit", strings.Join(parts, "; "))}
}

// rateGap words how a profile fit's constant (or determined sum) p and the
// data fit's d differ when they differ as fitsDisagree counts it (ok false
// otherwise); sp and sd are their standard errors.
func rateGap(name, unit string, p, d, sp, sd float64) (string, bool) {
	se := math.Hypot(sp, sd)
	known := se > 0 && !math.IsNaN(se) && !math.IsInf(se, 0)
	ratio := math.Max(p/d, d/p)
	apart := known && math.Abs(p-d) > 3*se && ratio > 1.25
	if !apart && ratio <= 10 {
		return "", false
	}
	gap := "their standard errors unknown"
	if known {
		gap = fmt.Sprintf("%.3g combined standard errors apart", math.Abs(p-d)/se)
	}
	return fmt.Sprintf("%s %.4g%s against %.4g%s, a factor %.3g and %s", name, p, unit, d, unit, ratio, gap), true
}

// inheritNotDetermined marks the constants of the profile fit p that the
// data fit d finds not determined as not determined too, with d's sum when
// d has one (kinetics.FitResult.InheritNotDetermined), and returns the
// warning that says so ("" when nothing was marked). The data hold what the
// profiles hold and more: what they leave free, the profiles' values of it
// come from the resolution's rotational ambiguity, not from the chemistry.
func (kn *Kinetics) inheritNotDetermined(p, d *kinetics.FitResult) string {
	steps := p.InheritNotDetermined(d)
	if len(steps) == 0 {
		return ""
	}
	var parts []string
	for _, j := range steps {
		parts = append(parts, fmt.Sprintf("k%d (%s, this fit ended at %.4g %s)", j+1, kn.Scheme.Steps[j].Text, p.K[j], kn.rateUnit(kn.Scheme.Steps[j].Order)))
	}
	w := fmt.Sprintf("the data fit finds %s not determined by the data, so the resolved profiles cannot determine them either (their values here come from how the resolution rotated the profiles): reported as not determined, with no standard error", strings.Join(parts, " and "))
	if sum := determinedSum(p); sum != "" {
		w += fmt.Sprintf("; only their sum is determined: %s = %.4g ± %.2g %s (the data fit's: %.4g ± %.2g)", sum, p.SumK, p.SumKStdErr, kn.rateUnit(kn.Scheme.Steps[p.SumSteps[0]].Order), d.SumK, d.SumKStdErr)
	}
	return w
}

// tryC0 compares the profile fits with the default initial concentrations
// and with those the pre-reaction profiles show (the map chosen again for
// them), and keeps the better fit; the note records both residuals either
// way, so the choice is checked, not assumed. It returns the map's note
// (kinetics.FitResult.MapNote) of the initial concentrations kept, passed
// being the default's.
func (kn *Kinetics) tryC0(r *Result, c, obs *mat.Dense, seen []float64, note, passed string) string {
	defC0, defCols := kn.C0, kn.Columns
	defFit, _, errDef := kn.fitProfiles(r.Times, c, kn.starts(r.Times))
	kn.C0 = seen
	first := kn.firstStart(r.Times)
	newPassed := passed
	if cols, fit, err := kinetics.AutoMapFit(kn.Scheme, r.Times, obs, kn.options(first)); err == nil {
		kn.Columns, newPassed = cols, fit.MapNote
		kn.remember(obs, cols, [][]float64{first}, fit)
	}
	newFit, _, errNew := kn.fitProfiles(r.Times, c, kn.starts(r.Times))
	switch {
	case errNew == nil && (errDef != nil || newFit.SSR < defFit.SSR*(1-1e-6)):
		if errDef == nil {
			note += fmt.Sprintf(": the profiles fit better with them (residual sum of squares %.4g against %.4g with the default), so the fits use them", newFit.SSR, defFit.SSR)
		}
		r.Notes = append(r.Notes, note+"; give --c0 to set them, or --fit-c0 to fit them")
		return newPassed
	default:
		kn.C0, kn.Columns = defC0, defCols
		if errNew == nil && errDef == nil {
			r.Notes = append(r.Notes, note+fmt.Sprintf(", but the profiles fit no better with them (residual sum of squares %.4g against %.4g with the default), so the default is kept; give --c0 to set them", newFit.SSR, defFit.SSR))
		}
		return passed
	}
}

// c0FromPreTolerance is how far (as a fraction of the closure total) the
// pre-reaction profiles may lie from the scheme's default initial
// concentrations before the default is taken as contradicted: resolved
// profiles carry a few per cent of rotational ambiguity and noise.
const c0FromPreTolerance = 0.05

// c0FromProfiles replaces the scheme's default initial concentrations (the
// species no step forms share the closure total) by those the resolved
// profiles show before the reaction starts (the mean of the rows at
// t ≤ t0), when they contradict the default by more than
// c0FromPreTolerance of the total: a sample that holds some intermediate,
// or a reversible A -> B; B -> A started from a mixture, is not A alone,
// and fitted from A = 1 its rate constants go wherever the misfit pushes
// them. Only in species mode with closure (concentrations in known units),
// without --c0, with every species mapped to a component and at least two
// spectra before t0 (one row cannot tell a start from a stray value).
// Values under 2 % of the total are taken as zero (noise); the rest is
// scaled to the total. Returns the candidate and the start of its note,
// nil when the profiles agree with the default.
func (kn *Kinetics) c0FromProfiles(r *Result, c *mat.Dense) ([]float64, string) {
	if r.Settings.C0 != "" || kn.Extents || kn.Amplitudes || len(kn.Columns) != len(kn.Scheme.Species) {
		return nil, ""
	}
	var pre []int
	for i, t := range r.Times {
		if t <= kn.T0 {
			pre = append(pre, i)
		}
	}
	if len(pre) < 2 {
		return nil, ""
	}
	total := 0.0
	for _, v := range kn.C0 {
		total += v
	}
	seen := make([]float64, len(kn.C0))
	for j, comp := range kn.Components {
		var sum float64
		for _, i := range pre {
			sum += c.At(i, comp)
		}
		seen[kn.Columns[j]] = math.Max(0, sum/float64(len(pre)))
	}
	off := 0.0
	for i, v := range seen {
		off = math.Max(off, math.Abs(v-kn.C0[i]))
	}
	if !(off > c0FromPreTolerance*total) {
		return nil, ""
	}
	var kept float64
	for i, v := range seen {
		if v < 0.02*total {
			seen[i] = 0
		}
		kept += seen[i]
	}
	if !(kept > 0) {
		return nil, ""
	}
	for i := range seen {
		seen[i] *= total / kept
	}
	return seen, fmt.Sprintf("kinetics: the resolved profiles before the reaction (%d spectra at t ≤ t0 = %g s) show %s, not the scheme's default %s (off by %.2g of the closure total, more than %.2g)", len(pre), kn.T0, c0TextG(kn.Scheme, seen), c0Text(kn.Scheme, kn.C0), off/total, c0FromPreTolerance)
}

// c0TextG is c0Text with 3 significant digits.
func c0TextG(sch *kinetics.Scheme, c0 []float64) string {
	var parts []string
	for i, v := range c0 {
		if v > 0 {
			parts = append(parts, fmt.Sprintf("[%s]0 = %.3g", sch.Species[i], v))
		}
	}
	return strings.Join(parts, ", ")
}

func c0Text(sch *kinetics.Scheme, c0 []float64) string {
	var parts []string
	for i, v := range c0 {
		if v > 0 {
			parts = append(parts, fmt.Sprintf("[%s]0 = %s", sch.Species[i], strconv.FormatFloat(v, 'g', -1, 64)))
		}
	}
	return strings.Join(parts, ", ")
}

func (kn *Kinetics) hasFixed() bool {
	for _, f := range kn.KFixed {
		if f {
			return true
		}
	}
	return false
}

func (kn *Kinetics) options(initialK []float64) kinetics.FitOptions {
	opt := kinetics.FitOptions{T0: kn.T0, InitialK: initialK, C0: kn.C0, FitC0: kn.FitC0,
		FitT0: kn.FitT0, T0Lo: kn.T0Lo, T0Hi: kn.T0Hi, Amplitudes: kn.Amplitudes, UseExtents: kn.Extents, TimeUnit: "s", RateUnits: kn.rateUnits()}
	if kn.hasFixed() {
		opt.FixedK = kn.KFixed
	}
	return opt
}

// starts gives the starting rate constants: nil (the kinetics package's own
// grid) when none is given, the user's values, or a grid of k·T ∈ {0.5, 2,
// 8, 32} (T the time span after t0) over the steps left open.
func (kn *Kinetics) starts(times []float64) [][]float64 {
	var open []int
	for j, v := range kn.KStart {
		if math.IsNaN(v) {
			open = append(open, j)
		}
	}
	if len(open) == len(kn.KStart) && !kn.hasFixed() {
		return [][]float64{nil}
	}
	span := 0.0
	for _, t := range times {
		span = math.Max(span, t-kn.T0)
	}
	cmax := 0.0
	for _, v := range kn.C0 {
		cmax = math.Max(cmax, v)
	}
	base := append([]float64(nil), kn.KStart...)
	if len(open) == 0 || len(open) > 3 {
		for _, j := range open {
			base[j] = 2 / span / math.Pow(cmax, float64(kn.Scheme.Steps[j].Order-1))
		}
		return [][]float64{base}
	}
	factors := []float64{0.5, 2, 8, 32}
	total := 1
	for range open {
		total *= len(factors)
	}
	var out [][]float64
	for code := 0; code < total; code++ {
		k := append([]float64(nil), base...)
		c := code
		for _, j := range open {
			k[j] = factors[c%len(factors)] / span / math.Pow(cmax, float64(kn.Scheme.Steps[j].Order-1))
			c /= len(factors)
		}
		out = append(out, k)
	}
	return out
}

func (kn *Kinetics) firstStart(times []float64) []float64 { return kn.starts(times)[0] }

// observed picks the mapped components' columns out of c.
func (kn *Kinetics) observed(c *mat.Dense) *mat.Dense {
	n, _ := c.Dims()
	o := mat.NewDense(n, len(kn.Components), nil)
	for j, comp := range kn.Components {
		o.SetCol(j, mat.Col(nil, comp, c))
	}
	return o
}

// fitProfiles fits the mapped columns of c from every start and keeps the
// lowest sum of squares (the earliest start on ties).
func (kn *Kinetics) fitProfiles(times []float64, c *mat.Dense, starts [][]float64) (*kinetics.FitResult, *mat.Dense, error) {
	obs := kn.observed(c)
	if fit := kn.recall(obs, starts); fit != nil {
		return fit, obs, nil
	}
	var best *kinetics.FitResult
	var firstErr error
	for _, k0 := range starts {
		fit, err := kinetics.FitProfiles(kn.Scheme, times, obs, kn.Columns, kn.options(k0))
		if err != nil {
			if firstErr == nil {
				firstErr = err
			}
			continue
		}
		if best == nil || fit.SSR < best.SSR*(1-1e-12) {
			best = fit
		}
	}
	if best == nil {
		return nil, nil, fmt.Errorf("kinetic fit of the profiles: %w", firstErr)
	}
	kn.remember(obs, kn.Columns, starts, best)
	return best, obs, nil
}

// profileFit is a fit of the profiles made before, with what determines
// it: the observed columns (compared by value), the map, the initial
// concentrations and the starting constants (the fit is deterministic).
// The automatic map fits the assignment it chooses, and the soft
// solution's fit then fits it again with the same options: one fit of 3
// Levenberg–Marquardt runs (from the best of the grid of starts) saved, two
// when the initial concentrations seen in the profiles are tried.
type profileFit struct {
	obs    *mat.Dense
	cols   []int
	c0     []float64
	starts [][]float64
	fit    *kinetics.FitResult
}

func (kn *Kinetics) remember(obs *mat.Dense, cols []int, starts [][]float64, fit *kinetics.FitResult) {
	if fit == nil {
		return
	}
	kn.profileFits = append(kn.profileFits, profileFit{obs: mat.DenseCopyOf(obs), cols: append([]int(nil), cols...), c0: append([]float64(nil), kn.C0...), starts: starts, fit: fit})
}

// recall returns the fit remembered for these observed columns, starts and
// the present map and initial concentrations, or nil.
func (kn *Kinetics) recall(obs *mat.Dense, starts [][]float64) *kinetics.FitResult {
	for _, p := range kn.profileFits {
		if slices.Equal(p.cols, kn.Columns) && slices.Equal(p.c0, kn.C0) && len(p.starts) == len(starts) && mat.Equal(p.obs, obs) {
			same := true
			for i := range starts {
				same = same && slices.Equal(p.starts[i], starts[i])
			}
			if same {
				return p.fit
			}
		}
	}
	return nil
}

// warm returns options that start from an earlier fit (its rate constants
// and, when fitted, its initial concentrations).
func (kn *Kinetics) warm(prev *kinetics.FitResult) kinetics.FitOptions {
	opt := kn.options(append([]float64(nil), prev.K...))
	if kn.FitC0 {
		opt.C0 = append([]float64(nil), prev.C0...)
	}
	if kn.FitT0 {
		opt.T0 = prev.T0
	}
	return opt
}

// permuteOptions reorders the per-component options of ALS the way
// orderComponents reordered the components (new j = old order[j]).
func permuteOptions(opt mcr.Options, order []int) mcr.Options {
	out := opt
	if opt.ZeroProfiles != nil {
		out.ZeroProfiles = make([][]bool, len(order))
		for j, from := range order {
			if from < len(opt.ZeroProfiles) {
				out.ZeroProfiles[j] = opt.ZeroProfiles[from]
			}
		}
	}
	permB := func(b []bool) []bool {
		if b == nil {
			return nil
		}
		o := make([]bool, len(order))
		for j, from := range order {
			if from < len(b) {
				o[j] = b[from]
			}
		}
		return o
	}
	out.NonNegProfiles, out.NonNegSpectra, out.Unimodal = permB(opt.NonNegProfiles), permB(opt.NonNegSpectra), permB(opt.Unimodal)
	if opt.KnownSpectra != nil {
		out.KnownSpectra = make([][]float64, len(order))
		for j, from := range order {
			if from < len(opt.KnownSpectra) {
				out.KnownSpectra[j] = opt.KnownSpectra[from]
			}
		}
	}
	if opt.ClosureWeights != nil {
		out.ClosureWeights = make([]float64, len(order))
		for j, from := range order {
			out.ClosureWeights[j] = opt.ClosureWeights[from]
		}
	}
	return out
}

// hardSoft is the hard–soft resolution (de Juan, Maeder, Martínez & Tauler
// 2000). The map is fixed on the soft solution r.ALS, then ALS restarts from
// it and, in every cycle after the constrained least-squares profiles step,
// mcr.Options.HardModel replaces the mapped profiles by their kinetic fit
// (warm-started from the previous cycle's rate constants, so the cycles stay
// cheap and the path is deterministic). Unmapped components stay soft.
func hardSoft(r *Result, data mcr.Data, opt mcr.Options, order []int, log io.Writer) (*mcr.Result, mcr.Data, error) {
	kn, err := newKinetics(r, r.ALS.C)
	if err != nil {
		return nil, nil, err
	}
	soft, softObs, err := kn.fitProfiles(r.Times, r.ALS.C, kn.starts(r.Times))
	if err != nil {
		return nil, nil, err
	}
	cy := &hardSoftCycles{kn: kn, times: r.Times, last: soft, lastObs: softObs}
	start, hopt := hardSoftStart(r, cy, opt, order, log)
	cy.allModel = len(kn.Components) == r.Components
	hopt.HardModel, hopt.HardKept = cy.model, cy.kept
	fmt.Fprintf(log, "hard–soft resolution with %s\n", kn.Scheme.Text)
	data, withBaseline, inner := baselineBack(r, data, &hopt)
	res, err := mcr.Resolve(data, start, hopt)
	if err != nil {
		return nil, nil, fmt.Errorf("hard–soft: %w", err)
	}
	if withBaseline != nil && res.Baseline != nil {
		data = baselineOutAgain(r, res, withBaseline, inner)
	}
	if r.Mode == mcr.Reactions {
		if err := cy.rescaleReactions(res); err != nil {
			return nil, nil, err
		}
	}
	kn.Fits = []*KineticFit{{Method: "hard-soft", Fit: cy.last, Observed: cy.lastObs}, {Method: "soft-profiles", Fit: soft, Observed: softObs}}
	r.Kinetics = kn
	return res, data, nil
}

// hardSoftStart returns the profiles hard–soft ALS starts from and its options: the soft
// solution with the options permuted to the map's order, or, when every component is one
// model column, the data fit's concentrations (or extents) with the options as they are.
func hardSoftStart(r *Result, cy *hardSoftCycles, opt mcr.Options, order []int, log io.Writer) (*mat.Dense, mcr.Options) {
	kn := cy.kn
	hopt := permuteOptions(opt, order)
	start := r.ALS.C
	if pre := kn.dataStart(r, cy.last, opt); pre != nil {
		// Every component is one model column: start from the data fit's
		// concentrations (or extents), the map is the scheme's order.
		k := len(kn.Components)
		for j := 0; j < k; j++ {
			kn.Components[j], kn.Columns[j] = j, j
		}
		kn.MapSource = "auto: the " + kn.columnWord() + " in the scheme's order, hard–soft started from the fit of the data matrix"
		start, cy.last, hopt = pre.Model, pre, opt
		fmt.Fprintf(log, "hard–soft starts from the data fit, k = %s\n", kn.kList(pre.K))
	}
	return start, hopt
}

// hardSoftCycles carries the kinetic fits from one hard–soft ALS cycle to the next.
// pending is the fit of the iteration under way; ALS says whether it kept it
// (mcr.Options.HardKept), and only a kept fit becomes last, the start of the next
// cycle's fit and the hard–soft fit reported.
type hardSoftCycles struct {
	kn                  *Kinetics
	times               []float64
	last, pending       *kinetics.FitResult
	lastObs, pendingObs *mat.Dense
	allModel            bool // every component is a model column
	settle              settling
}

// model is mcr.Options.HardModel: the mapped profiles replaced by their kinetic fit,
// warm-started from the last kept one.
func (cy *hardSoftCycles) model(c *mat.Dense) (*mat.Dense, error) {
	kn := cy.kn
	obs := kn.observed(c)
	fit, err := kinetics.FitProfiles(kn.Scheme, cy.times, obs, kn.Columns, kn.warm(cy.last))
	if err != nil {
		return nil, err
	}
	cy.pending, cy.pendingObs = fit, obs
	out := mat.DenseCopyOf(c)
	for j, comp := range kn.Components {
		out.SetCol(comp, mat.Col(nil, j, fit.Fitted))
	}
	return out, nil
}

// kept is mcr.Options.HardKept: a kept iteration's fit becomes the last one, and ALS may
// stop once the fits have settled.
func (cy *hardSoftCycles) kept(kept bool) bool {
	if !kept || cy.pending == nil {
		return false
	}
	prev := cy.last
	cy.last, cy.lastObs = cy.pending, cy.pendingObs
	cy.pending = nil
	// Only when every component is a model column does the model fix
	// the whole solution; soft components may still be moving.
	return cy.allModel && cy.settle.step(prev, cy.last)
}

// baselineBack puts the baseline that resolve subtracted back into the data hard–soft
// fits, with its shapes in hopt: a soft solution stuck in a local minimum takes chemistry
// into it, so hard–soft estimates it again, jointly with the model's profiles, from the
// data as read. It returns the data to fit, that data as a matrix (nil when the baseline
// stays out) and the data as read when resolve wrapped them (nil otherwise).
func baselineBack(r *Result, data mcr.Data, hopt *mcr.Options) (mcr.Data, *mat.Dense, mcr.Data) {
	if r.BaselineShapes == nil || r.BaselineProfiles == nil {
		return data, nil, nil
	}
	var withBaseline *mat.Dense
	var inner mcr.Data
	switch d := data.(type) {
	case mcr.Dense:
		var bp mat.Dense
		bp.Mul(r.BaselineProfiles, r.BaselineShapes.T())
		withBaseline = mat.DenseCopyOf(r.D)
		withBaseline.Add(withBaseline, &bp)
		data = mcr.Dense{D: withBaseline}
		hopt.Baseline, hopt.BaselineAnchors = r.BaselineShapes, baselineAnchors(r)
	case mcr.LessBaseline:
		var bp mat.Dense
		bp.Mul(r.BaselineProfiles, r.BaselineShapes.T())
		withBaseline = mat.DenseCopyOf(r.D)
		withBaseline.Add(withBaseline, &bp)
		inner = d.Data
		data = d.Data
		hopt.Baseline, hopt.BaselineAnchors = r.BaselineShapes, baselineAnchors(r)
	}
	return data, withBaseline, inner
}

// baselineOutAgain takes hard–soft's own baseline out of the data (withBaseline, from
// baselineBack) into r.D, gives res its figures on them and returns the data the later
// steps work on.
func baselineOutAgain(r *Result, res *mcr.Result, withBaseline *mat.Dense, inner mcr.Data) mcr.Data {
	r.BaselineProfiles = res.Baseline
	r.D = mcr.SubtractBaseline(withBaseline, res.Baseline, r.BaselineShapes)
	res.LackOfFitPercent = mcr.LackOfFit(r.D, res.C, res.S)
	res.ResidualSS = sq(res.LackOfFitPercent/100) * frob2(r.D)
	res.ExplainedPercent = 100 * (1 - sq(res.LackOfFitPercent/100))
	if inner != nil {
		return mcr.LessBaseline{Data: inner, B: res.Baseline, P: r.BaselineShapes}
	}
	return mcr.Dense{D: r.D}
}

// rescaleReactions rescales the extents as resolve does, and the last cycle's soft
// profiles with them, so that the hard–soft fit is reported on profiles.csv's scale.
func (cy *hardSoftCycles) rescaleReactions(res *mcr.Result) error {
	kn := cy.kn
	n, _ := res.C.Dims()
	for j, comp := range kn.Components {
		mx := 0.0
		for i := 0; i < n; i++ {
			mx = math.Max(mx, res.C.At(i, comp))
		}
		if mx > 0 {
			for i := 0; i < n; i++ {
				cy.lastObs.Set(i, j, cy.lastObs.At(i, j)/mx)
			}
		}
	}
	mcr.ScaleExtentsToOne(res.C, res.S)
	// Refit the rescaled profiles once: per-column scales change the
	// weights of the columns, so the fit is redone rather than rescaled.
	fit, err := kinetics.FitProfiles(kn.Scheme, cy.times, cy.lastObs, kn.Columns, kn.warm(cy.last))
	if err != nil {
		return fmt.Errorf("hard–soft: final fit: %w", err)
	}
	cy.last = fit
	return nil
}

// settleChange and settleLeft bound when hard–soft ALS has settled: the
// rate constants (and fitted initial concentrations) changed in the last
// kept cycle by less than settleChange of their standard errors, and the
// change still to come, estimated from the rate at which the changes
// shrink (a geometric series: d ρ/(1 − ρ) with ρ the ratio of the last two
// changes), is below settleLeft of them. The standard errors are those of
// the cycle's profile fit, which treat the spectra as known and so are
// smaller than the honest ones: the bound errs on the side of iterating.
const settleChange, settleLeft = 1e-2, 1e-2

// settling follows the changes of the hard–soft fit from cycle to cycle.
type settling struct{ prevChange float64 }

// step records the change from a to b, in standard errors of b, and says
// whether the fit has settled.
func (st *settling) step(a, b *kinetics.FitResult) bool {
	d := 0.0
	for j := range b.K {
		if b.KStdErr[j] == 0 {
			continue // a fixed step
		}
		if !(b.KStdErr[j] > 0) {
			return false
		}
		d = math.Max(d, math.Abs(b.K[j]-a.K[j])/b.KStdErr[j])
	}
	for i := range b.C0 {
		if b.C0StdErr[i] > 0 && i < len(a.C0) {
			d = math.Max(d, math.Abs(b.C0[i]-a.C0[i])/b.C0StdErr[i])
		}
	}
	prev := st.prevChange
	st.prevChange = d
	if d == 0 {
		return true // nothing moved
	}
	if !(d < settleChange) || !(prev > 0) {
		return false
	}
	rho := d / prev
	return rho < 1 && d*rho/(1-rho) < settleLeft
}

// fitKinetics fits --model after resolve: the resolved profiles (unless a
// hard–soft run already did) and the data matrix, and chooses the fit
// reported by --kinetic-fit.
func fitKinetics(r *Result, log io.Writer) error {
	s := r.Settings
	if s.Model == "" {
		return nil
	}
	if r.ALS == nil {
		r.Notes = append(r.Notes, "--model: nothing was resolved, so there are no profiles to fit")
		return nil
	}
	kn := r.Kinetics
	if kn == nil {
		var err error
		if kn, err = newKinetics(r, r.ALS.C); err != nil {
			return err
		}
		fit, obs, err := kn.fitProfiles(r.Times, r.ALS.C, kn.starts(r.Times))
		if err != nil {
			return err
		}
		kn.Fits = []*KineticFit{{Method: "profiles", Fit: fit, Observed: obs}}
		r.Kinetics = kn
	}
	fmt.Fprintf(log, "fitting %s to the data matrix\n", kn.Scheme.Text)
	// Start from the profile fit: the data alone cannot always tell which
	// step is fast (for A -> B -> C the model columns span the same space
	// with k1 and k2 swapped, the "slow–fast" ambiguity), the non-negative,
	// closed profiles can.
	dopt := kn.dataOptions(r, kn.warm(kn.Fits[0].Fit))
	endBatch := kn.startBatch()
	defer func() {
		endBatch()
		kn.lastScaled = nil // no later batch: the data-sized matrix is let go
	}()
	dfit, spectra, err := kn.fitData(r, dopt)
	if err != nil {
		r.Warnings = append(r.Warnings, "kinetics: the fit of the data matrix failed: "+oneLineText(err.Error()))
	} else {
		kf := &KineticFit{Method: "data", Fit: dfit, Spectra: spectra}
		kn.Fits = append(kn.Fits, kf)
		kn.swapCheck(r, dfit, spectra, dopt, &r.Notes)
		// After the swap check, which writes the constants it adopts
		// into dfit: the test is of the constants reported.
		kn.oneLevelFit(r, kf)
		if w := kn.oneLevelWarning(r, dfit, kf.OneLevel, kf.OneLevelSum); w != "" {
			if kn.reportOneLevel(kf) {
				dfit = kf.Fit
				w += oneLevelReportedWords
			}
			dfit.Warnings = append(dfit.Warnings, w)
		}
		// The resolution's test and words: the same ratio, the same verdict.
		// Its limit serves here too: the kinetic fit's ν differs from the
		// resolution's by k(n − k) − p, a few per cent of it at most.
		if ratio := kf.toNoise(r); ratio >= math.Sqrt2 && ratio > r.misfit.Limit {
			times, _ := kn.fitRows(r) // the batch's: no second pass
			w := dataMisfitWarning(ratio, output.FitVerdict(ratio, r.misfit.Limit), times, dfit.RowSSR, dfit.T0, shownTimeUnit(s))
			if one, ok := findOneSpectrum(allRows(r, dfit.RowSSR), func(i int) bool { return !setAside(r.SetAside, i) }, ratio); ok && !strings.Contains(w, "--t0") {
				w = dataMisfitWords(ratio, output.FitVerdict(ratio, r.misfit.Limit), one.words(r))
			}
			dfit.Warnings = append(dfit.Warnings, w)
		}
	}
	kn.Primary = 0
	if s.KineticFit == "data" {
		if f := len(kn.Fits) - 1; kn.Fits[f].Method == "data" {
			kn.Primary = f
		}
	}
	dataFit := kn.Fits[len(kn.Fits)-1].Method == "data"
	for _, f := range kn.Fits {
		if f.Observed != nil {
			f.Fit.Warnings = append(f.Fit.Warnings, profileFitWarnings(f, s.HardModel, dataFit)...)
			if dataFit {
				d := kn.Fits[len(kn.Fits)-1].Fit
				if w := kn.inheritNotDetermined(f.Fit, d); w != "" {
					f.Fit.Warnings = append(f.Fit.Warnings, w)
				}
				f.Fit.Warnings = append(f.Fit.Warnings, fitsDisagree(kn, f.Fit, d)...)
			}
		}
	}
	for _, f := range kn.Fits {
		for _, w := range f.Fit.Warnings {
			r.Warnings = append(r.Warnings, fmt.Sprintf("kinetics (%s fit): %s", f.Method, w))
		}
	}
	return nil
}

// dataOptions are the options of a fit of the data matrix: no amplitudes
// (the spectra carry the scale), the noise weights of the data when
// the analysis uses them (maximum likelihood: the standard errors then
// follow the noise of each point) and, in reactions mode, the reference's
// error common to each experiment's rows (referenceErrors). With --weights off the data fit is
// unweighted too: the option says every point counts alike, and a rate
// constant fitted under weights the resolution was told not to use would
// answer another question than the one asked.
func (kn *Kinetics) dataOptions(r *Result, opt kinetics.FitOptions) kinetics.FitOptions {
	opt.Amplitudes = false
	if col := dataColWeights(r); col != nil {
		opt.RowWeights, opt.ColWeights = keptValues(r, r.Weights.Row), col
	}
	opt.Common = referenceErrors(r)
	return opt
}

// dataColWeights are the column weights the fits of the data matrix use
// (dataOptions), nil when they are unweighted (--weights off).
func dataColWeights(r *Result) []float64 {
	n, m := r.D.Dims()
	if w := r.Weights; weighted(r) && len(w.Row) == n && len(w.Col) == m {
		return w.Col
	}
	return nil
}

// keptRows lists the rows of r.D that are data: spectra set aside as
// outliers were replaced by the resolution's fit (imputeRows), so a fit of
// the data matrix that kept them would partly fit the resolution — and a
// soft resolution stuck in a local minimum sets aside exactly the spectra
// it fits worst, often the first ones of the reaction, where the fastest
// step shows.
func keptRows(r *Result) []int {
	aside := map[int]bool{}
	for _, sa := range r.SetAside {
		aside[sa.Row] = true
	}
	var rows []int
	for i := range r.Times {
		if !aside[i] {
			rows = append(rows, i)
		}
	}
	return rows
}

func keptValues(r *Result, v []float64) []float64 {
	if len(r.SetAside) == 0 {
		return v
	}
	var out []float64
	for _, i := range keptRows(r) {
		out = append(out, v[i])
	}
	return out
}

// fitData is kinetics.FitData on the rows of r.D that are data (keptRows),
// with the model columns then simulated at every time, so that Model has
// one row per spectrum as everywhere else.
func (kn *Kinetics) fitData(r *Result, opt kinetics.FitOptions) (*kinetics.FitResult, *mat.Dense, error) {
	f := kn.dataFitJob(r, opt)
	f.run()
	return kn.keep(f)
}

// dataFitJob is one fit of the data matrix made ready by fitData: the rows
// and the shared reductions taken from kn beforehand, so that run reads
// and writes nothing of kn and several jobs may run at once (checkAhead;
// earlyDataFit makes one of its own, before the resolution).
type dataFitJob struct {
	kn      *Kinetics
	r       *Result
	times   []float64
	d       *mat.Dense
	opt     kinetics.FitOptions
	fit     *kinetics.FitResult
	spectra *mat.Dense
	err     error
}

func (kn *Kinetics) dataFitJob(r *Result, opt kinetics.FitOptions) *dataFitJob {
	times, d := kn.fitRows(r)
	// Nothing reads a data fit's n × m fitted values and residuals once
	// FitData has taken their figures (the residual sum of squares, the
	// lag-1 autocorrelation): two data-sized matrices per fit saved.
	opt.NoResidual = true
	if opt.Reduced == nil {
		opt.Reduced = kn.reduced
	}
	if b := kn.batch; b != nil && opt.Scaled == nil {
		if b.scaled == nil && kn.lastScaled != nil && kinetics.ScaledFrom(kn.lastScaled, d, opt.RowWeights, opt.ColWeights) {
			b.scaled = kn.lastScaled
		}
		opt.Scaled = b.scaled
	}
	return &dataFitJob{kn: kn, r: r, times: times, d: d, opt: opt}
}

// run makes the fit; it only reads kn.Scheme and kn.Extents.
func (f *dataFitJob) run() {
	kn, r := f.kn, f.r
	f.fit, f.spectra, f.err = kinetics.FitData(kn.Scheme, f.times, f.d, f.opt)
	if f.err != nil || len(r.SetAside) == 0 {
		return
	}
	sim, err := kn.Scheme.Simulate(f.fit.K, f.fit.C0, r.Times, f.fit.T0)
	if err != nil {
		// (keep still takes the fit's reductions, as before.)
		f.err = err
		return
	}
	f.fit.Model = sim.C
	if kn.Extents {
		f.fit.Model = sim.Extents
	}
}

// keep takes a finished job's reductions for the next fits, as fitData
// always did, and returns its result.
func (kn *Kinetics) keep(f *dataFitJob) (*kinetics.FitResult, *mat.Dense, error) {
	if f.fit != nil {
		kn.reduced = f.fit.Reduced
		if kn.batch != nil {
			kn.batch.scaled = f.fit.Scaled
		}
		if f.fit.Scaled != nil {
			kn.lastScaled = f.fit.Scaled
		}
	}
	if f.err != nil {
		return nil, nil, f.err
	}
	return f.fit, f.spectra, nil
}

// fitRows returns the times and rows of r.D the data fits work on: with a
// baseline, the data's component along the baseline shapes left out (the
// baseline resolve subtracted came with its own, soft, solution; fitted
// jointly instead, projectOutShapes), in the metric of the fit's column
// weights when it has them (dataOptions), and without the spectra set aside
// (keptRows). Within a batch they are formed once.
func (kn *Kinetics) fitRows(r *Result) ([]float64, *mat.Dense) {
	if b := kn.batch; b != nil && b.d != nil {
		return b.times, b.d
	}
	times, d := r.Times, r.D
	if r.BaselineShapes != nil {
		d = projectOutShapesWeighted(d, r.BaselineShapes, dataColWeights(r))
	}
	if len(r.SetAside) > 0 {
		rows := keptRows(r)
		_, m := d.Dims()
		all := d
		d = mat.NewDense(len(rows), m, nil)
		times = make([]float64, len(rows))
		for a, i := range rows {
			d.SetRow(a, all.RawRowView(i))
			times[a] = r.Times[i]
		}
	}
	if b := kn.batch; b != nil {
		b.times, b.d = times, d
	}
	return times, d
}

// nonNegativeCost is kinetics.NonNegativeCheck on the rows fitData fits.
func (kn *Kinetics) nonNegativeCost(r *Result, k []float64, opt kinetics.FitOptions) (kinetics.NonNegCost, error) {
	times, d := r.Times, r.D
	if len(r.SetAside) > 0 {
		rows := keptRows(r)
		_, m := r.D.Dims()
		d = mat.NewDense(len(rows), m, nil)
		times = make([]float64, len(rows))
		for a, i := range rows {
			d.SetRow(a, r.D.RawRowView(i))
			times[a] = r.Times[i]
		}
	}
	return kinetics.NonNegativeCheck(kn.Scheme, times, d, k, opt)
}

// dataStart fits the data matrix before hard–soft ALS, so that a soft
// resolution stuck in a local minimum (two closed subsystems leave the data
// rank below the number of species, and the soft profiles then mix them)
// cannot choose the map and the start: variable projection from the
// kinetics package's grid of starting constants and from the soft profiles'
// fit, the lower residual kept, and every other order of the constants
// compared with non-negative spectra (swapCheck). Only when every
// component is one model column, the map is automatic and the
// per-component options are alike (they then do not depend on the order);
// nil otherwise or when the fit fails.
func (kn *Kinetics) dataStart(r *Result, soft *kinetics.FitResult, opt mcr.Options) *kinetics.FitResult {
	nModel := len(kn.Scheme.Species)
	if kn.Extents {
		nModel = len(kn.Scheme.Steps)
	}
	// The early data fit is asked for once, here, and let go whatever
	// the answer (letGo).
	defer r.earlyFit.letGo()
	if r.Settings.Map != "" || len(kn.Components) != nModel || r.Components != nModel || !alikeOptions(opt) {
		return nil
	}
	defer kn.startBatch()()
	var best *kinetics.FitResult
	var bestSpectra *mat.Dense
	var bestOpt kinetics.FitOptions
	for a, base := range []kinetics.FitOptions{kn.options(kn.firstStart(r.Times)), kn.warm(soft)} {
		o := kn.dataOptions(r, base)
		var f *kinetics.FitResult
		var sp *mat.Dense
		var err error
		var job *dataFitJob
		if a == 0 {
			job = r.earlyFit.take(r, kn, o)
			r.earlyFit.letGo()
		}
		if job != nil {
			f, sp, err = kn.keep(job) // the same fit, begun beside the soft resolution
		} else {
			f, sp, err = kn.fitData(r, o)
		}
		if err != nil {
			continue
		}
		if best == nil || f.SSR < best.SSR*(1-1e-9) {
			best, bestSpectra, bestOpt = f, sp, o
		}
	}
	if best == nil {
		return nil
	}
	var discard []string
	kn.swapCheck(r, best, bestSpectra, bestOpt, &discard)
	return best
}

// startsFromDataFit reports, before the soft resolution, whether hard–soft
// ALS will start from the fit of the data matrix rather than from that
// resolution: --model with --hard-model, the map automatic and every
// component one model column, and the per-component options alike (the
// conditions of dataStart, which then sets the map and the start; only a
// failed data fit falls back on the soft resolution).
func startsFromDataFit(r *Result, opt mcr.Options) bool {
	s := r.Settings
	if s.Model == "" || !s.HardModel || s.Map != "" || !alikeOptions(opt) {
		return false
	}
	sch, err := parseScheme(s)
	if err != nil {
		return false
	}
	nModel := len(sch.Species)
	if r.Mode == mcr.Reactions {
		nModel = len(sch.Steps)
	}
	return r.Components == nModel
}

// alikeOptions reports whether every per-component option of ALS is the
// same for all components (or unset), so that starting ALS from columns in
// another order changes nothing.
func alikeOptions(opt mcr.Options) bool {
	alike := func(b []bool) bool {
		for _, v := range b {
			if v != b[0] {
				return false
			}
		}
		return true
	}
	if !alike(opt.NonNegProfiles) || !alike(opt.NonNegSpectra) || !alike(opt.Unimodal) {
		return false
	}
	for _, w := range opt.ClosureWeights {
		if w != opt.ClosureWeights[0] {
			return false
		}
	}
	for _, z := range opt.ZeroProfiles {
		if len(z) != len(opt.ZeroProfiles[0]) {
			return false
		}
		for i, v := range z {
			if v != opt.ZeroProfiles[0][i] {
				return false
			}
		}
	}
	return opt.KnownSpectra == nil && opt.ZeroSpectra == nil
}

func (kn *Kinetics) columnWord() string {
	if kn.Extents {
		return "steps"
	}
	return "species"
}

// swapCheck refits the data with the free rate constants of steps of one
// order put in every other order (each exchanged pair, and for three or
// four such steps every permutation). With free spectra the model columns
// often span the same space either way (the slow–fast ambiguity of
// consecutive steps; for independent subsystems such as A -> B -> C; D -> E
// the span {1, e^{−k1 t}, e^{−k2 t}, e^{−k3 t}} ignores the order
// altogether), so each alternative is compared with the reported fit first
// with free spectra and, when that cannot choose, with non-negative spectra
// (kinetics.NonNegativeCheck), in noise variances: with free spectra a
// difference of more than 4 is beyond noise (an F test with one degree of
// freedom; common practice); with non-negative ones each order is first
// held against what clipping noise costs (compareNonNegative). The better
// fit is reported, and the message says which fits
// better and by how much. After the first such exchange the check starts
// over from the exchanges of the order now reported, so that every
// alternative it lists is one of that order's (before, those of the
// discarded order were compared after it); a fit of the same data that ends
// at the same constants, as the one after hard–soft does the one before it,
// then finds every refit made (refit) and checks at the cost of one
// non-negative fit.
func (kn *Kinetics) swapCheck(r *Result, best *kinetics.FitResult, spectra *mat.Dense, opt kinetics.FitOptions, notes *[]string) {
	alts := kn.exchanges(best.K)
	if len(alts) == 0 {
		return
	}
	sw := &swapSearch{kn: kn, r: r, best: best, spectra: spectra, opt: opt, alts: alts}
	defer sw.noteRejected(notes)
	// The refits, and the non-negative costs the loop will ask for while
	// best stays as it is, made ahead of the loop in its order
	// (checkAhead); the costs are taken only while best stays (fresh).
	sw.ahead, sw.fresh = kn.newCheckAhead(r, best, opt, alts, true, sw.nnCostAt), true
	defer func() { sw.ahead.stop() }()
	for sw.i = 0; sw.i < len(sw.alts); sw.i++ {
		sw.check()
	}
}

// swapSearch is swapCheck's state: the reported fit (best, with its
// spectra, changed in place when an alternative fits better), the
// exchanged starts and the one being checked, the refits and costs made
// ahead, and the figures of the alternatives the data reject.
type swapSearch struct {
	kn      *Kinetics
	r       *Result
	best    *kinetics.FitResult
	spectra *mat.Dense
	opt     kinetics.FitOptions
	alts    [][]float64
	i       int
	ahead   *checkAhead
	// fresh says the costs made ahead are of the current best; restarted
	// that the check has started over from the reported order's exchanges.
	fresh, restarted bool
	// bestNN is best's non-negative cost (bestNNok: it could be made),
	// once bestNNdone.
	bestNN               kinetics.NonNegCost
	bestNNok, bestNNdone bool
	worseFree, worseNN   []string
}

// nnCostAt is the non-negative cost of rate constants k, with the initial
// concentrations c0 when they are fitted (kinetics.NonNegativeCost).
func (sw *swapSearch) nnCostAt(k, c0 []float64) (kinetics.NonNegCost, bool) {
	o := sw.opt
	if sw.kn.FitC0 {
		o.C0 = c0
	}
	if sw.kn.FitT0 {
		// The reported fit's t0, as its initial concentrations: the
		// exchange asks about the order of the constants alone.
		o.T0, o.FitT0 = sw.best.T0, false
	}
	v, err := sw.kn.nonNegativeCost(sw.r, k, o)
	return v, err == nil
}

// nnCost is the non-negative cost of k with best's initial concentrations.
func (sw *swapSearch) nnCost(k []float64) (kinetics.NonNegCost, bool) {
	return sw.nnCostAt(k, sw.best.C0)
}

// bestCost is best's non-negative cost, made ahead while it is fresh.
func (sw *swapSearch) bestCost() (kinetics.NonNegCost, bool) {
	if !sw.fresh {
		return sw.nnCost(sw.best.K)
	}
	v := sw.ahead.bestCost(func() costValue {
		v, ok := sw.nnCost(sw.best.K)
		return costValue{v, ok}
	})
	return v.v, v.ok
}

// altCost is the non-negative cost of the refit from alts[i], made ahead
// while the costs are fresh.
func (sw *swapSearch) altCost(fit *kinetics.FitResult) (kinetics.NonNegCost, bool) {
	if v, ok := sw.ahead.cost(sw.i, fit); ok && sw.fresh {
		return v.v, v.ok
	}
	return sw.nnCost(fit.K)
}

// again starts the check over, once, from the exchanges of the order now
// reported, with refits and costs made ahead for it.
func (sw *swapSearch) again() {
	sw.fresh = false
	if !sw.restarted {
		sw.restarted = true
		sw.ahead.stop()
		sw.alts, sw.i = sw.kn.exchanges(sw.best.K), -1
		sw.ahead, sw.fresh = sw.kn.newCheckAhead(sw.r, sw.best, sw.opt, sw.alts, !sw.bestNNdone, sw.nnCostAt), true
	}
}

// check refits the data from the exchanged start alts[i] and compares the
// refit with best, first with free spectra, then, when those cannot
// choose, with non-negative ones.
func (sw *swapSearch) check() {
	best := sw.best
	o := sw.opt
	o.InitialK = sw.alts[sw.i]
	alt, altSpectra, err := sw.kn.refit(sw.r, best, o, sw.ahead.job(sw.i))
	if err != nil || !(best.Sigma > 0) {
		return
	}
	if sameK(alt.K, best.K) {
		return // the exchanged start led back to the same answer
	}
	s2 := best.Sigma * best.Sigma
	free := tieToZero((alt.SSR-best.SSR)/s2, best.SSR/s2)
	switch {
	case free < -4:
		ks, old, oldSSR := sw.kn.kList(alt.K), sw.kn.kList(best.K), best.SSR
		sw.adopt(alt, altSpectra)
		best.Warnings = append(best.Warnings, fmt.Sprintf("the data fit better with k = %s than with %s, the order the resolved profiles pointed to (free spectra: residual sum of squares %.4g times lower, %.3g noise variances); the better values are reported", ks, old, oldSSR/best.SSR, -free))
		sw.bestNNdone = false
		sw.again()
	case free > 4:
		sw.worseFree = append(sw.worseFree, fmt.Sprintf("%s: residual sum of squares %.4g times higher (%.3g noise variances)", sw.kn.kList(alt.K), alt.SSR/best.SSR, free))
	default:
		sw.compareNonNegative(alt, altSpectra, free)
	}
}

// compareNonNegative compares alt, which fits as well as best with free
// spectra (free noise variances apart), with non-negative spectra.
//
// Non-negativity costs something even when the spectra are non-negative:
// where a true spectrum is zero its free estimate is noise, negative half
// the time. For A -> B -> C with k1 < k2 the swapped order has the same A
// and C spectra and s_B' = (1 − k1/k2) s_A + (k1/k2) s_B, non-negative
// too, and the same fit (the slow–fast ambiguity, Vajda & Rabitz, Chem.
// Eng. Sci. 1994; the mix from the Bateman solution), but the true order's small, noisy B spectrum has
// more zeros to clip: 112 to 164 noise variances more on a series where B
// peaks at 0.08, which a fixed threshold read as a verdict. So each order is
// first asked whether its cost is more than clipping noise gives
// (kinetics.NonNegCost.NeedsNegative, a χ² bound at 10⁻³): an order whose
// spectra need a band below zero loses to one whose do not; when neither
// does the data cannot tell them apart, and the run says so. When both
// do (a model the data do not follow), or when the bound cannot be made
// (too few spectra), the sums compare against 4 noise variances.
func (sw *swapSearch) compareNonNegative(alt *kinetics.FitResult, altSpectra *mat.Dense, free float64) {
	best := sw.best
	s2 := best.Sigma * best.Sigma
	ks := sw.kn.kList(alt.K)
	what := fmt.Sprintf("k = %s instead of %s", ks, sw.kn.kList(best.K))
	if !sw.bestNNdone {
		sw.bestNN, sw.bestNNok = sw.bestCost()
		sw.bestNNdone = true
	}
	altNN, ok := sw.kn.recallCost(alt, func() (kinetics.NonNegCost, bool) { return sw.altCost(alt) })
	if !ok || !sw.bestNNok {
		best.Warnings = append(best.Warnings, fmt.Sprintf("the data alone cannot tell the order of the rate constants: %s fits as well with free spectra (%.2g noise variances); the reported values are the ones the resolved profiles point to", what, free))
		return
	}
	nn := (alt.SSR + altNN.Cost - best.SSR - sw.bestNN.Cost) / s2
	// The cheaper order's cost per held coefficient calibrates what
	// clipping noise costs on these data (kinetics.NonNegCost.PerHeld);
	// the dearer order is asked whether it costs more than that.
	perHeld := math.Min(sw.bestNN.PerHeld(), altNN.PerHeld())
	bestNeg, okB := sw.bestNN.NeedsNegative(perHeld)
	altNeg, okA := altNN.NeedsNegative(perHeld)
	calibrated := okA && okB
	// raw: the sums decide, against 4 noise variances.
	raw := !calibrated || (bestNeg && altNeg)
	switch {
	case calibrated && !bestNeg && !altNeg:
		sw.orderTie(alt, free, altNN, perHeld)
	case calibrated && bestNeg && !altNeg, raw && nn < -4:
		old := sw.kn.kList(best.K)
		oldNN := best.SSR + sw.bestNN.Cost
		why := sw.negativeWords(sw.bestNN, altNN, old, ks, perHeld)
		sw.adopt(alt, altSpectra)
		sw.bestNN = altNN
		best.Warnings = append(best.Warnings, fmt.Sprintf("with free spectra k = %s and %s fit the data as well (%.2g noise variances), but with non-negative spectra k = %s fits better (residual sum of squares %.4g times lower, %.3g noise variances%s): it is reported; the resolved profiles pointed the other way", ks, old, free, ks, oldNN/(best.SSR+altNN.Cost), -nn, why))
		sw.again()
	case calibrated && !bestNeg && altNeg, raw && nn > 4:
		why := sw.negativeWords(altNN, sw.bestNN, ks, sw.kn.kList(best.K), perHeld)
		sw.worseNN = append(sw.worseNN, fmt.Sprintf("%s: %.2g noise variances with free spectra, with non-negative spectra a residual sum of squares %.4g times higher (%.3g noise variances%s)", ks, free, (alt.SSR+altNN.Cost)/(best.SSR+sw.bestNN.Cost), nn, why))
	default:
		best.Warnings = append(best.Warnings, fmt.Sprintf("the data alone cannot tell the order of the rate constants: %s fits as well, with free spectra (%.2g noise variances) and with non-negative ones (%.2g noise variances; slow–fast ambiguity); the reported values are the ones the resolved profiles point to", what, free, nn))
	}
}

// negativeWords says, for the order that loses (lose, its constants
// loseK) against the one that wins, what its non-negative cost is against
// what clipping noise gives ("" when the bound could not be made).
func (sw *swapSearch) negativeWords(lose, win kinetics.NonNegCost, loseK, winK string, perHeld float64) string {
	if neg, ok := lose.NeedsNegative(perHeld); !ok || !neg {
		return ""
	}
	if neg, ok := win.NeedsNegative(perHeld); !ok || neg {
		return ""
	}
	other := fmt.Sprintf("with k = %s it costs %.4g, within the %.4g clipping noise gives", winK, win.Scaled, win.NoiseLimit(perHeld))
	if win.Active == 0 {
		other = fmt.Sprintf("with k = %s the free spectra are non-negative already", winK)
	}
	return fmt.Sprintf("; with k = %s a spectrum needs a band below zero: non-negativity costs it %.4g noise variances, clipping noise alone at most %.4g (χ² bound at 10⁻³, %.3g per held point), while %s", loseK, lose.Scaled, lose.NoiseLimit(perHeld), perHeld, other)
}

// orderTie says the data cannot tell best's order of the rate constants
// from alt's: both fit alike with free spectra (free noise variances
// apart), and with non-negative spectra neither costs more than clipping
// noise gives. The reported values stay those the resolved profiles point
// to, and the warning says that nothing in the data confirms them.
func (sw *swapSearch) orderTie(alt *kinetics.FitResult, free float64, altNN kinetics.NonNegCost, perHeld float64) {
	best := sw.best
	b, a := sw.bestNN, altNN
	best.OrderAlternative = slices.Clone(alt.K)
	best.Warnings = append(best.Warnings, fmt.Sprintf("the data alone cannot tell the order of the rate constants (which step is fast): both orders fit, k = %s and k = %s, alike with free spectra (%.2g noise variances apart) and with non-negative ones (non-negativity costs them %.4g and %.4g noise variances, each within what clipping the noise of its spectra gives, at most %.4g and %.4g at %.3g per held point; slow–fast ambiguity); the reported values are the ones the resolved profiles point to, not confirmed by the data: give a known spectrum (--known-spectrum) or a rate constant (--k-fixed) to decide",
		sw.kn.kList(best.K), sw.kn.kList(alt.K), free, b.Scaled, a.Scaled, b.NoiseLimit(perHeld), a.NoiseLimit(perHeld), perHeld))
}

// adopt reports alt in best's place. alt may be kept for the next check,
// so best's warnings are a copy of its own; the figures of the rejected
// alternatives were against the old values, and the costs made ahead are
// of the old best.
func (sw *swapSearch) adopt(alt *kinetics.FitResult, altSpectra *mat.Dense) {
	*sw.best, *sw.spectra = *alt, *altSpectra
	sw.best.Warnings = append([]string(nil), alt.Warnings...)
	sw.worseFree, sw.worseNN = nil, nil
	sw.fresh = false
}

// noteRejected adds one note each for the alternatives the data reject,
// with the figures of every one, against the values finally reported.
func (sw *swapSearch) noteRejected(notes *[]string) {
	kn, best := sw.kn, sw.best
	if len(sw.worseFree) > 0 {
		*notes = append(*notes, fmt.Sprintf("kinetics: the data fit worse with the rate constants in another order than k = %s (free spectra): %s", kn.kList(best.K), strings.Join(sw.worseFree, "; ")))
	}
	if len(sw.worseNN) > 0 {
		*notes = append(*notes, fmt.Sprintf("kinetics: with free spectra the rate constants in another order fit the data as well as the reported k = %s, but worse with non-negative spectra, which decide for the reported order; the other order(s): %s", kn.kList(best.K), strings.Join(sw.worseNN, "; ")))
	}
}

// tieToZero returns d, a difference of two residual sums of squares in
// noise variances, or 0 when it is within rounding of sums of size total
// (10⁻⁹ of it: double precision carries 16 digits, the fits' sums are built
// from thousands of terms): exchanged rate constants with the same model
// column span leave the same residual, and -7.6e-11 would read as a
// negative variance.
func tieToZero(d, total float64) float64 {
	if math.Abs(d) <= 1e-9*math.Abs(total) {
		return 0
	}
	return d
}

// refitTol is how close, in standard errors of the fit being checked, an
// exchanged start must be to one refitted before for swapCheck to take that
// refit again: Levenberg–Marquardt from starts a hundredth of a standard
// error apart ends at the same minimum within its own tolerance (10⁻¹⁰
// relative), and the cost moves by about 10⁻⁴ noise variances, against a
// threshold of 4.
const refitTol = 1e-2

// refitMemo is one refit of the data from an exchanged start (swapCheck),
// kept for the next check: the fit before hard–soft (dataStart) and the one
// reported after it (fitKinetics) end at the same rate constants, so their
// checks refit from the same starts. Only on the same data matrix (r.D, not
// replaced in between) and with the same options.
type refitMemo struct {
	d          *mat.Dense
	nAside     int
	start, c0  []float64
	fit        *kinetics.FitResult
	spectra    *mat.Dense
	nn         kinetics.NonNegCost
	nnOK, done bool
}

// refit is fitData from the exchanged start o.InitialK, or the refit made
// before from a start within refitTol standard errors of best's.
// A job checkAhead made for this start (job, nil if none) is taken
// instead of fitting again.
func (kn *Kinetics) refit(r *Result, best *kinetics.FitResult, o kinetics.FitOptions, job *dataFitJob) (*kinetics.FitResult, *mat.Dense, error) {
	fitData := func() (*kinetics.FitResult, *mat.Dense, error) {
		if job != nil {
			return kn.keep(job)
		}
		return kn.fitData(r, o)
	}
	if kn.FitC0 || kn.FitT0 {
		// The non-negative cost takes the reported fit's initial
		// concentrations and t0, which move with it: refit every time.
		return fitData()
	}
	if m := kn.recalled(r, best, o); m != nil {
		return m.fit, m.spectra, nil
	}
	fit, spectra, err := fitData()
	if err != nil {
		return nil, nil, err
	}
	kn.refits = append(kn.refits, &refitMemo{d: r.D, nAside: len(r.SetAside), start: o.InitialK, c0: o.C0, fit: fit, spectra: spectra})
	return fit, spectra, nil
}

// recalled is the refit kept from a start within refitTol standard errors
// of o.InitialK on the same data, or nil.
func (kn *Kinetics) recalled(r *Result, best *kinetics.FitResult, o kinetics.FitOptions) *refitMemo {
	for _, m := range kn.refits {
		if m.d == r.D && m.nAside == len(r.SetAside) && sameC0(m.c0, o.C0) && closeStart(m.start, o.InitialK, best.KStdErr) {
			return m
		}
	}
	return nil
}

// costValue is a non-negative cost (kinetics.NonNegativeCost) and whether it
// could be computed.
type costValue struct {
	v  kinetics.NonNegCost
	ok bool
}

func nearEarlier(jobs []*dataFitJob, start, se []float64) bool {
	for _, j := range jobs {
		if j != nil && closeStart(j.opt.InitialK, start, se) {
			return true
		}
	}
	return false
}

// recallCost returns the non-negative cost of a refit's rate constants,
// computed once per refit kept by refit.
func (kn *Kinetics) recallCost(fit *kinetics.FitResult, cost func() (kinetics.NonNegCost, bool)) (kinetics.NonNegCost, bool) {
	for _, m := range kn.refits {
		if m.fit == fit {
			if !m.done {
				m.nn, m.nnOK = cost()
				m.done = true
			}
			return m.nn, m.nnOK
		}
	}
	return cost()
}

func closeStart(a, b, se []float64) bool {
	if len(a) != len(b) || len(se) != len(a) {
		return false
	}
	for j := range a {
		if !(math.Abs(a[j]-b[j]) <= refitTol*se[j]) && a[j] != b[j] {
			return false
		}
	}
	return true
}

func sameC0(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// exchanges lists the other orders of the free rate constants among steps
// of equal order: with two to four such steps every permutation (at most 23
// alternatives), with more every exchanged pair; k of steps with equal
// values (within 1 %) are not told apart.
func (kn *Kinetics) exchanges(k []float64) [][]float64 {
	byOrder := map[int][]int{}
	var orders []int
	for j, st := range kn.Scheme.Steps {
		if kn.KFixed[j] {
			continue
		}
		if _, ok := byOrder[st.Order]; !ok {
			orders = append(orders, st.Order)
		}
		byOrder[st.Order] = append(byOrder[st.Order], j)
	}
	var out [][]float64
	seen := map[string]bool{kFingerprint(k): true}
	for _, ord := range orders {
		steps := byOrder[ord]
		if len(steps) < 2 {
			continue
		}
		if len(steps) > 4 {
			// Every permutation would be 119 or more refits: each
			// exchanged pair instead (10 for five steps).
			for a := range steps {
				for b := a + 1; b < len(steps); b++ {
					alt := append([]float64(nil), k...)
					alt[steps[a]], alt[steps[b]] = k[steps[b]], k[steps[a]]
					if f := kFingerprint(alt); !seen[f] {
						seen[f] = true
						out = append(out, alt)
					}
				}
			}
			continue
		}
		perm := make([]int, len(steps))
		for i := range perm {
			perm[i] = i
		}
		for nextPermutation(perm) {
			alt := append([]float64(nil), k...)
			for a, b := range perm {
				alt[steps[a]] = k[steps[b]]
			}
			if f := kFingerprint(alt); !seen[f] {
				seen[f] = true
				out = append(out, alt)
			}
		}
	}
	return out
}

// kFingerprint identifies a set of rate constants to 1 %.
func kFingerprint(k []float64) string {
	var b strings.Builder
	for _, v := range k {
		fmt.Fprintf(&b, "%.0f,", math.Round(math.Log(v)*100))
	}
	return b.String()
}

// nextPermutation advances p to the next permutation in lexicographic
// order; false after the last.
func nextPermutation(p []int) bool {
	i := len(p) - 2
	for i >= 0 && p[i] >= p[i+1] {
		i--
	}
	if i < 0 {
		return false
	}
	j := len(p) - 1
	for p[j] <= p[i] {
		j--
	}
	p[i], p[j] = p[j], p[i]
	for a, b := i+1, len(p)-1; a < b; a, b = a+1, b-1 {
		p[a], p[b] = p[b], p[a]
	}
	return true
}

func sameK(a, b []float64) bool {
	for l := range a {
		if math.Abs(a[l]-b[l]) > 0.01*b[l] {
			return false
		}
	}
	return true
}

func (kn *Kinetics) kList(k []float64) string {
	var ks []string
	for l, st := range kn.Scheme.Steps {
		ks = append(ks, fmt.Sprintf("%s %.4g %s", st.Text, k[l], kn.rateUnit(st.Order)))
	}
	return "(" + strings.Join(ks, ", ") + ")"
}

// dataMisfitWarning says that the data fit leaves ratio times the noise, with
// the verdict on it (output.FitVerdict), and names a wrong start time among the causes when the misfit lies mostly
// around it (t0Misfit).
func dataMisfitWarning(ratio float64, verdict string, times, rowSSR []float64, t0 float64, tu shownTime) string {
	causes := "a missing step or species, wrong starting concentrations, drift?"
	if share, rows, after, ok := t0Misfit(times, rowSSR, t0); ok {
		causes = fmt.Sprintf("a missing step or species, wrong starting concentrations, drift, or a start time t0 = %s %s that is not when the reaction began? %.0f %% of the misfit lies in the spectra up to t0 and the first %d after it, %.0f %% of the spectra: give the time the reactants were mixed with --t0", tu.T(t0), tu.Unit, 100*share, after, 100*rows)
	}
	return dataMisfitWords(ratio, verdict, causes)
}

// dataMisfitWords is the data fit's misfit warning with its causes.
func dataMisfitWords(ratio float64, verdict, causes string) string {
	return fmt.Sprintf("the model leaves a residual %.3g times the noise: %s (%s); the standard errors include that misfit but the rate constants may be biased", ratio, verdict, causes)
}

// t0Misfit finds a data fit's misfit concentrated where a wrong t0 puts
// it. For a first-order scheme with free spectra the model columns after
// t0 span the same space whatever t0 is (sums of e^{−λ(t − t0)}: a shift
// only rescales each exponential), so a wrong t0 shows only where the model
// ties the spectra to c0: those up to t0, which must equal its value at
// t0, and the first after it, which the fit bends to meet them (other
// orders change shape with the shift too, most at the start, where the
// concentrations change fastest). It
// takes each spectrum's excess over the median spectrum's sum of squares
// (the typical spectrum: noise and a misfit shared by the whole run) and
// reports the share of the excess in the spectra up to t0 and the first
// tenth (at least 3) after it, with the share of spectra they are; ok when
// they hold at least half of it and at least three times their share of
// the spectra. On invented A -> B -> C data with t0 given 15 s early
// (spectra every 30 s) that window held 94 % of the excess in 17 % of the
// spectra; the urethane series at catalyst 0.01, whose misfit is spread,
// 26 % in 12 % (the threshold is this program's choice).
func t0Misfit(times, rowSSR []float64, t0 float64) (share, rows float64, after int, ok bool) {
	n := len(rowSSR)
	if n != len(times) || n < 10 {
		return 0, 0, 0, false
	}
	sorted := slices.Clone(rowSSR)
	slices.Sort(sorted)
	med := sorted[n/2]
	if n%2 == 0 {
		med = (sorted[n/2-1] + sorted[n/2]) / 2
	}
	post := 0
	for _, t := range times {
		if t > t0 {
			post++
		}
	}
	after = max(3, (post+9)/10)
	var in, total float64
	inRows, seen := 0, 0
	for i, t := range times {
		e := math.Max(rowSSR[i]-med, 0)
		total += e
		if t > t0 {
			seen++
			if seen > after {
				continue
			}
		}
		in += e
		inRows++
	}
	if !(total > 0) || post == 0 {
		return 0, 0, 0, false
	}
	share, rows = in/total, float64(inRows)/float64(n)
	return share, rows, min(after, post), share >= 0.5 && share >= 3*rows
}

// dataFitToNoise is the data fit's residual standard deviation over the
// noise: Sigma itself when the fit was weighted (its units are the noise),
// else over the noise the rank step estimated. 0 when unknown. In reactions
// mode the model's extents absorb the reference's common noise much as the
// resolution's do, so the weighted figure is measured against the share of
// the noise the resolution leaves (referenceDOF), as residual_to_noise is.
func dataFitToNoise(r *Result, f *kinetics.FitResult) float64 {
	if f.Weighted && r.Weights != nil { // weights of ones and zeros (set-aside rows only) keep the data's units
		return f.Sigma * referenceScale(r)
	}
	if r.Rank == nil || !(r.Rank.Sigma > 0) {
		return 0
	}
	return f.Sigma / r.Rank.Sigma
}

func oneLineText(s string) string { return strings.Join(strings.Fields(s), " ") }

// finite keeps NaN and ±Inf out of the outputs.
func finite(v float64) float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0
	}
	return v
}

// rateUnits are the steps' units in order (rateUnit).
func (kn *Kinetics) rateUnits() []string {
	u := make([]string, len(kn.Scheme.Steps))
	for j, st := range kn.Scheme.Steps {
		u[j] = kn.rateUnit(st.Order)
	}
	return u
}

// rateUnit states a step's unit: s^-1 times (concentration unit)^-(order-1).
func (kn *Kinetics) rateUnit(order int) string {
	switch order {
	case 1:
		return "s^-1"
	case 2:
		return "(" + kn.UnitName + ")^-1 s^-1"
	}
	return fmt.Sprintf("(%s)^-%d s^-1", kn.UnitName, order-1)
}

func (kn *Kinetics) fitJSON(f *KineticFit) KineticFitJSON {
	fr := f.Fit
	out := KineticFitJSON{Method: f.Method, RMS: round(finite(fr.RMS)), Sigma: round(finite(fr.Sigma)),
		DegreesOfFreedom: fr.DegreesOfFreedom, Iterations: fr.Iterations, Converged: fr.Converged, Stiff: fr.Stiff,
		Warnings: nonNil(fr.Warnings)}
	for j, st := range kn.Scheme.Steps {
		rc := RateConstant{Step: st.Text, K: round(finite(fr.K[j])), StdErr: round(finite(fr.KStdErr[j])),
			HalfLife: round(finite(fr.HalfLife[j])), HalfLifeNote: fr.HalfLifeNote[j], Unit: kn.rateUnit(st.Order), Fixed: kn.KFixed[j],
			NotDetermined: !kn.KFixed[j] && (finite(fr.KStdErr[j]) != fr.KStdErr[j] || notDetermined(fr, j))}
		out.RateConstants = append(out.RateConstants, rc)
		row := make([]float64, len(kn.Scheme.Steps))
		for l := range row {
			row[l] = round(finite(fr.Corr.At(j, l)))
		}
		out.Correlation = append(out.Correlation, row)
	}
	for i, name := range kn.Scheme.Species {
		out.InitialConcentrations = append(out.InitialConcentrations, InitialConcentration{Species: name,
			C0: round(finite(fr.C0[i])), StdErr: round(finite(fr.C0StdErr[i])), Fitted: kn.FitC0 && kn.C0[i] > 0 && !(fr.C0Held != nil && fr.C0Held[i])})
	}
	for _, a := range fr.Amplitudes {
		out.Amplitudes = append(out.Amplitudes, round(finite(a)))
	}
	out.DeterminedSum = kn.sumJSON(fr)
	for _, k := range fr.OrderAlternative {
		out.OrderAlternative = append(out.OrderAlternative, round(finite(k)))
	}
	out.T0Fit = t0FitJSON(fr)
	out.OneNoiseLevel = kn.oneLevelJSON(f.OneLevel, f.OneLevelSum, determinedSum(fr), f.EachWeighted != nil)
	out.EachSpectrumWeighted = kn.eachWeightedJSON(f.EachWeighted, f.EachWeightedSum, determinedSum(fr))
	return out
}

// sumJSON is the fit's determined sum of constants, nil when there is none.
func (kn *Kinetics) sumJSON(fr *kinetics.FitResult) *DeterminedSum {
	terms := determinedSum(fr)
	if terms == "" {
		return nil
	}
	d := &DeterminedSum{Terms: terms, K: round(finite(fr.SumK)), StdErr: round(finite(fr.SumKStdErr)),
		Unit: kn.rateUnit(kn.Scheme.Steps[fr.SumSteps[0]].Order)}
	for _, j := range fr.SumSteps {
		d.Steps = append(d.Steps, kn.Scheme.Steps[j].Text)
	}
	return d
}

// notDetermined says the fit marked step j's constant as not determined by
// the data (kinetics.FitResult.KNotDetermined).
func notDetermined(f *kinetics.FitResult, j int) bool {
	return f.KNotDetermined != nil && j < len(f.KNotDetermined) && f.KNotDetermined[j]
}

// determinedSum names the sum of constants the data determine when they do
// not determine its terms ("k1 + k2"), "" when there is none.
func determinedSum(f *kinetics.FitResult) string {
	var names []string
	for _, j := range f.SumSteps {
		names = append(names, fmt.Sprintf("k%d", j+1))
	}
	return strings.Join(names, " + ")
}

// mapNames names the model column of each mapped component.
func (kn *Kinetics) mapName(j int) string {
	if kn.Extents {
		return kn.Scheme.Steps[kn.Columns[j]].Text
	}
	return kn.Scheme.Species[kn.Columns[j]]
}

// kineticsSummary fills summary.json's "kinetics".
func kineticsSummary(r *Result) *KineticsJSON {
	kn := r.Kinetics
	rep := kn.Reported()
	if rep == nil {
		return nil
	}
	main := kn.fitJSON(rep)
	out := &KineticsJSON{
		Model: kn.Scheme.Text, RateConstants: main.RateConstants, Method: rep.Method,
		RateLaw:           "mass action, IUPAC rate of reaction r = k Π c^ν: 2 A -> P has r = k[A]^2 and d[A]/dt = -2k[A]^2",
		Fitted:            "concentrations",
		ConcentrationUnit: kn.Unit, T0: round(kn.T0), MapSource: kn.MapSource,
		Correlation: main.Correlation, Stiff: rep.Fit.Stiff, DeterminedSum: main.DeterminedSum, T0Fit: main.T0Fit,
	}
	if kn.Extents {
		out.Fitted = "extents"
	}
	for j, comp := range kn.Components {
		out.Map = append(out.Map, KineticMapJSON{Name: kn.mapName(j), Component: comp + 1})
	}
	for _, f := range kn.Fits {
		out.Fits = append(out.Fits, kn.fitJSON(f))
	}
	return out
}

// kineticsTable is kinetics.csv: time, then per model column (species, or
// step with extents, in the scheme's order) the observed profile (mapped
// columns only), the profile fit and the data fit. With free amplitudes the
// data fit's column is put on the observed profile's scale by one
// least-squares factor so the two can be compared.
func kineticsTable(r *Result) (output.Table, error) {
	kn := r.Kinetics
	prof := kn.Fits[0]
	data := kn.Find("data")
	n := len(r.Times)
	nModel := len(kn.Scheme.Species)
	if kn.Extents {
		nModel = len(kn.Scheme.Steps)
	}
	name := func(col int) string {
		if kn.Extents {
			return fmt.Sprintf("extent_%d", col+1)
		}
		return kn.Scheme.Species[col]
	}
	mapped := make([]int, nModel)
	for i := range mapped {
		mapped[i] = -1
	}
	for j, col := range kn.Columns {
		mapped[col] = j
	}
	multi := len(r.Experiments) > 1
	t := output.Table{Header: []string{"time"}}
	if multi {
		t.Header = []string{"experiment", "time"}
	}
	type column func(i int) float64
	var cols []column
	for col := 0; col < nModel; col++ {
		col := col
		j := mapped[col]
		if j >= 0 {
			t.Header = append(t.Header, name(col)+"_observed", name(col)+"_fitted")
			cols = append(cols, func(i int) float64 { return prof.Observed.At(i, j) },
				func(i int) float64 { return prof.Fit.Fitted.At(i, j) })
		} else {
			t.Header = append(t.Header, name(col)+"_fitted")
			cols = append(cols, func(i int) float64 { return prof.Fit.Model.At(i, col) })
		}
		if data != nil {
			scale := 1.0
			if j >= 0 && kn.Amplitudes {
				var num, den float64
				for i := 0; i < n; i++ {
					m := data.Fit.Model.At(i, col)
					num += m * prof.Observed.At(i, j)
					den += m * m
				}
				if den > 0 {
					scale = num / den
				}
			}
			t.Header = append(t.Header, name(col)+"_data_fit")
			cols = append(cols, func(i int) float64 { return scale * data.Fit.Model.At(i, col) })
		}
	}
	for i, tm := range r.Times {
		var row []string
		if multi {
			row = append(row, strconv.Itoa(r.ExpOfRow[i]+1))
		}
		row = append(row, output.Float(tm))
		for _, c := range cols {
			v := c(i)
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return t, errors.New("kinetics.csv: a fitted value is not finite")
			}
			row = append(row, output.Float(v))
		}
		t.Rows = append(t.Rows, row)
	}
	return t, nil
}

// printKinetics adds the rate constants to the human summary.
func printKinetics(r *Result, w io.Writer) {
	kn := r.Kinetics
	rep := kn.Reported()
	if rep == nil {
		return
	}
	var m []string
	for j, comp := range kn.Components {
		m = append(m, fmt.Sprintf("%s=%d", kn.mapName(j), comp+1))
	}
	what := "concentrations"
	if kn.Extents {
		what = "extents"
	}
	tu := shownTimeUnit(r.Settings)
	t0 := "t0 ="
	if kn.FitT0 {
		t0 = "t0 fitted from"
	}
	fmt.Fprintf(w, "kinetics       %s (%s), %s %s %s, map %s\n", kn.Scheme.Text, what, t0, tu.T(kn.T0), tu.Unit, strings.Join(m, ", "))
	for _, f := range kn.Fits {
		mark := " "
		if f == rep {
			mark = "*"
		}
		fmt.Fprintf(w, "  %s %-13s", mark, f.Method)
		for j, st := range kn.Scheme.Steps {
			if j > 0 {
				fmt.Fprintf(w, "\n    %-13s", "")
			}
			k, unit := tu.Rate(f.Fit.K[j], kn.rateUnit(st.Order))
			se, _ := tu.Rate(f.Fit.KStdErr[j], "")
			if notDetermined(f.Fit, j) {
				fmt.Fprintf(w, " %-10s k not determined (the fit ended at %.4g %s)", st.Text, k, unit)
				continue
			} else if finite(se) == se {
				fmt.Fprintf(w, " %-10s k = %.4g ± %.2g %s", st.Text, k, se, unit)
			} else {
				fmt.Fprintf(w, " %-10s k = %.4g %s, not determined (its standard error is not finite)", st.Text, k, unit)
			}
			if hl := f.Fit.HalfLife[j]; hl > 0 {
				fmt.Fprintf(w, ", t½ = %.4g %s", hl/tu.Div, tu.Unit)
			}
		}
		if sum := determinedSum(f.Fit); sum != "" {
			k, unit := tu.Rate(f.Fit.SumK, kn.rateUnit(kn.Scheme.Steps[f.Fit.SumSteps[0]].Order))
			se, _ := tu.Rate(f.Fit.SumKStdErr, "")
			fmt.Fprintf(w, "\n    %-13s %-10s k = %.4g ± %.2g %s, determined", "", sum, k, se, unit)
		}
		printT0Fit(f.Fit, tu, w)
		kn.printEachWeighted(f, tu, w)
		fmt.Fprintln(w)
	}
	fmt.Fprintf(w, "    (± one standard error; * the fit reported in summary.json)\n")
	if kn.Amplitudes {
		for _, st := range kn.Scheme.Steps {
			if st.Order > 1 {
				fmt.Fprintf(w, "  (%s)\n", shownTimeUnit(r.Settings).Text(kn.Unit))
				break
			}
		}
	}
}

// printDemoKinetics sets the demo's rate constants beside the truth it was
// made from, with the deviation in standard errors.
func printDemoKinetics(r *Result, truth []float64, truthT0 float64, w io.Writer) {
	kn := r.Kinetics
	if kn == nil || len(kn.Fits) == 0 {
		return
	}
	fmt.Fprintf(w, "rate constants of %s (t0 = %g s) vs truth:\n", kn.Scheme.Text, kn.T0)
	for _, f := range kn.Fits {
		for j, st := range kn.Scheme.Steps {
			if j >= len(truth) {
				break
			}
			dev := "n/a"
			if se := f.Fit.KStdErr[j]; se > 0 {
				dev = fmt.Sprintf("%+.1f", (f.Fit.K[j]-truth[j])/se)
			}
			fmt.Fprintf(w, "  %-13s %-8s k = %.6g ± %.2g /s   truth %g /s   (%s standard errors)\n", f.Method, st.Text, f.Fit.K[j], f.Fit.KStdErr[j], truth[j], dev)
		}
		printDemoT0(f, truthT0, w)
	}
}

// projectOutShapesWeighted is projectOutShapes in the metric of the column
// weights b (nil: projectOutShapes): D (I − BP(PᵀBP)⁻¹Pᵀ), B = diag(b),
// each spectrum without its weighted least-squares fit by the shapes (a row
// d has coefficients (PᵀBP)⁻¹PᵀB dᵀ, so its fit is d BP(PᵀBP)⁻¹Pᵀ; the
// other order, P(PᵀBP)⁻¹PᵀB, is the projector for columns). A fit
// weighted by a_i b_j fits each spectrum's baseline coefficients with the
// weights b_j (a_i is one factor per spectrum), so only this projection
// gives the joint weighted fit's rate constants (Golub & Pereyra 1973 in
// that metric). The plain one takes the baseline mostly from the noisiest
// channels (a detector edge, a strong band: weights 100× lower) and spreads
// their noise over the quiet ones, where the weights are high: with a cubic
// baseline it raised the data fit's residual to 1.55× the noise on white
// noise and 3.2× on noise correlated along the axis, whose smooth part a
// polynomial collects.
func projectOutShapesWeighted(d, p *mat.Dense, col []float64) *mat.Dense {
	if col == nil {
		return projectOutShapes(d, p)
	}
	m, c := p.Dims()
	// PᵀBP is c × c (c ≤ 9) and well conditioned for Legendre shapes:
	// Cholesky on the small Gram matrix, as the normal equations of a
	// weighted polynomial fit are usually solved.
	gram := mat.NewSymDense(c, nil)
	for a := 0; a < c; a++ {
		for b := a; b < c; b++ {
			var s float64
			for j := 0; j < m; j++ {
				s += p.At(j, a) * col[j] * p.At(j, b)
			}
			gram.SetSym(a, b, s)
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(gram) {
		return projectOutShapes(d, p)
	}
	n, _ := d.Dims()
	out := mat.DenseCopyOf(d)
	rhs, beta := mat.NewVecDense(c, nil), mat.NewVecDense(c, nil)
	for i := 0; i < n; i++ {
		row := out.RawRowView(i)
		for a := 0; a < c; a++ {
			var s float64
			for j, v := range row {
				s += p.At(j, a) * col[j] * v
			}
			rhs.SetVec(a, s)
		}
		if err := ch.SolveVecTo(beta, rhs); err != nil {
			return projectOutShapes(d, p)
		}
		for j := range row {
			var f float64
			for a := 0; a < c; a++ {
				f += p.At(j, a) * beta.AtVec(a)
			}
			row[j] -= f
		}
	}
	return out
}

// projectOutShapes returns D (I − P(PᵀP)⁻¹Pᵀ): each spectrum without its
// least-squares component along the axis shapes P (m × b, the baseline's
// Legendre polynomials). With a baseline D ≈ C Sᵀ + B Pᵀ whose
// coefficients B are free per spectrum and spectra S free, fitting C(k)
// to D (I − P P⁺) gives the same rate constants as fitting C(k) Sᵀ + B Pᵀ
// to D jointly (separable least squares, Golub & Pereyra 1973), and does
// not depend on the baseline ALS subtracted (its rows lie in span P).
func projectOutShapes(d, p *mat.Dense) *mat.Dense {
	var q mat.Dense
	q.CloneFrom(p)
	orthonormalizeCols(&q)
	var dq, out mat.Dense
	dq.Mul(d, &q)       // n × b
	out.Mul(&dq, q.T()) // n × m
	out.Sub(d, &out)
	return &out
}

// orthonormalizeCols replaces the columns of a by an orthonormal basis of
// their span (modified Gram–Schmidt, twice).
func orthonormalizeCols(a *mat.Dense) {
	_, c := a.Dims()
	cols := make([][]float64, c)
	for j := range cols {
		cols[j] = mat.Col(nil, j, a)
	}
	for j := range cols {
		for pass := 0; pass < 2; pass++ {
			for l := 0; l < j; l++ {
				var dot float64
				for i, v := range cols[l] {
					dot += v * cols[j][i]
				}
				for i, v := range cols[l] {
					cols[j][i] -= dot * v
				}
			}
		}
		var nrm float64
		for _, v := range cols[j] {
			nrm += v * v
		}
		if nrm = math.Sqrt(nrm); nrm > 0 {
			for i := range cols[j] {
				cols[j][i] /= nrm
			}
		}
		a.SetCol(j, cols[j])
	}
}

// unmapped lists the model's species (or steps, with extents) that the
// columns cols give no component: the fit takes them as spectrally silent.
func unmapped(sch *kinetics.Scheme, extents bool, cols []int) []string {
	names := sch.Species
	if extents {
		names = nil
		for _, st := range sch.Steps {
			names = append(names, st.Text)
		}
	}
	used := map[int]bool{}
	for _, c := range cols {
		used[c] = true
	}
	var out []string
	for i, nm := range names {
		if !used[i] {
			out = append(out, nm)
		}
	}
	return out
}

// leftWords are the words of the note on species (or steps) left without a
// component, for n of them.
type leftWords struct{ has, it, its, moves, silent string }

func leftWordsFor(n int, extents bool) leftWords {
	w := leftWords{"has", "it", "its", "its amount moves", "it does not absorb"}
	if n > 1 {
		w = leftWords{"have", "them", "their", "their amounts move", "they do not absorb"}
	}
	if extents { // steps: their extents, their reactions' spectra
		w.moves = strings.Replace(w.moves, "amount", "extent", 1)
		w.silent = strings.Replace(w.silent, "absorb", "change the spectrum", 1)
	}
	return w
}
