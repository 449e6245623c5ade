package spectra

import (
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/bandsolve/bandsolve/io/jcamp"
	"gonum.org/v1/gonum/mat"
)

// JCAMP-DX input (IUPAC; McDonald & Wilks, Appl. Spectrosc. 42 (1988) 151),
// parsed by io/jcamp. The ordinates' ##YUNITS give the kind of data:
// absorbance is read as it is, transmittance T is converted to absorbance
// A = −log10 T (IUPAC Gold Book, "absorbance"; percent transmittance is
// divided by 100 first), and arbitrary units or counts are single beams.

// IsJCAMP says path names a JCAMP-DX file by its ending (.jdx, .dx,
// .jcamp), as Load tells one from a matrix CSV.
func IsJCAMP(path string) bool { return isJCAMP(path) }

func isJCAMP(path string) bool {
	e := strings.ToLower(filepath.Ext(path))
	return e == ".jdx" || e == ".dx" || e == ".jcamp"
}

// readJCAMPSeries reads every spectrum block of a JCAMP-DX file (a LINK
// file holds several).
func readJCAMPSeries(path string) ([]*Spectrum, error) {
	f, size, err := openRegular(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if size > fileLimit {
		return nil, tooLarge(path, size, fileLimit)
	}
	blocks, err := jcamp.Parse(&limitedReader{r: f, name: path, left: fileLimit, limit: fileLimit}, path)
	if err != nil {
		var ie *InputError
		if errors.As(err, &ie) {
			return nil, ie
		}
		var pe *jcamp.ParseError
		if errors.As(err, &pe) {
			msg, hint, _ := strings.Cut(pe.Msg, "; ")
			return nil, &InputError{File: path, Line: pe.Line, Msg: msg, Hint: hint}
		}
		return nil, inputErr(path, 0, "check the path and permissions", "cannot read: %v", unwrapPathErr(err))
	}
	out := make([]*Spectrum, 0, len(blocks))
	for i, b := range blocks {
		src := path
		if len(blocks) > 1 {
			src = fmt.Sprintf("%s block %d", path, i+1)
		}
		sp, err := blockSpectrum(path, src, b)
		if err != nil {
			return nil, err
		}
		out = append(out, sp)
	}
	return out, nil
}

func blockSpectrum(path, src string, b jcamp.Block) (*Spectrum, error) {
	x := append([]float64(nil), b.X...)
	y := append([]float64(nil), b.Y...)
	if err := checkAxis(path, x, b.PointLine); err != nil {
		return nil, err
	}
	kind := b.Kind()
	if kind == "transmittance" {
		scale := 1.0
		u := strings.ToUpper(b.YUnits)
		if strings.Contains(u, "%") || strings.Contains(u, "PERCENT") {
			scale = 0.01
		}
		if err := checkTransmittanceScale(path, b, y); err != nil {
			return nil, err
		}
		for i, t := range y {
			a, ok := absorbanceOf(t * scale)
			if !ok {
				return nil, inputErr(path, b.Line, needPositiveT,
					"%s: transmittance %g at %g is not positive", blockName(b), y[i], x[i])
			}
			y[i] = a
		}
		kind = string(Absorbance)
	}
	acq, ok := jcampAcquired(b)
	sp := &Spectrum{AxisName: jcampAxisName(b.XUnits, x), Axis: x, Values: y, Source: src, Kind: kind, Units: b.YUnits, Title: b.Title, Acquired: acq,
		AxisGuessed: strings.TrimSpace(b.XUnits) == ""}
	if !ok {
		sp.dateFault, sp.dateLine = jcampDateFault(b)
	}
	if sp.AxisName == "wavelength" && micrometres(b.XUnits) {
		// JCAMP-DX 4.24 ##XUNITS=MICROMETERS: a wavelength in µm, put in nm
		// as a matrix header's or a column title's is.
		sp.Note = micrometresToNanometres(sp.Axis, "##XUNITS="+b.XUnits)
	}
	return sp, nil
}

// checkTransmittanceScale refuses a block whose ##YUNITS say
// transmittance over values no transmittance takes, as
// TransmittanceToAbsorbance refuses --kind transmittance on them: a
// largest value above percentMost is counts or a single beam, whose
// −log10 is no absorbance (raw counts of 5e4 gave absorbances near −4.7
// and a factor analysis with nothing in it). The message names the
// ##YUNITS line.
func checkTransmittanceScale(path string, b jcamp.Block, y []float64) error {
	largest := math.Inf(-1)
	for _, v := range y {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			largest = math.Max(largest, v)
		}
	}
	if largest <= percentMost {
		return nil
	}
	line := b.Line
	for _, l := range b.Labels {
		if l.Name == "YUNITS" {
			line = l.Line
			break
		}
	}
	return inputErr(path, line, "if these are single-beam intensities, write ##YUNITS=ARBITRARY UNITS (or COUNTS) in the file, or export them so",
		"%s: ##YUNITS=%s, but the largest value, %g, is not a transmittance (a fraction up to 1 or a percentage up to 100, a little above with noise)",
		blockName(b), b.YUnits, largest)
}

func blockName(b jcamp.Block) string {
	if b.Title != "" {
		return fmt.Sprintf("block %q", b.Title)
	}
	return fmt.Sprintf("block at line %d", b.Line)
}

// jcampAxisName maps ##XUNITS to the trade's axis names; MICROMETERS
// (and UM, MICRONS) is a wavelength, which blockSpectrum puts in nm.
func jcampAxisName(units string, x []float64) string {
	u := strings.ToUpper(strings.ReplaceAll(units, " ", ""))
	switch {
	case u == "1/CM" || strings.Contains(u, "CM-1") || strings.Contains(u, "CM^-1") || strings.Contains(u, "WAVENUMBER"):
		return "wavenumber"
	case u == "NM" || micrometres(units) || strings.Contains(u, "NANOMETER") || strings.Contains(u, "WAVELENGTH"):
		return "wavelength"
	case u == "":
		return guessAxisName(x)
	}
	return cleanAxisName(strings.ToLower(units), x)
}

// seriesFromSpectra makes the series of one JCAMP-DX file. Several blocks
// (a LINK file) need their times, as a folder does: from --times (rows
// naming each block's ##TITLE), from a date-time stamp or the last number
// in each ##TITLE, or else from the blocks' acquisition times in their
// headers when every block has one. A file with one spectrum takes its time from the table or the file name
// when asked, else 0.
func seriesFromSpectra(path string, sps []*Spectrum, opt FolderOptions) (*Series, error) {
	if len(sps) == 0 {
		return nil, inputErr(path, 0, "export the spectra as ##XYDATA or ##XYPOINTS", "holds no spectrum")
	}
	b := jcampBlocks{path: path, sps: sps}
	times, err := b.times(opt)
	if err != nil {
		return nil, err
	}
	var warning string
	if opt.TimesFile != "" || opt.TimesFromName {
		times, warning = b.weighHeaders(times, opt.shownTimes(), opt.shownPath(path))
	}
	s, err := b.series(times, opt.Resample)
	if err == nil && warning != "" {
		s.Warnings = append(s.Warnings, warning)
	}
	return s, err
}

// weighHeaders settles the times asked for against the blocks' own
// acquisition times when every block of several has one
// (weighHeaderTimes); a lone spectrum has no interval to compare.
func (b jcampBlocks) weighHeaders(given []float64, table, shown string) ([]float64, string) {
	names := make([]string, len(b.sps))
	for i, sp := range b.sps {
		names[i] = shown + ": " + b.name(sp)
	}
	header, ok := headerTimesOf(names, b.sps, nil)
	if len(b.sps) < 2 || !ok {
		return given, ""
	}
	return weighHeaderTimes(names, given, header, timeSource{table: table, label: "##TITLE", short: func(i int) string { return b.name(b.sps[i]) }})
}

// jcampBlocks is the spectra of one JCAMP-DX file and the file's path,
// which every message about them is already about.
type jcampBlocks struct {
	path string
	sps  []*Spectrum
}

// name names a block in messages by its number and ##TITLE: the path is
// in the message already.
func (b jcampBlocks) name(sp *Spectrum) string {
	n := strings.TrimPrefix(sp.Source, b.path+" ")
	if n == b.path {
		n = "the spectrum"
	}
	if sp.Title != "" {
		n += fmt.Sprintf(" (##TITLE=%s)", sp.Title)
	}
	return n
}

// times gives each block's time in seconds, in the file's order, from the
// source the options choose; a lone spectrum with none asked for is at 0.
func (b jcampBlocks) times(opt FolderOptions) ([]float64, error) {
	switch {
	case opt.TimesFile != "":
		return b.timesFromTable(opt.TimesFile)
	case opt.TimesFromName:
		return b.timesFromTitles(opt.TimeUnit)
	case len(b.sps) > 1 && allAcquired(b.sps):
		return acquiredSeconds(b.sps), nil
	case len(b.sps) > 1:
		return nil, inputErr(b.path, 0, "give --times FILE (columns file,time_s; file = each block's ##TITLE) or --times-from-name (the last number in each ##TITLE)",
			"holds %d spectra and needs their acquisition times", len(b.sps))
	}
	return make([]float64, len(b.sps)), nil
}

// timesFromTable looks each block up in the --times table by its ##TITLE;
// a lone spectrum by the file's name first, as a folder's table names its
// files, then by its ##TITLE.
func (b jcampBlocks) timesFromTable(file string) ([]float64, error) {
	table, err := ReadTimes(file)
	if err != nil {
		return nil, err
	}
	times := make([]float64, len(b.sps))
	for i, sp := range b.sps {
		key := strings.TrimSpace(sp.Title)
		if len(b.sps) == 1 {
			key = filepath.Base(b.path)
		}
		t, ok := table[key]
		if !ok && len(b.sps) == 1 {
			t, ok = table[strings.TrimSpace(sp.Title)]
		}
		if !ok {
			return nil, inputErr(file, 0, "add a row whose file column is the block's ##TITLE", "has no time for %s", b.name(sp))
		}
		times[i] = t
	}
	return times, nil
}

// timesFromTitles reads each block's time from its ##TITLE (a lone
// spectrum's from the file name), and refuses two blocks at one time,
// which would leave their order a guess.
func (b jcampBlocks) timesFromTitles(unit string) ([]float64, error) {
	labels := make([]string, len(b.sps))
	for i, sp := range b.sps {
		labels[i] = sp.Title
	}
	what := func(i int) string { return "the ##TITLE " + strconv.Quote(b.sps[i].Title) }
	if len(b.sps) == 1 {
		labels[0] = strings.TrimSuffix(filepath.Base(b.path), filepath.Ext(b.path))
		what = func(int) string { return "the file name " + strconv.Quote(filepath.Base(b.path)) }
	}
	ts, bad, err := timesFromLabels(labels, unit, what)
	if err != nil {
		return nil, inputErr(b.path, 0, "put each spectrum's time in its ##TITLE (e.g. scan 120 s, or a date-time stamp), or give --times FILE", "%s: %v", b.name(b.sps[bad]), err)
	}
	seen := map[float64]string{}
	for i, t := range ts {
		if other, dup := seen[t]; dup {
			return nil, inputErr(b.path, 0, "give each spectrum its own time, or use --times FILE", "%s has the same time %g s as %s", b.name(b.sps[i]), t, other)
		}
		seen[t] = b.name(b.sps[i])
	}
	return ts, nil
}

// series puts the blocks in time order (ties kept in the file's order) on
// the first block's axis, and refuses blocks of another kind or a time
// that two blocks share.
func (b jcampBlocks) series(times []float64, resample bool) (*Series, error) {
	first := b.sps[0]
	order := make([]int, len(b.sps))
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(x, y int) bool { return times[order[x]] < times[order[y]] })
	s := &Series{AxisName: first.AxisName, AxisGuessed: first.AxisGuessed, Axis: first.Axis, Source: b.path, Kind: first.Kind, Units: first.Units}
	s.Values = mat.NewDense(len(b.sps), len(first.Axis), nil)
	tally := axisTally{ref: b.name(first), axisName: first.AxisName}
	for r, i := range order {
		sp := b.sps[i]
		vals, err := b.onFirstAxis(&tally, sp, times[i], resample)
		if err != nil {
			return nil, err
		}
		if sp.Kind != first.Kind {
			return nil, inputErr(b.path, 0, "give blocks of one kind", "%s holds %s data, %s holds %s", b.name(sp), orUnknown(sp.Kind), b.name(first), orUnknown(first.Kind))
		}
		if r > 0 && times[i] == times[order[r-1]] {
			return nil, inputErr(b.path, 0, "give each spectrum its own time", "%s has the same time %g s as %s", b.name(sp), times[i], b.name(b.sps[order[r-1]]))
		}
		s.Values.SetRow(r, vals)
		s.Times = append(s.Times, times[i])
		s.Names = append(s.Names, sp.Source)
	}
	s.Notes = append(spectrumNotes(b.sps, order), tally.notes()...)
	return s, nil
}

// onFirstAxis gives a block's values on the first block's axis: as they are
// when the axes agree, interpolated when --resample allows it.
func (b jcampBlocks) onFirstAxis(tally *axisTally, sp *Spectrum, t float64, resample bool) ([]float64, error) {
	first := b.sps[0]
	vals, ok, err := tally.place(sp, b.name(sp), t, first.Axis, first.Axis, nil, resample)
	if err != nil {
		return nil, inputErr(b.path, 0, "export the spectra over overlapping ranges", "%s: cannot resample: %v", b.name(sp), err)
	}
	if !ok {
		return nil, inputErr(b.path, 0, "use --resample to interpolate onto the first block's axis, or export every block on one axis", "%s: %s", b.name(sp), describeAxisMismatch(sp.Axis, first.Axis, b.name(first)))
	}
	return vals, nil
}

// allAcquired tells whether every spectrum carries its acquisition time
// (JCAMP-DX ##LONGDATE, or ##DATE with ##TIME).
func allAcquired(sps []*Spectrum) bool {
	for _, sp := range sps {
		if sp == nil || sp.Acquired.IsZero() {
			return false
		}
	}
	return len(sps) > 0
}

// acquiredSeconds gives the spectra's acquisition times as seconds after
// the first.
func acquiredSeconds(sps []*Spectrum) []float64 {
	ts := make([]time.Time, len(sps))
	for i, sp := range sps {
		ts[i] = sp.Acquired
	}
	return relativeSeconds(ts)
}

// CheckKind refuses a --kind that contradicts what a JCAMP-DX file says its
// ordinates are. Only definite units count: absorbance (and transmittance,
// read as absorbance) is not a single beam. Arbitrary units say nothing
// certain (instruments export differences and absorbance in them too).
func CheckKind(asked Kind, s *Series) error {
	if asked == "" || s.Kind != string(Absorbance) || asked != SingleBeam {
		return nil
	}
	return inputErr(s.Source, 0, "use --kind absorbance (or --kind difference if the spectra are already differences against a reference), or leave --kind out",
		"its JCAMP-DX ##YUNITS say absorbance or transmittance (read as absorbance A = −log10 T), which contradicts --kind single-beam")
}
