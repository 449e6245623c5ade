// Package pipeline runs one bandsolve analysis: read and assemble the data
// (io/spectra), count components (svd), resolve them (mcr) and write the
// results (io/output). Settings is the single description of an analysis,
// shared by the command-line flags, command files and the as-run record, so
// that every option can be expressed in each of them.
package pipeline

import (
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"github.com/bandsolve/bandsolve/io/cmdfile"
	"github.com/bandsolve/bandsolve/io/spectra"
)

// Settings are every option of an analysis, with the defaults of
// NewSettings. Paths are as given (relative to the working directory, or to
// the command file's folder once a command file has resolved them).
type Settings struct {
	// Dir is the folder relative paths are taken from ("" = working
	// directory); a command file's folder, or the demo's output folder.
	Dir string

	Data          []string
	Kind          string
	Blanks        []string // one for every experiment, or one per experiment in --data order
	Reference     string
	Pre           int
	Times         string
	TimesFromName bool
	TimeUnit      string
	Regions       []string
	Excludes      []string
	Resample      bool
	Baseline      string
	KeepOutliers  bool
	Drops         []string
	Vapour        []string // --vapour: line spectra subtracted from every spectrum
	Components    string
	Closure       string
	Model         string
	T0            string
	Map           string
	HardModel     bool
	KineticFit    string
	C0            string
	FitC0         bool
	FitT0         bool
	KStart        string
	KFixed        string
	Bands         string // --uniqueness (named --bands before 1.0)
	Replicates    int
	Seed          uint64
	Init          string
	EFAWindows    string
	Weights       string
	Alpha         float64
	MaxIter       int
	Tolerance     float64
	Report        string
	Out           string
	Force         bool
	Quiet         bool
	JSON          bool

	// Per-component constraints (see constraints.go, docs/constraints.md).
	NonNeg            []string
	Unimodal          []string
	UnimodalTolerance float64
	KnownSpectra      []string
	ZeroWindows       []string
	ZeroRegions       []string
	ClosureWeights    string
	Checks            string

	renamedUsed []string // old option names given (see Renamed)
}

// NewSettings returns the defaults.
func NewSettings() *Settings {
	return &Settings{
		Kind:       "",
		Reference:  "first",
		TimeUnit:   timeUnitAuto,
		Components: "auto",
		Baseline:   "auto",
		Closure:    "1",
		KineticFit: "data",
		Bands:      "on",
		Checks:     "on",
		Seed:       1,
		Init:       "auto",
		EFAWindows: "off",
		Weights:    "noise",
		Alpha:      0.05,
		MaxIter:    1000,
		Tolerance:  1e-8,
		Report:     "on",
	}
}

// Option describes one setting for flags, command files and records.
type Option struct {
	Name  string // flag name without dashes, also the command-file keyword
	Usage string
	Value string // placeholder shown in help, "" for switches
	Multi bool   // may be given several times
	// Record is false for options that do not change results (they are
	// left out of the as-run record's analysis part).
	Record bool
	// onlyWhenOn: a switch added after records were in use, written in
	// the record only when on, so that the records of runs without it keep
	// their bytes (and earlier folders still verify).
	onlyWhenOn bool
	set        func(s *Settings, v string) error
	get        func(s *Settings) []string
}

// MaxReplicates bounds --replicates: ten times the about 1000 replicates
// that percentile intervals at the 95 % level need (Efron & Tibshirani,
// An Introduction to the Bootstrap, 1993, §13.3, from memory). Each
// replicate is a whole resolution and its profiles and spectra are kept
// until the percentiles are taken, so 10⁸ replicates ran for ever.
const MaxReplicates = 10000

// Options lists every setting in the order they are documented and recorded.
func Options() []Option { return options }

// Renamed maps each old option name to the name that replaced it. The old
// names keep working, on the command line and in command files, until 1.0
// (CONTRACT.md); the as-run record writes the new name.
var Renamed = map[string]string{"bands": "uniqueness"}

// RenameNote is the one line printed when an old name is used.
func RenameNote(old string) string {
	return fmt.Sprintf("note: --%s is now --%s (same values; the old name works until 1.0)", old, Renamed[old])
}

// Lookup finds an option by name (or by its name before a rename).
func Lookup(name string) (Option, bool) {
	if n, ok := Renamed[name]; ok {
		name = n
	}
	for _, o := range options {
		if o.Name == name {
			return o, true
		}
	}
	return Option{}, false
}

// Set assigns one option from its text form.
func (s *Settings) Set(name, value string) error {
	o, ok := Lookup(name)
	if !ok {
		return fmt.Errorf("unknown setting %q%s", name, suggest(name))
	}
	if err := o.set(s, value); err != nil {
		return &shortened{msg: name + ": " + shortenIn(err.Error(), shownValues(name, value)...), err: err}
	}
	if _, old := Renamed[name]; old && !slices.Contains(s.renamedUsed, name) {
		s.renamedUsed = append(s.renamedUsed, name)
	}
	return nil
}

// RenamedUsed lists the old option names this run was given, for a note
// on the terminal (never in the results: a rerun from the record uses the
// new names and must give the same bytes).
func (s *Settings) RenamedUsed() []string { return s.renamedUsed }

// Get returns an option's values in text form (several for Multi options).
func (s *Settings) Get(name string) []string {
	o, ok := Lookup(name)
	if !ok {
		return nil
	}
	return o.get(s)
}

// IsSwitch says whether an option takes no value on the command line.
func (o Option) IsSwitch() bool { return o.Value == "" }

func suggest(name string) string {
	if best := Suggest(name); best != "" {
		return fmt.Sprintf(" (did you mean %q?)", best)
	}
	return ""
}

// Suggest returns the option name nearest to a misspelt one, or of a
// command's own flags given in extra (run's --shard, --jobs, --skip-done),
// "" if none is close. Swapped letters count as one edit (cmdfile.Distance),
// as for a command file's keywords (docs/command-files.md).
func Suggest(name string, extra ...string) string {
	if len(name) > 64 {
		return "" // nothing is near it, and the distance costs its length
	}
	best, bestD := "", 4
	try := func(c string) {
		if d := cmdfile.Distance(name, c); d < bestD {
			best, bestD = c, d
		}
	}
	for _, o := range options {
		try(o.Name)
	}
	for _, c := range extra {
		try(c)
	}
	return best
}

func str(f func(s *Settings) *string) (func(*Settings, string) error, func(*Settings) []string) {
	return func(s *Settings, v string) error { *f(s) = v; return nil },
		func(s *Settings) []string { return []string{*f(s)} }
}

func list(f func(s *Settings) *[]string) (func(*Settings, string) error, func(*Settings) []string) {
	return func(s *Settings, v string) error { *f(s) = append(*f(s), v); return nil },
		func(s *Settings) []string { return append([]string(nil), *f(s)...) }
}

func boolean(f func(s *Settings) *bool) (func(*Settings, string) error, func(*Settings) []string) {
	return func(s *Settings, v string) error {
			switch strings.ToLower(v) {
			case "", "true", "on", "yes":
				*f(s) = true
			case "false", "off", "no":
				*f(s) = false
			default:
				return fmt.Errorf("%q: use on or off", v)
			}
			return nil
		}, func(s *Settings) []string {
			if *f(s) {
				return []string{"on"}
			}
			return []string{"off"}
		}
}

func integer(f func(s *Settings) *int, lo int) (func(*Settings, string) error, func(*Settings) []string) {
	return func(s *Settings, v string) error {
		n, err := strconv.Atoi(strings.TrimSpace(v))
		if err != nil || n < lo {
			return fmt.Errorf("%q: want a whole number ≥ %d", v, lo)
		}
		*f(s) = n
		return nil
	}, func(s *Settings) []string { return []string{strconv.Itoa(*f(s))} }
}

// parseNumber reads a number of a setting: strconv.ParseFloat's decimal
// syntax, finite only. ParseFloat also takes "NaN", "Inf" and "infinity",
// and gives ±Inf for a number past the float64 range (1e999); none of them
// is a value any setting can mean, and once accepted they reached the
// results (t0 NaN in the record, a region -inf:inf). The error says which
// fault it was, for the caller to put beside what it wants.
func parseNumber(v string) (float64, error) {
	x, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
	switch {
	case math.IsNaN(x) || math.IsInf(x, 0):
		return 0, errNotFinite
	case err != nil:
		return 0, errNotANumber
	}
	return x, nil
}

var (
	errNotFinite  = errors.New("not a finite number")
	errNotANumber = errors.New("not a number")
)

// numberFault is the start of a message refusing v, a setting's value,
// for its number cell (v itself, or one of a list): v quoted, and why when
// cell is not finite (NaN, Inf, or beyond ±1.8e308), a fault a plain
// "want …" would hide.
func numberFault(v, cell string, err error) string {
	switch {
	case !errors.Is(err, errNotFinite):
		return quote(v) + ":"
	case strings.TrimSpace(cell) == strings.TrimSpace(v):
		return quote(v) + ": not a finite number;"
	}
	return fmt.Sprintf("%s: %s is not a finite number;", quote(v), quote(strings.TrimSpace(cell)))
}

// finiteNote is "not a finite number; " when err says so, else "".
func finiteNote(err error) string {
	if errors.Is(err, errNotFinite) {
		return "not a finite number; "
	}
	return ""
}

// quote shows a value a setting was given in a message: quoted, with
// control characters escaped, cut to the first 80 characters.
func quote(v string) string { return cmdfile.Show(v) }

// shortenValues cuts, in err's message, every value of s longer than
// cmdfile.MaxShown characters, and every part of one between commas,
// semicolons and equals signs (a --k-start pair, a --model step), to its
// first MaxShown characters and "…", quoted or not as the message has it:
// the rule of a command file's messages (cmdfile.File.Apply) for every
// message of a run, so that a hostile 1 MB value never makes a 1 MB error
// line. The error keeps its kind (errors.As still finds a *UsageError).
func shortenValues(s *Settings, err error) error {
	if err == nil {
		return nil
	}
	msg := err.Error()
	short := msg
	for _, o := range options {
		for _, v := range o.get(s) {
			short = shortenIn(short, shownValues(o.Name, v)...)
		}
	}
	if short == msg {
		return err
	}
	return &shortened{msg: short, err: err}
}

// maxPathBytes is the longest path a system opens (PATH_MAX on Linux):
// a path no longer than it is shown whole, since the file it names must be
// found from the message; a longer one names no file and is cut as other
// values are.
const maxPathBytes = 4096

// shownValues is value, to be cut in messages, unless it is a path short
// enough to name a file.
func shownValues(name, value string) []string {
	if len(value) <= maxPathBytes && IsPath(name, value) {
		return nil
	}
	return []string{value}
}

// shortenIn cuts in msg each of values longer than cmdfile.MaxShown
// characters, and each such part of one between commas, semicolons and
// equals signs.
func shortenIn(msg string, values ...string) string {
	for _, v := range values {
		if len(v) <= cmdfile.MaxShown {
			continue
		}
		msg = cmdfile.ShortenIn(msg, v)
		for _, p := range strings.FieldsFunc(v, func(r rune) bool { return r == ',' || r == ';' || r == '=' }) {
			msg = cmdfile.ShortenIn(msg, strings.TrimSpace(p))
		}
	}
	return msg
}

// shortened is an error whose message cuts long values.
type shortened struct {
	msg string
	err error
}

func (e *shortened) Error() string { return e.msg }
func (e *shortened) Unwrap() error { return e.err }

func number(f func(s *Settings) *float64, ok func(float64) bool, want string) (func(*Settings, string) error, func(*Settings) []string) {
	return func(s *Settings, v string) error {
		x, err := parseNumber(v)
		if err != nil || !ok(x) {
			return fmt.Errorf("%s want %s", numberFault(v, v, err), want)
		}
		*f(s) = x
		return nil
	}, func(s *Settings) []string { return []string{strconv.FormatFloat(*f(s), 'g', -1, 64)} }
}

func choice(f func(s *Settings) *string, allowed ...string) (func(*Settings, string) error, func(*Settings) []string) {
	return func(s *Settings, v string) error {
		for _, a := range allowed {
			if v == a {
				*f(s) = v
				return nil
			}
		}
		return fmt.Errorf("%q: use %s or %s", v, strings.Join(allowed[:len(allowed)-1], ", "), allowed[len(allowed)-1])
	}, func(s *Settings) []string { return []string{*f(s)} }
}

func opt(name, value, usage string, multi, record bool, set func(*Settings, string) error, get func(*Settings) []string) Option {
	return Option{Name: name, Value: value, Usage: usage, Multi: multi, Record: record, set: set, get: get}
}

var options = func() []Option {
	o := []Option{}
	add := func(x Option) { o = append(o, x) }
	s1, g1 := list(func(s *Settings) *[]string { return &s.Data })
	add(opt("data", "PATH", "matrix CSV, folder of spectrum files or JCAMP-DX file; repeat for several experiments", true, true, s1, g1))
	s2, g2 := str(func(s *Settings) *string { return &s.Kind })
	add(opt("kind", "KIND", "single-beam, absorbance, transmittance (a fraction or per cent, read as absorbance) or difference (default: from JCAMP-DX units, else single-beam; values that cannot be intensities stop the run)", false, true, func(s *Settings, v string) error {
		if v != "" {
			if _, err := spectra.ParseKind(v); err != nil {
				return err
			}
		}
		return s2(s, v)
	}, g2))
	s3, g3 := list(func(s *Settings) *[]string { return &s.Blanks })
	add(opt("blank", "FILE", "single beam of the cell with solvent and no analyte: gives absolute absorbance (species mode); with several --data, one blank for all, or one per experiment in the order of the --data flags", true, true, s3, g3))
	s4, g4 := str(func(s *Settings) *string { return &s.Reference })
	add(opt("reference", "REF", "state the differences are taken against (single beams, absorbance): first, mean:N (average of the first N spectra) or FILE, kept in the series with --kind absorbance when it is one of its spectra; difference input has its own (refused)", false, true, s4, g4))
	s5, g5 := integer(func(s *Settings) *int { return &s.Pre }, 0)
	add(opt("pre", "N", "the first N spectra precede the reaction: the noise is estimated from them (N ≥ 2; 1 gives no difference to estimate from), in reactions mode their extents are zero, the last one's time is the default --t0", false, true, s5, g5))
	s6, g6 := str(func(s *Settings) *string { return &s.Times })
	add(opt("times", "FILE", "CSV with columns file,time_s giving each folder file's acquisition time", false, true, s6, g6))
	s7, g7 := boolean(func(s *Settings) *bool { return &s.TimesFromName })
	add(opt("times-from-name", "", "take each file's time from a date-time stamp in its name (2019-07-29T13-20-49, 20190729_132049, Mon Jul 29 13-20-49 2019), else from the last number in it, in the unit written after it (0.35min, 120s) or --time-unit's", false, true, s7, g7))
	s8, g8 := choice(func(s *Settings) *string { return &s.TimeUnit }, timeUnitAuto, "s", "min", "h")
	add(opt("time-unit", "auto|s|min|h", "unit times are shown in on the terminal and in the report, and of plain numbers in file names; files stay in seconds, and so warnings, advice and notes stay in seconds (unit said; their times are what --drop takes); auto: names in s, figures of long runs in min or h", false, true, s8, g8))
	s9, g9 := list(func(s *Settings) *[]string { return &s.Regions })
	add(opt("region", "LO:HI", "keep only this axis range (repeatable)", true, true, checkRange(s9), g9))
	s10, g10 := list(func(s *Settings) *[]string { return &s.Excludes })
	add(opt("exclude", "LO:HI", "drop this axis range (repeatable), e.g. a saturated band", true, true, checkRange(s10), g10))
	s11, g11 := boolean(func(s *Settings) *bool { return &s.Resample })
	add(opt("resample", "", "interpolate spectra on other axes onto the first one (common range only)", false, true, s11, g11))
	sb1, gb1 := str(func(s *Settings) *string { return &s.Baseline })
	add(opt("baseline", "off|offset|linear|poly:N|auto", "baseline drift fitted with the components as a nuisance (never counted as one): a polynomial of the axis per spectrum; auto chooses the order by an F-test at --alpha", false, true, func(s *Settings, v string) error {
		if _, _, err := parseBaseline(v); err != nil {
			return err
		}
		return sb1(s, v)
	}, gb1))
	sb2, gb2 := boolean(func(s *Settings) *bool { return &s.KeepOutliers })
	add(opt("keep-outliers", "", "keep spectra whose residual is far above the others' and structured (gas lines, a bubble); by default they are set aside and named", false, true, sb2, gb2))
	sv1, gv1 := list(func(s *Settings) *[]string { return &s.Vapour })
	add(opt("vapour", "FILE", "absorbance spectrum of water vapour or CO₂ in the beam path, recorded at the same resolution: its amount in every spectrum is fitted on its narrow lines and subtracted before anything else (repeatable)", true, true, sv1, gv1))
	sb3, gb3 := list(func(s *Settings) *[]string { return &s.Drops })
	add(opt("drop", "TIME|FILE", "set a spectrum aside by hand: its time in seconds or its file name (repeatable)", true, true, sb3, gb3))
	s12, g12 := str(func(s *Settings) *string { return &s.Components })
	add(opt("components", "N|auto", "number of components, or auto to take the rank estimate", false, true, func(s *Settings, v string) error {
		if v != "auto" {
			if n, err := strconv.Atoi(v); err != nil || n < 1 {
				return fmt.Errorf("%q: want auto or a whole number ≥ 1", v)
			}
		}
		return s12(s, v)
	}, g12))
	s13, g13 := str(func(s *Settings) *string { return &s.Closure })
	add(opt("closure", "off|VALUE[,VALUE…]", "species mode: concentrations of every spectrum sum to VALUE (mass balance), one VALUE per experiment if they differ, or off", false, true, func(s *Settings, v string) error {
		if _, err := parseTotals(v); err != nil {
			return err
		}
		return s13(s, v)
	}, g13))
	s14, g14 := str(func(s *Settings) *string { return &s.Model })
	add(opt("model", "SCHEME", "reaction scheme to fit to the profiles, e.g. 'A -> B -> C'", false, true, s14, g14))
	s15, g15 := str(func(s *Settings) *string { return &s.T0 })
	add(opt("t0", "SECONDS", "time the reaction starts, in seconds (default: the time of the last spectrum before it with --pre N, else of the reference spectrum)", false, true, func(s *Settings, v string) error {
		if v != "" {
			if _, err := parseNumber(v); err != nil {
				return fmt.Errorf("%s want a time in seconds, e.g. 120", numberFault(v, v, err))
			}
		}
		return s15(s, v)
	}, g15))
	s16, g16 := str(func(s *Settings) *string { return &s.Map })
	add(opt("map", "A=1,B=2", "which resolved component is which species of the model (default: by time behaviour)", false, true, s16, g16))
	s17, g17 := boolean(func(s *Settings) *bool { return &s.HardModel })
	add(opt("hard-model", "", "replace the profiles by their kinetic fit inside every ALS cycle (hard–soft)", false, true, s17, g17))
	sk1, gk1 := choice(func(s *Settings) *string { return &s.KineticFit }, "profiles", "data")
	add(opt("kinetic-fit", "profiles|data", "rate constants reported: data (fit of the data matrix itself by variable projection; standard errors widened to the spectra's scatter when the model misfits) or profiles (fit of the resolved profiles, hard–soft with --hard-model); both are computed", false, true, sk1, gk1))
	sk2, gk2 := str(func(s *Settings) *string { return &s.C0 })
	add(opt("c0", "A=1,B=0", "initial concentrations of the model's species (default: starting species share the closure total, or 1 each)", false, true, sk2, gk2))
	sk3, gk3 := boolean(func(s *Settings) *bool { return &s.FitC0 })
	add(opt("fit-c0", "", "also fit the non-zero initial concentrations", false, true, sk3, gk3))
	sk6, gk6 := boolean(func(s *Settings) *bool { return &s.FitT0 })
	fitT0 := opt("fit-t0", "", "also fit the time the reaction starts, from --t0 (or its default), between the spectra either side of it; reported with its standard error", false, true, sk6, gk6)
	fitT0.onlyWhenOn = true
	add(fitT0)
	sk4, gk4 := str(func(s *Settings) *string { return &s.KStart })
	add(opt("k-start", "1=4e-3,2=1e-3", "starting rate constants per step (number in the order written, or the step's text) in 1/s", false, true, sk4, gk4))
	sk5, gk5 := str(func(s *Settings) *string { return &s.KFixed })
	add(opt("k-fixed", "1=4e-3", "rate constants held fixed, per step (number or text), in 1/s", false, true, sk5, gk5))
	s18, g18 := choice(func(s *Settings) *string { return &s.Bands }, "on", "off")
	add(opt("uniqueness", "on|off", "compute each component's uniqueness range: the smallest and largest share of the signal over every solution that fits as well and keeps the constraints", false, true, s18, g18))
	sc1, gc1 := list(func(s *Settings) *[]string { return &s.NonNeg })
	add(opt("nonneg", "COMPONENT=SIDE", "which side of a component is non-negative: both, profile, spectrum or none (COMPONENT is a number or all; repeatable)", true, true, func(s *Settings, v string) error {
		if err := checkComponentSpec(checkSide)(s, v); err != nil {
			return err
		}
		return sc1(s, v)
	}, gc1))
	sc2, gc2 := list(func(s *Settings) *[]string { return &s.Unimodal })
	add(opt("unimodal", "COMPONENTS", "profiles with a single maximum, e.g. 2 or 1,3 or all (repeatable)", true, true, func(s *Settings, v string) error {
		if _, err := componentList(v, 0); err != nil {
			return err
		}
		return sc2(s, v)
	}, gc2))
	sc3, gc3 := number(func(s *Settings) *float64 { return &s.UnimodalTolerance }, func(x float64) bool { return x >= 0 && x < 1 }, "a fraction between 0 and 1")
	add(opt("unimodal-tolerance", "T", "leave departures from unimodality smaller than T × the profile's maximum", false, true, sc3, gc3))
	sc4, gc4 := list(func(s *Settings) *[]string { return &s.KnownSpectra })
	add(opt("known-spectrum", "COMPONENT=FILE[:WEIGHT]", "fix a component's spectrum to a measured one (resampled onto the data axis); with WEIGHT a soft equality (repeatable)", true, true, func(s *Settings, v string) error {
		if err := checkComponentSpec(checkKnown)(s, v); err != nil {
			return err
		}
		return sc4(s, v)
	}, gc4))
	sc5, gc5 := list(func(s *Settings) *[]string { return &s.ZeroWindows })
	add(opt("zero-window", "COMPONENT=T1:T2", "the component is absent between times T1 and T2 seconds, in every experiment (repeatable)", true, true, func(s *Settings, v string) error {
		if err := checkComponentSpec(checkWindow)(s, v); err != nil {
			return err
		}
		return sc5(s, v)
	}, gc5))
	sc6, gc6 := list(func(s *Settings) *[]string { return &s.ZeroRegions })
	add(opt("zero-region", "COMPONENT=LO:HI", "the component does not absorb in this axis range (repeatable)", true, true, func(s *Settings, v string) error {
		if err := checkComponentSpec(checkWindow)(s, v); err != nil {
			return err
		}
		return sc6(s, v)
	}, gc6))
	sc7, gc7 := str(func(s *Settings) *string { return &s.ClosureWeights })
	add(opt("closure-weights", "W1,W2,…", "stoichiometric closure Σ w_k c_k = total, one weight ≥ 0 per component", false, true, func(s *Settings, v string) error {
		if _, err := parseWeights(v); err != nil {
			return err
		}
		return sc7(s, v)
	}, gc7))
	sc8, gc8 := choice(func(s *Settings) *string { return &s.Checks }, "on", "off")
	add(opt("checks", "on|off", "refit without each constraint to show what it costs in lack of fit; a better fit they find under every constraint, beyond noise, replaces the resolution", false, true, sc8, gc8))
	s19, g19 := integer(func(s *Settings) *int { return &s.Replicates }, 0)
	add(opt("replicates", "N", fmt.Sprintf("resampled replicates for confidence intervals (0 = none; at most %d)", MaxReplicates), false, true, func(s *Settings, v string) error {
		if n, err := strconv.Atoi(strings.TrimSpace(v)); err == nil && n > MaxReplicates {
			return fmt.Errorf("%s: at most %d: each replicate is a whole resolution, kept in memory until the intervals are taken, and 95 %% percentile intervals need about 1000 (docs/constraints.md); give %d or fewer", quote(v), MaxReplicates, MaxReplicates)
		}
		return s19(s, v)
	}, g19))
	add(opt("seed", "S", "seed of every random choice (replicates, randomized SVD)", false, true, func(s *Settings, v string) error {
		n, err := strconv.ParseUint(strings.TrimSpace(v), 10, 64)
		if err != nil {
			return fmt.Errorf("%q: want a whole number ≥ 0", v)
		}
		s.Seed = n
		return nil
	}, func(s *Settings) []string { return []string{strconv.FormatUint(s.Seed, 10)} }))
	s21, g21 := str(func(s *Settings) *string { return &s.Init })
	add(opt("init", "auto|purest|efa|FILE", "initial profiles: auto (resolve from purest variables and from EFA, keep the better final fit; before --hard-model that starts from the fit of the data, purest variables alone when they fit within the noise), purest, efa, or a profiles CSV (time,NAME1,…; decimal commas read as in the data files)", false, true, s21, g21))
	s22, g22 := choice(func(s *Settings) *string { return &s.EFAWindows }, "on", "off")
	add(opt("efa-windows", "on|off", "pin profiles to zero where evolving factor analysis finds a component absent", false, true, s22, g22))
	sw, gw := choice(func(s *Settings) *string { return &s.Weights }, "noise", "off")
	add(opt("weights", "noise|off", "weight each point by 1/σ² of its noise, estimated from the data (noise, the default: maximum-likelihood resolution and kinetic data fit), or all alike (off: the kinetic fit of the data too)", false, true, sw, gw))
	s23, g23 := number(func(s *Settings) *float64 { return &s.Alpha }, func(x float64) bool { return x > 0 && x < 1 }, "a significance level between 0 and 1")
	add(opt("alpha", "P", "significance level of the F-tests: on the rank, and on the fit a uniqueness range may lose", false, true, s23, g23))
	s24, g24 := integer(func(s *Settings) *int { return &s.MaxIter }, 1)
	add(opt("max-iter", "N", "most ALS iterations", false, true, s24, g24))
	s25, g25 := number(func(s *Settings) *float64 { return &s.Tolerance }, func(x float64) bool { return x > 0 && x < 1 }, "a relative change between 0 and 1")
	add(opt("tolerance", "T", "stop when the residual sum of squares changes by less than this (relative)", false, true, s25, g25))
	s26, g26 := choice(func(s *Settings) *string { return &s.Report }, "on", "off")
	add(opt("report", "on|off", "write report.html", false, true, s26, g26))
	s27, g27 := str(func(s *Settings) *string { return &s.Out })
	add(opt("out", "DIR", "output folder, made with any missing folders above it (refused if it holds earlier results, unless --force)", false, false, s27, g27))
	s28, g28 := boolean(func(s *Settings) *bool { return &s.Force })
	add(opt("force", "", "replace earlier results in the output folder (only a folder bandsolve made, never one holding an input)", false, false, s28, g28))
	s29, g29 := boolean(func(s *Settings) *bool { return &s.Quiet })
	add(opt("quiet", "", "print nothing but errors", false, false, s29, g29))
	s30, g30 := boolean(func(s *Settings) *bool { return &s.JSON })
	add(opt("json", "", "print the summary as JSON on stdout", false, false, s30, g30))
	return o
}()

func checkRange(set func(*Settings, string) error) func(*Settings, string) error {
	return func(s *Settings, v string) error {
		if _, err := ParseRange(v); err != nil {
			return err
		}
		return set(s, v)
	}
}

// ParseRange reads LO:HI.
func ParseRange(v string) ([2]float64, error) {
	a, b, ok := strings.Cut(v, ":")
	if !ok {
		return [2]float64{}, fmt.Errorf("%q: want LO:HI, e.g. 1800:1000", v)
	}
	lo, err1 := parseNumber(a)
	hi, err2 := parseNumber(b)
	if errors.Is(err1, errNotFinite) {
		return [2]float64{}, fmt.Errorf("%s want two different finite numbers LO:HI, e.g. 1800:1000", numberFault(v, a, err1))
	}
	if errors.Is(err2, errNotFinite) {
		return [2]float64{}, fmt.Errorf("%s want two different finite numbers LO:HI, e.g. 1800:1000", numberFault(v, b, err2))
	}
	if err1 != nil || err2 != nil || lo == hi {
		return [2]float64{}, fmt.Errorf("%q: want two different numbers LO:HI, e.g. 1800:1000", v)
	}
	return [2]float64{lo, hi}, nil
}

// Path resolves a path from the settings against Dir.
func (s *Settings) Path(p string) string {
	if p == "" || s.Dir == "" || filepath.IsAbs(p) {
		return p
	}
	return filepath.Join(s.Dir, p)
}
