package spectra

import (
	"fmt"
	"github.com/gocarina/gocsv"
	"io"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"
	"unicode"

	"github.com/bandsolve/bandsolve/internal/fanout"
	"gonum.org/v1/gonum/mat"
)

// FolderOptions say where the acquisition times of a folder's files come from.
type FolderOptions struct {
	TimesFile     string   // CSV with columns file,time_s
	TimesFromName bool     // a date-time stamp or the last number in each file name
	TimeUnit      string   // unit of numbers in names: s, min or h (default s)
	Resample      bool     // interpolate every file onto the first file's axis
	Exclude       []string // paths not to treat as spectra (the times table, a blank)
	Drop          []string // --drop values: a file named here that is no spectrum of the series is left out (folderFiles)
	// ScanBeams says the data are single beams to be assembled with Pre
	// spectra before the reaction (AssembleOptions.Pre): a matrix CSV's
	// parse then takes, channel by channel while each is in cache, the
	// beams' maxima, blind points, rounding step and the noise model's
	// per-channel scales, which Assemble would otherwise gather from the
	// matrix in passes of its own. Neither the series nor the assembly's
	// results change. The scan describes Values as parsed and is known by
	// the matrix alone: a caller that changes Values in place before
	// Assemble (rather than putting a new matrix there) must leave
	// ScanBeams unset, or the assembly would take the old values' scan.
	ScanBeams bool
	Pre       int
	// Label and TimesLabel are the data path and the times table as the
	// user wrote them, which warnings kept in the results name
	// (Series.Label); "" names the paths opened.
	Label, TimesLabel string
}

// shownPath names the data path opened in warnings kept in the results.
func (o FolderOptions) shownPath(opened string) string {
	if o.Label != "" {
		return o.Label
	}
	return opened
}

// shownTimes names the times table in warnings kept in the results.
func (o FolderOptions) shownTimes() string {
	if o.TimesLabel != "" {
		return o.TimesLabel
	}
	return o.TimesFile
}

// shownFiles names a folder's files in warnings kept in the results: under
// the folder as written.
func (o FolderOptions) shownFiles(files []string) []string {
	if o.Label == "" {
		return files
	}
	out := make([]string, len(files))
	for i, f := range files {
		out[i] = filepath.Join(o.Label, filepath.Base(f))
	}
	return out
}

// spectrumExts are the endings treated as one-spectrum exports in a folder.
var spectrumExts = map[string]bool{".csv": true, ".txt": true, ".dat": true, ".tsv": true,
	".prn": true, ".asc": true, ".dpt": true, ".xy": true, ".jdx": true, ".dx": true}

// TimeRow is one row of a times table.
type TimeRow struct {
	File  string `csv:"file"`
	TimeS string `csv:"time_s"`
}

// ReadTimes reads a times table (columns file,time_s) into file → seconds.
// It is read with the same line rules as the spectra (BOM, CRLF, blank and
// '#' lines, comma, semicolon or tab separators, decimal commas where the
// separator is not a comma or in quoted cells that tell them from digit
// grouping, fileMarks) so that line numbers in messages are the editor's
// line numbers.
func ReadTimes(path string) (map[string]float64, error) {
	raw, err := readAll(path)
	if err != nil {
		return nil, err
	}
	const headHint = "the times table needs a header row 'file,time_s' and one row per spectrum file"
	lines := splitLines(raw)
	if len(lines) == 0 {
		return nil, inputErr(path, 0, headHint, "is empty")
	}
	head := lines[0]
	sep := detectSeparator(head.text)
	fileCol, timeCol := -1, -1
	hf := fields(head.text, sep, nil)
	for i, h := range hf {
		switch strings.ToLower(string(h)) {
		case "file":
			fileCol = i
		case "time_s":
			timeCol = i
		}
	}
	if fileCol < 0 || timeCol < 0 {
		missing := "file"
		if fileCol >= 0 {
			missing = "time_s"
		}
		return nil, inputErr(path, head.n, headHint, "header has no column %q", missing)
	}
	if len(lines) == 1 {
		return nil, inputErr(path, head.n, "add one row per spectrum file below the header 'file,time_s'", "times table has no rows")
	}
	// gocsv maps the header's column names onto the record fields; the
	// records come from our own line splitter, which keeps each row's line
	// number for messages and accepts ';' and tab separators too.
	recs := make([][]string, 0, len(lines))
	var buf [][]byte
	for i, l := range lines {
		buf = fields(l.text, sep, buf)
		if i > 0 && len(buf) <= max(fileCol, timeCol) {
			return nil, inputErr(path, l.n, headHint, "row has %d cell(s), the header has %d", len(buf), len(hf))
		}
		if i > 0 && len(buf) > len(hf) {
			// A cell beyond the header's is never dropped: in a
			// comma-separated row it is most often a time's decimal comma.
			return nil, extraCells(path, l, buf, len(hf), sep, timeCol)
		}
		rec := make([]string, len(hf))
		for j := 0; j < len(hf) && j < len(buf); j++ {
			rec[j] = string(buf[j])
		}
		if i == 0 {
			for j := range rec {
				rec[j] = strings.ToLower(rec[j])
			}
		}
		recs = append(recs, rec)
	}
	var rows []TimeRow
	if err := gocsv.UnmarshalCSV(&records{recs: recs}, &rows); err != nil {
		return nil, inputErr(path, head.n, headHint, "cannot read the table: %v", err)
	}
	mk, err := fileMarks(path, lines[1:], sep, timeCol)
	if err != nil {
		return nil, err
	}
	out := make(map[string]float64, len(rows))
	byTime := map[float64]string{}
	for i, r := range rows {
		ln := lines[i+1].n
		name := r.File
		if name == "" {
			return nil, inputErr(path, ln, "each row needs a file name in column 'file'", "empty file name")
		}
		// Decimal commas are read as in spectrum files (fileMarks).
		v, err := mk.cell([]byte(r.TimeS))
		if err != nil {
			hint := mk.hint([]byte(r.TimeS), "time_s must be a number of seconds")
			return nil, inputErr(path, ln, hint, "time of %s: %v", quoteCell([]byte(name)), err)
		}
		if _, dup := out[name]; dup {
			return nil, inputErr(path, ln, "list each file once", "file %s is listed twice", quoteCell([]byte(name)))
		}
		if other, dup := byTime[v]; dup {
			return nil, inputErr(path, ln, "each spectrum needs its own time", "%s has the same time %g s as %s", quoteCell([]byte(name)), v, quoteCell([]byte(other)))
		}
		out[name], byTime[v] = v, name
	}
	return out, nil
}

// numberInName is a number in a file name or title, with a decimal point
// or a decimal comma (run7_t0,35min: a European export's names, common
// practice); nameMarks tells the comma from digit grouping.
var numberInName = regexp.MustCompile(`[0-9]+(?:[.,][0-9]+)?`)

// nameUnits are the time units read when written straight after a name's
// number (run7_t0.35min, scan_120s): the SI symbols s, ms and the symbols
// min and h accepted for use with the SI (SI Brochure, 9th ed., Table 8,
// from memory; ISO 80000-3 likewise), and the spellings sec, hr common in
// export names (common practice). m is left out: it is the metre's symbol.
var nameUnits = map[string]float64{"ms": 1e-3, "s": 1, "sec": 1, "secs": 1,
	"min": 60, "mins": 60, "h": 3600, "hr": 3600, "hrs": 3600}

// nameNumber is the last number in text and the time unit written after
// it ("" for a plain number), lower-cased: straight after it or after one
// '_', '-' or blank (run7_t0.35min, run7_t0.35_min, scan 120 s); a unit
// must end the text or be followed by something not a letter, so that
// scan_10scans and sample_2_mineral have none.
func nameNumber(text string) (num, unit string, ok bool) {
	locs := numberInName.FindAllStringIndex(text, -1)
	if len(locs) == 0 {
		return "", "", false
	}
	last := locs[len(locs)-1]
	num, rest := text[last[0]:last[1]], text[last[1]:]
	if len(rest) > 1 && strings.IndexByte("_- ", rest[0]) >= 0 {
		rest = rest[1:]
	}
	end := strings.IndexFunc(rest, func(r rune) bool { return !unicode.IsLetter(r) })
	if end < 0 {
		end = len(rest)
	}
	if u := strings.ToLower(rest[:end]); nameUnits[u] != 0 {
		unit = u
	}
	return num, unit, true
}

// lastNumberTime reads the last number in text as a time: in the unit
// written after it, else in unit; where says what text is, for the message.
func lastNumberTime(text, unit, where string) (float64, error) {
	num, written, ok := nameNumber(text)
	if !ok {
		return 0, fmt.Errorf("no number in %s", where)
	}
	v, err := strconv.ParseFloat(strings.Replace(num, ",", ".", 1), 64) // nameMarks checked the comma
	if err != nil {
		return 0, err
	}
	f, err := UnitFactor(unit)
	if written != "" {
		f, err = nameUnits[written], nil
	}
	if err != nil {
		return 0, err
	}
	return v * f, nil
}

// UnitFactor converts a time unit to seconds.
func UnitFactor(unit string) (float64, error) {
	switch unit {
	case "", "s":
		return 1, nil
	case "min":
		return 60, nil
	case "h":
		return 3600, nil
	}
	return 0, fmt.Errorf("time unit %q: use s, min or h", unit)
}

// ReadFolder reads every spectrum file of a folder and orders them by time.
func ReadFolder(dir string, opt FolderOptions) (*Series, error) {
	files, left, leftNotes, err := folderFiles(dir, opt)
	if err != nil {
		return nil, err
	}
	times, fromHeaders, err := folderTimes(dir, files, opt)
	if err != nil {
		return nil, strayError(files, err)
	}
	if len(files) == 0 {
		return nil, inputErr(dir, 0, "put one file per spectrum in it (.csv, .txt, .dat, .jdx …)", "holds no spectrum files")
	}
	specs, errs := readFiles(files)
	var warning string
	if fromHeaders {
		if times, err = headerTimes(dir, files, specs, errs); err != nil {
			return nil, err
		}
	} else if header, ok := headerTimesOf(files, specs, errs); ok {
		src := timeSource{table: opt.shownTimes(), label: "name", short: func(i int) string { return filepath.Base(files[i]) }}
		times, warning = weighHeaderTimes(opt.shownFiles(files), times, header, src)
	}
	order := make([]int, len(files))
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return times[order[a]] < times[order[b]] })
	// The error reported is the earliest file's, whatever order the reads ended in.
	for _, i := range order {
		if errs[i] != nil {
			return nil, loneFault(files, errs, i)
		}
	}
	target, keep, err := folderAxis(dir, specs, specs[order[0]], opt.Resample)
	if err != nil {
		return nil, err
	}
	s, err := stackSpectra(dir, files, specs, times, order, target, keep, opt.Resample)
	if err != nil {
		return nil, err
	}
	if warning != "" {
		s.Warnings = append(s.Warnings, warning)
	}
	s.Notes, s.Left = append(s.Notes, leftNotes...), left
	return s, nil
}

// OwnSpectrum says whether file is one of the spectra ReadFolder reads from
// dir with opt (opt.Exclude leaving out the other fixed files): a spectrum
// file of the folder that has its time in the series, a row of the times
// table or, with times from the names, a name read with the others' without
// fault. A reference spectrum recorded apart (no time, or a name unlike the
// series') is not, and is left out of the series as before.
func OwnSpectrum(dir, file string, opt FolderOptions) bool {
	if st, err := os.Stat(dir); err != nil || !st.IsDir() {
		return false
	}
	files, _, _, err := folderFiles(dir, opt)
	if err != nil {
		return false
	}
	want, err := filepath.Abs(file)
	if err != nil || !slices.ContainsFunc(files, func(f string) bool {
		a, err := filepath.Abs(f)
		return err == nil && a == want
	}) {
		return false
	}
	switch {
	case opt.TimesFile != "":
		table, err := ReadTimes(opt.TimesFile)
		_, listed := table[filepath.Base(file)]
		return err == nil && listed
	case opt.TimesFromName:
		_, err := timesFromNames(files, opt.TimeUnit)
		return err == nil
	}
	return false
}

// spectrumFiles lists the folder's spectrum files: by their endings, hidden
// files and the excluded paths (a times table, a blank) left out.
func spectrumFiles(dir string, exclude []string) ([]string, error) {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return nil, inputErr(dir, 0, "check the folder's path and permissions", "cannot list: %v", unwrapPathErr(err))
	}
	skip := map[string]bool{}
	for _, p := range exclude {
		if a, err := filepath.Abs(p); err == nil {
			skip[a] = true
		}
	}
	var files []string
	for _, e := range entries {
		name := e.Name()
		if e.IsDir() || strings.HasPrefix(name, ".") || !spectrumExts[strings.ToLower(filepath.Ext(name))] {
			continue
		}
		p := filepath.Join(dir, name)
		if a, err := filepath.Abs(p); err == nil && skip[a] {
			continue
		}
		files = append(files, p)
	}
	return files, nil
}

// folderTimes gives each file its acquisition time from the times table or
// the file names. Without either, a folder of JCAMP-DX files may carry the
// times in its headers: fromHeaders then says to read them after the files.
func folderTimes(dir string, files []string, opt FolderOptions) (times []float64, fromHeaders bool, err error) {
	switch {
	case opt.TimesFile != "":
		times, err = timesFromTable(dir, files, opt.TimesFile)
		return times, false, err
	case opt.TimesFromName:
		times, err = timesFromNames(files, opt.TimeUnit)
		return times, false, err
	case len(files) == 0 || !allJCAMP(files):
		return nil, false, noTimes(dir)
	}
	return make([]float64, len(files)), true, nil
}

// timesFromTable looks each file up in the times table. A row naming no file
// of the folder is an error too: the table and the folder disagree, and
// either could be the one that is wrong.
func timesFromTable(dir string, files []string, timesFile string) ([]float64, error) {
	table, err := ReadTimes(timesFile)
	if err != nil {
		return nil, err
	}
	times := make([]float64, len(files))
	used := map[string]bool{}
	for i, f := range files {
		t, ok := table[filepath.Base(f)]
		if !ok {
			return nil, inputErr(timesFile, 0, "add a row for it, or move the file out of the folder", "has no time for %s", f)
		}
		times[i], used[filepath.Base(f)] = t, true
	}
	var absent []string
	for name := range table {
		if !used[name] {
			absent = append(absent, name)
		}
	}
	if len(absent) > 0 {
		sort.Strings(absent)
		return nil, inputErr(timesFile, 0, "remove the row or put the file in the folder", "names %s, which is not a spectrum file in %s", absent[0], dir)
	}
	return times, nil
}

// timesFromNames reads each file's time from its name (without the ending):
// a date-time stamp or its last number in unit. Two files of one time
// cannot be ordered.
func timesFromNames(files []string, unit string) ([]float64, error) {
	labels := make([]string, len(files))
	for i, f := range files {
		labels[i] = strings.TrimSuffix(filepath.Base(f), filepath.Ext(f))
	}
	what := func(i int) string { return "the file name " + strconv.Quote(filepath.Base(files[i])) }
	times, bad, err := timesFromLabels(labels, unit, what)
	if err != nil {
		return nil, inputErr(files[bad], 0, "name files with their time (e.g. scan_0120.csv or a date-time stamp such as 2019-07-29T13-20-49), or give --times FILE", "%v", err)
	}
	if i, other := repeatedTime(times, files); i >= 0 {
		return nil, inputErr(files[i], 0, "give each file its own time, or use --times FILE", "same time %g s as %s", times[i], other)
	}
	return times, nil
}

// repeatedTime returns the first file whose time an earlier file has, and
// that file; -1 when every time is its own.
func repeatedTime(times []float64, files []string) (int, string) {
	seen := map[float64]string{}
	for i, t := range times {
		if other, dup := seen[t]; dup {
			return i, other
		}
		seen[t] = files[i]
	}
	return -1, ""
}

// readFiles reads the files in parallel; each result lands in its own slot
// (order-free), a read's panic too (readInFolder).
func readFiles(files []string) ([]*Spectrum, []error) {
	specs := make([]*Spectrum, len(files))
	errs := make([]error, len(files))
	var wg sync.WaitGroup
	work := make(chan int, len(files))
	for i := range files {
		work <- i
	}
	close(work)
	for w := 0; w < min(runtime.GOMAXPROCS(0), len(files)); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range work {
				specs[i], errs[i] = readInFolder(files[i])
			}
		}()
	}
	wg.Wait()
	return specs, errs
}

// headerTimes takes the acquisition times from the JCAMP-DX headers, which
// every file must carry, each its own.
func headerTimes(dir string, files []string, specs []*Spectrum, errs []error) ([]float64, error) {
	for _, err := range errs {
		if err != nil {
			return nil, err
		}
	}
	for i, sp := range specs {
		if sp.Acquired.IsZero() && sp.dateFault != "" {
			return nil, inputErr(files[i], sp.dateLine, "correct it, or give --times FILE (columns file,time_s) or --times-from-name", "%s, and a folder of spectra needs an acquisition time for every file", sp.dateFault)
		}
		if sp.Acquired.IsZero() {
			return nil, inputErr(files[i], 0, "give --times FILE (columns file,time_s) or --times-from-name", "its JCAMP-DX header has no acquisition time (##LONGDATE, or ##DATE with ##TIME), and a folder of spectra needs one for every file")
		}
	}
	times := acquiredSeconds(specs)
	if i, other := repeatedTime(times, files); i >= 0 {
		return nil, inputErr(files[i], 0, "give each file its own time with --times FILE", "its JCAMP-DX acquisition time is the same as that of %s", other)
	}
	return times, nil
}

// folderAxis is the axis of the series: the first file's, or with resampling
// its points inside the range every file to be interpolated covers, since
// only there can every file be interpolated; keep are those points'
// indices (nil: all of them). Files on the first file's axis, or within
// axisSlack of it, are not interpolated and do not narrow it.
func folderAxis(dir string, specs []*Spectrum, first *Spectrum, resample bool) ([]float64, []int, error) {
	if !resample {
		return first.Axis, nil, nil
	}
	var axes [][]float64
	for _, sp := range specs {
		if _, frac, ok := axisOffset(sp.Axis, first.Axis); !ok || frac > axisSlack {
			axes = append(axes, sp.Axis)
		}
	}
	if len(axes) == 0 {
		return first.Axis, nil, nil
	}
	idx := CommonRange(first.Axis, axes...)
	if len(idx) < 2 {
		return nil, nil, inputErr(dir, 0, "export the spectra over overlapping ranges", "the files' axes have no common range")
	}
	return KeepValues(first.Axis, idx), idx, nil
}

// stackSpectra puts the spectra in time order as the rows of the series on
// the target axis (resampled there when allowed), all of the first one's kind.
func stackSpectra(dir string, files []string, specs []*Spectrum, times []float64, order []int, target []float64, keep []int, resample bool) (*Series, error) {
	first, firstName := specs[order[0]], files[order[0]]
	s := &Series{AxisName: first.AxisName, AxisGuessed: first.AxisGuessed, Axis: target, Source: dir, Kind: first.Kind, Units: first.Units}
	s.Values = mat.NewDense(len(files), len(target), nil)
	tally := axisTally{ref: filepath.Base(firstName), axisName: first.AxisName}
	for r, i := range order {
		sp := specs[i]
		vals, ok, err := tally.place(sp, filepath.Base(files[i]), times[i], first.Axis, target, keep, resample)
		if err != nil {
			return nil, inputErr(files[i], 0, "export the spectra over overlapping ranges", "cannot resample: %v", err)
		}
		if !ok {
			hint := "use --resample to interpolate onto the first file's axis, or export all spectra on one axis"
			if len(sp.Axis) < len(first.Axis)/2 {
				hint = "if it is no spectrum, move it out of the folder or give --drop " + filepath.Base(files[i]) + "; else " + hint
			}
			return nil, inputErr(files[i], 0, hint, "%s", describeAxisMismatch(sp.Axis, first.Axis, firstName))
		}
		if sp.Kind != first.Kind {
			return nil, inputErr(files[i], 0, "give files of one kind", "holds %s data, %s holds %s", orUnknown(sp.Kind), firstName, orUnknown(first.Kind))
		}
		s.Values.SetRow(r, vals)
		s.Times = append(s.Times, times[i])
		s.Names = append(s.Names, files[i])
	}
	s.Notes = append(spectrumNotes(specs, order), tally.notes()...)
	return s, nil
}

// readInFolder is ReadSpectrum for one file of a folder, on a worker
// goroutine. A panic there, unrecovered, would end the program past a
// batch's recovery per run (cmd/bandsolve runOne); it is a bug of this
// program's readers (bad input gets an error), and becomes the file's
// error rather than a panic raised again on the caller, because the error
// names the file to report with it, and ReadFolder picks the error it
// returns by the files' order (their times), whatever the scheduling. The
// other files are read on: no worker ends early, and none waits on another.
func readInFolder(path string) (sp *Spectrum, err error) {
	defer func() {
		if p := recover(); p != nil {
			sp, err = nil, fmt.Errorf("%s: internal error while reading it: %w (please report it with this file)", path, fanout.Error(p))
		}
	}()
	return readSpectrum(path)
}

// readSpectrum is ReadSpectrum; a variable so that a test can make a read
// panic.
var readSpectrum = ReadSpectrum

func noTimes(dir string) error {
	return inputErr(dir, 0, "give --times FILE (columns file,time_s) or --times-from-name", "a folder of spectra needs acquisition times")
}

// MayCarryTimes says whether the folder's spectrum files (opt.Exclude and
// the strays opt.Drop names left out) are all JCAMP-DX, whose headers may
// give the acquisition times that a folder otherwise needs from --times or
// --times-from-name.
func MayCarryTimes(dir string, opt FolderOptions) bool {
	files, _, _, err := folderFiles(dir, opt)
	return err == nil && len(files) > 0 && allJCAMP(files)
}

// NotJCAMP names the first file of a folder mostly of JCAMP-DX files that
// is not one (as MayCarryTimes lists them), and how many are: the file
// that keeps the headers' times from being used. "" when the folder is
// not mostly JCAMP-DX.
func NotJCAMP(dir string, opt FolderOptions) (name string, jcampFiles int) {
	files, _, _, err := folderFiles(dir, opt)
	if err != nil {
		return "", 0
	}
	for _, f := range files {
		if isJCAMP(f) {
			jcampFiles++
		} else if name == "" {
			name = filepath.Base(f)
		}
	}
	if 2*jcampFiles <= len(files) {
		return "", jcampFiles
	}
	return name, jcampFiles
}

func allJCAMP(files []string) bool {
	for _, f := range files {
		if !isJCAMP(f) {
			return false
		}
	}
	return true
}

func orUnknown(k string) string {
	if k == "" {
		return "unlabelled"
	}
	return k
}

func describeAxisMismatch(a, ref []float64, refName string) string {
	if len(a) != len(ref) {
		if len(a) < len(ref)/2 {
			return fmt.Sprintf("has %d points where %s has %d: it looks like a peak list or a cut, not a spectrum on the same axis", len(a), refName, len(ref))
		}
		return fmt.Sprintf("has %d axis points, %s has %d", len(a), refName, len(ref))
	}
	for i := range a {
		if !closeTo(a[i], ref[i]) {
			return fmt.Sprintf("axis point %d is %g, in %s it is %g", i+1, a[i], refName, ref[i])
		}
	}
	return "axis differs"
}

func closeTo(a, b float64) bool {
	return math.Abs(a-b) <= 1e-6*math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
}

func sameAxis(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if !closeTo(a[i], b[i]) {
			return false
		}
	}
	return true
}

// Load reads --data: a folder, a JCAMP-DX file or a matrix CSV.
func Load(path string, opt FolderOptions) (*Series, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, inputErr(path, 0, "check the --data path", "cannot read: %v", unwrapPathErr(err))
	}
	if st.IsDir() {
		return ReadFolder(path, opt)
	}
	if isJCAMP(path) {
		sps, err := readJCAMPSeries(path)
		if err != nil {
			return nil, err
		}
		return seriesFromSpectra(path, sps, opt)
	}
	if opt.ScanBeams {
		return readMatrixCSV(path, max(opt.Pre, 0))
	}
	return ReadMatrixCSV(path)
}

// records feeds already-split rows to gocsv (its CSVReader interface).
type records struct {
	recs [][]string
	i    int
}

func (r *records) Read() ([]string, error) {
	if r.i >= len(r.recs) {
		return nil, io.EOF
	}
	r.i++
	return r.recs[r.i-1], nil
}

func (r *records) ReadAll() ([][]string, error) {
	rest := r.recs[r.i:]
	r.i = len(r.recs)
	return rest, nil
}
