// Package spectra reads instrument exports into one time × axis matrix and
// assembles absorbance or difference-absorbance data from it.
//
// Inputs are a matrix CSV (header: axis name, then one acquisition time in
// seconds per spectrum; one row per axis point), a folder of one-spectrum
// files (two numeric columns: axis, value) with times from a table or from
// the file names, or JCAMP-DX files. Assembly follows the definitions of
// absorbance, A = −log10(I/I₀), and of the difference spectrum against the
// starting state, ΔA(t) = −log10(I(t)/I(t_ref)), in which the blank cancels.
package spectra

import (
	"bytes"
	"cmp"
	"errors"
	"fmt"
	"math"
	"os"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"sync"
	"time"
	"unicode"
	"unsafe"

	"github.com/bandsolve/bandsolve/internal/decimal"
	"github.com/bandsolve/bandsolve/internal/fanout"
	"github.com/bandsolve/bandsolve/internal/fresh"
	"gonum.org/v1/gonum/mat"
)

// Series is a set of spectra on one axis, one row per acquisition time.
type Series struct {
	AxisName string    // as in the input, e.g. "wavenumber"
	Axis     []float64 // m points, in file order
	// AxisGuessed says no title or unit named the axis: AxisName was
	// guessed from its values (guessAxisName).
	AxisGuessed bool
	Times       []float64 // n acquisition times in seconds
	Names       []string  // where each spectrum came from
	Values      *mat.Dense
	Source      string // the path as opened, for error messages
	// Label is the path as the user wrote it (relative to a command
	// file's folder, say), which notes kept in the results name: the
	// opened path depends on the working directory, and a rerun from
	// elsewhere must write the same bytes. "" names Source.
	Label string
	Kind  string // kind declared by the file itself (JCAMP-DX), "" if none
	// Units are the ordinate units as the file declares them (JCAMP-DX
	// ##YUNITS, "TRANSMITTANCE" when Kind says absorbance because the
	// reader converted it), "" if none: messages quote what the file says.
	Units string
	// Warnings are what reading found worth a look but not a stop: times
	// asked for that the files' own headers contradict.
	Warnings []string
	// Notes say how the spectra were put on one axis (a rounded axis
	// taken as it is, spectra interpolated with --resample).
	Notes []string
	// Left are the files --drop named that were left out of a folder as
	// no spectra of the series (FolderOptions.Drop), by base name.
	Left []string

	// scan is what the parse took channel by channel for the single-beam
	// assembly (FolderOptions.ScanBeams), nil when nothing was; it
	// describes Values as parsed and must be dropped if they are changed
	// in place (a new matrix, from Keep or resampling, disowns it).
	scan *channelScan
}

// shown is the series' name in notes kept in the results (Label).
func (s *Series) shown() string {
	if s.Label != "" {
		return s.Label
	}
	return s.Source
}

// Spectrum is one axis/value pair of columns.
type Spectrum struct {
	AxisName string
	Axis     []float64
	Values   []float64
	Source   string
	Kind     string
	Units    string    // JCAMP-DX ##YUNITS as written, "" for other formats
	Title    string    // JCAMP-DX ##TITLE, "" for other formats
	Acquired time.Time // JCAMP-DX ##LONGDATE (or ##DATE and ##TIME); zero when not given
	// dateFault says why a header's date gave no Acquired (jcampDateFault),
	// on dateLine; "" when none was given.
	dateFault string
	dateLine  int
	// Note says how the axis was read when not as written (a wavelength
	// in µm put in nm, micrometresToNanometres), "" otherwise; a series of such
	// spectra keeps it among its Notes.
	Note string
	// AxisGuessed says no title or unit named the axis: AxisName was
	// guessed from its values (guessAxisName).
	AxisGuessed bool
}

// InputError is an error in a user's file, reported with its place.
type InputError struct {
	File string
	Line int // 1-based; 0 when not about one line
	Msg  string
	Hint string
}

func (e *InputError) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		fmt.Fprintf(&b, ":%d", e.Line)
	}
	b.WriteString(": ")
	b.WriteString(e.Msg)
	if e.Hint != "" {
		b.WriteString("; ")
		b.WriteString(e.Hint)
	}
	return b.String()
}

func inputErr(file string, line int, hint, format string, a ...any) error {
	return &InputError{File: file, Line: line, Msg: fmt.Sprintf(format, a...), Hint: hint}
}

// maxFileBytes bounds what a reader accepts, so a wrong path (a disk image,
// a video) fails fast instead of exhausting memory.
const maxFileBytes = 4 << 30

func readAll(path string) ([]byte, error) {
	f, size, err := openRegular(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if size > fileLimit {
		return nil, tooLarge(path, size, fileLimit)
	}
	raw, err := readText(f, path, size, fileLimit, MaxLineBytes)
	if err != nil {
		return nil, err
	}
	raw = bytes.TrimPrefix(raw, []byte("\xef\xbb\xbf"))
	if bytes.IndexByte(raw, 0) >= 0 {
		return nil, inputErr(path, 0, "give a text export (CSV or JCAMP-DX)", "is a binary file, not text")
	}
	return raw, nil
}

func unwrapPathErr(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// line is one line of a text file with its 1-based number.
type line struct {
	n    int
	text []byte
}

// splitLines cuts a file into lines, dropping CR, blank lines and '#'
// comment lines (common practice in CSV exports).
func splitLines(raw []byte) []line {
	var out []line
	n := 0
	for len(raw) > 0 {
		n++
		i := bytes.IndexByte(raw, '\n')
		var l []byte
		if i < 0 {
			l, raw = raw, nil
		} else {
			l, raw = raw[:i], raw[i+1:]
		}
		l = bytes.TrimRight(l, "\r")
		t := bytes.TrimSpace(l)
		if len(t) == 0 || t[0] == '#' || onlySeparators(t) {
			continue
		}
		out = append(out, line{n, l})
	}
	return out
}

// onlySeparators is true for lines such as ",,,," that spreadsheets write
// below the data; they hold no cell and count as blank.
func onlySeparators(t []byte) bool {
	for _, c := range t {
		if c != ',' && c != ';' && c != '\t' && c != ' ' {
			return false
		}
	}
	return true
}

// detectSeparator picks the field separator of a header or data line.
func detectSeparator(l []byte) byte {
	for _, c := range []byte{'\t', ';', ','} {
		if bytes.IndexByte(l, c) >= 0 {
			return c
		}
	}
	return ' '
}

// fields splits a line at sep (space: runs of blanks), trimming spaces and
// quotes; a trailing separator gives no extra field.
func fields(l []byte, sep byte, out [][]byte) [][]byte {
	out = out[:0]
	if sep == ' ' {
		for _, f := range bytes.Fields(l) {
			out = append(out, bytes.Trim(f, `"'`))
		}
		return out
	}
	for {
		// A double-quoted cell may hold the separator ("run 7, cell B").
		if t := bytes.TrimLeft(l, " "); len(t) > 0 && t[0] == '"' {
			if end := bytes.IndexByte(t[1:], '"'); end >= 0 {
				rest := bytes.TrimLeft(t[end+2:], " ")
				if len(rest) == 0 || rest[0] == sep {
					out = append(out, bytes.TrimSpace(t[1:end+1]))
					if len(rest) == 0 {
						break
					}
					l = rest[1:]
					continue
				}
			}
		}
		i := bytes.IndexByte(l, sep)
		var f []byte
		if i < 0 {
			f = l
		} else {
			f = l[:i]
		}
		f = bytes.TrimSpace(f)
		f = bytes.Trim(f, `"'`)
		out = append(out, f)
		if i < 0 {
			break
		}
		l = l[i+1:]
	}
	if len(out) > 1 && len(out[len(out)-1]) == 0 {
		out = out[:len(out)-1]
	}
	return out
}

// parseNumber reads a plain decimal number (decimal.Plain) without
// copying the bytes; NaN and Inf are refused as not finite, any other
// syntax strconv knows (hexadecimal, digit separators '_') as no number.
func parseNumber(b []byte) (float64, error) {
	if len(b) == 0 {
		return 0, errors.New("empty cell")
	}
	if v, ok := decimal.Parse(b); ok {
		return v, nil
	}
	if !decimal.Plain(b) && !nonFinite(b) {
		return 0, fmt.Errorf("%s is not a number", quoteCell(b))
	}
	v, err := strconv.ParseFloat(unsafe.String(&b[0], len(b)), 64)
	if err != nil {
		var ne *strconv.NumError
		if errors.As(err, &ne) && errors.Is(ne.Err, strconv.ErrRange) {
			return 0, fmt.Errorf("%s is too large (or too small) to be a measured value", quoteCell(b))
		}
		return 0, fmt.Errorf("%s is not a number", quoteCell(b))
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("%s is not a finite number", quoteCell(b))
	}
	if math.Abs(v) > maxMagnitude {
		return 0, fmt.Errorf("%s is too large to be a measured value", quoteCell(b))
	}
	return v, nil
}

// nonFinite says b is NaN, Inf or Infinity with an optional sign, in any
// case: the words strconv reads as non-numbers, which parseNumber refuses
// as not finite.
func nonFinite(b []byte) bool {
	if len(b) > 0 && (b[0] == '-' || b[0] == '+') {
		b = b[1:]
	}
	s := unsafe.String(unsafe.SliceData(b), len(b))
	return strings.EqualFold(s, "nan") || strings.EqualFold(s, "inf") || strings.EqualFold(s, "infinity")
}

// parseCell reads a number from a file whose field separator is sep. When
// the separator is not a comma, a decimal comma is unambiguous ("1234,5;0,12",
// the export of many European instrument and spreadsheet settings) and is
// read as a point; in comma-separated files it cannot be told from a field
// separator and stays an error with advice.
func parseCell(b []byte, sep byte) (float64, error) {
	v, err := parseNumber(b)
	if err == nil || sep == ',' {
		return v, err
	}
	i := bytes.IndexByte(b, ',')
	if i < 0 || bytes.IndexByte(b[i+1:], ',') >= 0 || bytes.IndexByte(b, '.') >= 0 || len(b) > 64 {
		return v, err
	}
	var tmp [64]byte
	c := append(tmp[:0], b...)
	c[i] = '.'
	if w, err2 := parseNumber(c); err2 == nil {
		return w, nil
	}
	return v, err
}

// maxMagnitude bounds accepted values: no intensity, absorbance, axis or time
// comes near it, and squares of sums of such values stay finite, so a
// corrupt cell cannot turn into Inf or NaN inside the factor analysis.
const maxMagnitude = 1e100

// quoteCell quotes a cell for a message, cut short so that a garbage line of
// megabytes still gives a one-line error of readable length.
func quoteCell(b []byte) string {
	const most = 40
	if len(b) > most {
		return strconv.Quote(string(b[:most])) + "…"
	}
	return strconv.Quote(string(b))
}

func looksLikeDecimalComma(b []byte) bool {
	i := bytes.IndexByte(b, ',')
	if i <= 0 || i == len(b)-1 {
		return false
	}
	_, err1 := strconv.ParseFloat(string(b[:i]), 64)
	_, err2 := strconv.ParseFloat(string(b[i+1:]), 64)
	return err1 == nil && err2 == nil
}

// ReadMatrixCSV reads the matrix layout: header "axis,t1,t2,…" (times in
// seconds), then one row per axis point. Rows are parsed in parallel chunks;
// each value lands at a fixed place, so the result does not depend on the
// number of threads.
//
// A large file is mapped rather than copied (readMapped), so memory is the
// values matrix plus the page cache, about the size of the data.
func ReadMatrixCSV(path string) (*Series, error) { return readMatrixCSV(path, -1) }

// readMatrixCSV is ReadMatrixCSV; with pre ≥ 0 the parse also scans each
// channel for the single-beam assembly with pre spectra before the reaction
// (channelScan), when the times come in ascending order in the file.
func readMatrixCSV(path string, pre int) (*Series, error) {
	raw, release, err := readMapped(path)
	if err != nil {
		return nil, err
	}
	defer release()
	var s *Series
	if ferr := guardFault(func() { s, err = parseMatrixCSV(path, raw, pre) }); ferr != nil {
		return nil, inputErr(path, 0, "do not change the file while it is read", "%v", ferr)
	}
	return s, err
}

// chunkStarts, when not nil, is called as each chunk of rows of a matrix
// CSV is begun (a variable so that a test can make a chunk's parse panic).
var chunkStarts func(c int)

func parseMatrixCSV(path string, raw []byte, pre int) (*Series, error) {
	lines := splitLines(raw)
	if len(lines) == 0 {
		return nil, inputErr(path, 0, "export the spectra with a header row: axis name, then one time per spectrum", "is empty")
	}
	lines = skipTitles(lines)
	m, err := fileMarks(path, lines, detectSeparator(lines[0].text), -1)
	if err != nil {
		return nil, err
	}
	h, err := parseMatrixHeader(path, lines[0], m)
	if err != nil {
		return nil, err
	}
	rows := lines[1:]
	if len(rows) == 0 {
		return nil, inputErr(path, lines[0].n, "add one row per axis point below the header", "has a header but no data rows")
	}
	p := newMatrixParse(path, rows, h, pre)
	if err := p.parseChunks(); err != nil {
		return nil, err
	}
	return p.series(h.axisName)
}

// skipTitles drops the single-cell lines before the header: titles, quoted
// or not, that some exports put first. A line without any of the file's
// separators is split as the rows below it are (titleSeparator): a title
// "Urethane run catalyst 1.00" has blanks but no comma, and split at its
// blanks it was taken for the header ("run" is not a number). A single
// number is data, not a title.
func skipTitles(lines []line) []line {
	sep := titleSeparator(lines)
	for len(lines) > 1 {
		s := detectSeparator(lines[0].text)
		if s == ' ' {
			s = sep
		}
		hf := fields(lines[0].text, s, nil)
		if len(hf) != 1 {
			break
		}
		if _, err := parseNumber(hf[0]); err == nil {
			break
		}
		lines = lines[1:]
	}
	return lines
}

// titleSeparator is the separator of the first of the file's first lines
// that holds a tab, a semicolon or a comma (detectSeparator), the header's
// or the rows'; a blank when none does (a file split at blanks).
func titleSeparator(lines []line) byte {
	for _, l := range lines[:min(len(lines), 16)] {
		if s := detectSeparator(l.text); s != ' ' {
			return s
		}
	}
	return ' '
}

// matrixHeader is what the header row of the matrix layout says: the axis
// name (lower case, "" when blank), and one acquisition time per spectrum;
// marks are the separator every row uses and the file's decimal mark.
type matrixHeader struct {
	axisName string
	marks    marks
	times    []float64
}

// parseMatrixHeader reads the header row, whose separator and decimal mark
// m gives. A header of numbers is refused: it would be read as a
// spectrum's times and the first channel lost.
func parseMatrixHeader(path string, head line, m marks) (matrixHeader, error) {
	hf := fields(head.text, m.sep, nil)
	if len(hf) < 2 {
		return matrixHeader{}, inputErr(path, head.n, "the first row must be the axis name, then one acquisition time (s) per spectrum", "header has %d column(s)", len(hf))
	}
	axisName := strings.ToLower(strings.TrimSpace(string(hf[0])))
	if _, err := parseNumber(hf[0]); err == nil {
		return matrixHeader{}, inputErr(path, head.n, "add a header row: axis name (wavenumber or wavelength), then one time in seconds per spectrum", "first row is numbers, not a header")
	}
	if namesTime(axisName) {
		return matrixHeader{}, inputErr(path, head.n, "a matrix CSV holds one channel per line: the axis in the first column, "+
			"one acquisition time (s) per spectrum in the header; this file seems to hold one spectrum per line: "+
			"write it the other way round (wavenumber,t1,t2,…)", "the first header cell %q names time, not the spectral axis", string(hf[0]))
	}
	times, err := parseHeaderTimes(path, head.n, hf[1:], m)
	if err != nil {
		return matrixHeader{}, err
	}
	return matrixHeader{axisName: axisName, marks: m, times: times}, nil
}

// namesTime says a matrix header's first cell (lower case) names time:
// "time", "time_s", "t (min)", "seconds". A file with one spectrum per line
// has times in its first column, and read as it stands its spectra would be
// its channels: 601 points became 601 "spectra" of 2 points each, resolved
// without a word.
func namesTime(cell string) bool {
	word, _, _ := strings.Cut(strings.Trim(cell, `"' `), " ")
	word, _, _ = strings.Cut(word, "(")
	word, _, _ = strings.Cut(word, "[")
	word, _, _ = strings.Cut(word, "/")
	word, _, _ = strings.Cut(word, "_")
	switch word {
	case "t", "time", "times", "timestamp", "s", "sec", "secs", "second", "seconds", "min", "mins", "minute", "minutes", "h", "hour", "hours":
		return true
	}
	return false
}

// parseHeaderTimes reads the acquisition times, each spectrum's own: two
// spectra at one time cannot both be placed on the time axis.
func parseHeaderTimes(path string, lineNo int, cells [][]byte, m marks) ([]float64, error) {
	n := len(cells)
	times := make([]float64, n)
	seen := map[float64]int{}
	for j := 0; j < n; j++ {
		v, err := m.cell(cells[j])
		if err != nil {
			return nil, inputErr(path, lineNo, m.hint(cells[j], "header cells after the axis name must be acquisition times in seconds"), "column %d: %v", j+2, err)
		}
		if p, dup := seen[v]; dup {
			return nil, inputErr(path, lineNo, "each spectrum needs its own time", "columns %d and %d have the same time %g s", p+2, j+2, v)
		}
		seen[v] = j
		times[j] = v
	}
	return times, nil
}

// matrixChunk is how many rows (channels) one worker parses at a time:
// small, so that the workers end together however late one began or how
// much other work took its processor (the queue hands each worker the next
// chunk as it is free). With 512 rows a chunk of the 2000 × 3001 series
// took about 34 ms, and a worker that began 14 ms late (its processor
// busy) ended 20 ms after the other, one core idle meanwhile; 64 rows take
// about 4 ms, and a chunk costs one receive from the queue.
const matrixChunk = 64

// matrixParse is the parse of the data rows of the matrix layout: chunks of
// rows taken by workers from a queue, each value written to its fixed place
// in vals (spectrum j, channel i), so the result does not depend on the
// number of threads.
type matrixParse struct {
	path  string
	rows  []line
	marks marks
	n, m  int // spectra, channels
	times []float64
	axis  []float64
	vals  *mat.Dense
	// scan, when not nil, is given each channel in time order while its
	// values are in hand (the times ascend in the file).
	scan *channelScan
	work chan int
	errs []error // the first bad row of each chunk
}

// newMatrixParse queues every chunk of rows.
func newMatrixParse(path string, rows []line, h matrixHeader, pre int) *matrixParse {
	n, m := len(h.times), len(rows)
	// Every value is written by the parse or the matrix is dropped with the
	// error, so it need not be cleared first.
	p := &matrixParse{path: path, rows: rows, marks: h.marks, n: n, m: m, times: h.times,
		axis: make([]float64, m), vals: fresh.Overwritten(n, m)}
	if pre >= 0 && slices.IsSorted(h.times) {
		p.scan = newChannelScan(n, m, pre)
	}
	nch := (m + matrixChunk - 1) / matrixChunk
	p.errs = make([]error, nch)
	p.work = make(chan int, nch)
	for c := 0; c < nch; c++ {
		p.work <- c
	}
	close(p.work)
	return p
}

// parseChunks runs the workers and returns the first error in file order. A
// fault on the mapped file inside a worker becomes an error (guardFault)
// rather than a crash; any other panic (a bug) ends its worker, the others
// drain the chunks, and the lowest chunk's is raised again here.
func (p *matrixParse) parseChunks() error {
	workers := min(runtime.GOMAXPROCS(0), len(p.errs))
	faults := make([]error, workers)
	var wg sync.WaitGroup
	var fault fanout.Fault
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			c := 0
			defer fault.Catch(&c)
			faults[w] = guardFault(func() { p.parseRows(&c) })
		}()
	}
	wg.Wait()
	fault.Raise()
	for _, err := range faults {
		if err != nil {
			return inputErr(p.path, 0, "do not change the file while it is read", "%v", err)
		}
	}
	for _, err := range p.errs {
		if err != nil {
			return err
		}
	}
	return nil
}

// parseRows is one worker's loop, *at the chunk it is on (for the fault
// report). A chunk stops at its first bad row; the worker goes on to the
// next chunk, so that the error reported is the first in the file.
func (p *matrixParse) parseRows(at *int) {
	var buf [][]byte
	var line, diffs []float64 // one channel's values, and its time differences
	var near float64          // the middle of the last channel's differences
	if p.scan != nil {
		line, diffs = make([]float64, p.n), make([]float64, p.n)
	}
	for c := range p.work {
		*at = c
		if chunkStarts != nil {
			chunkStarts(c)
		}
		for i := c * matrixChunk; i < min(p.m, (c+1)*matrixChunk); i++ {
			var err error
			if buf, err = p.parseRow(i, buf, line); err != nil {
				p.errs[c] = err
				break
			}
			if line != nil {
				p.scan.channel(i, line, diffs, &near)
			}
		}
	}
}

// parseRow parses row i into the axis and column i of the values (through
// line, when the channel is to be scanned), reusing buf for its cells.
func (p *matrixParse) parseRow(i int, buf [][]byte, line []float64) ([][]byte, error) {
	n, mk, l := p.n, p.marks, p.rows[i]
	sep := mk.sep
	raw2 := p.vals.RawMatrix()
	buf = fields(l.text, sep, buf)
	if len(buf) != n+1 {
		hint := fmt.Sprintf("every row needs %d cells (axis + %d spectra) like the header", n+1, n)
		if sep == ',' && len(buf) > n+1 {
			hint += "; if the file uses decimal commas, export with decimal points"
		}
		return buf, inputErr(p.path, l.n, hint, "row has %d cells, header has %d", len(buf), n+1)
	}
	var err error
	if p.axis[i], err = mk.cell(buf[0]); err != nil {
		return buf, inputErr(p.path, l.n, mk.hint(buf[0], "the first column must be the axis value"), "axis cell: %v", err)
	}
	for j := 0; j < n; j++ {
		v, err := mk.cell(buf[j+1])
		if err != nil {
			hint := mk.hint(buf[j+1], "replace it with a number, or remove the row")
			return buf, inputErr(p.path, l.n, hint, "column %d (time %g s): %v", j+2, p.times[j], err)
		}
		if line != nil {
			line[j] = v
		} else {
			raw2.Data[j*raw2.Stride+i] = v
		}
	}
	for j, v := range line {
		raw2.Data[j*raw2.Stride+i] = v
	}
	return buf, nil
}

// series checks the axis and makes the Series, sorted by time.
func (p *matrixParse) series(axisName string) (*Series, error) {
	if err := checkAxis(p.path, p.axis, func(i int) int { return p.rows[i].n }); err != nil {
		return nil, err
	}
	guessed := len(strings.Fields(axisName)) == 0
	axisName, note := matrixAxisName(axisName, p.axis)
	names := make([]string, p.n)
	for j := range names {
		names[j] = fmt.Sprintf("%s column %d", p.path, j+2)
	}
	s := &Series{AxisName: axisName, AxisGuessed: guessed, Axis: p.axis, Times: p.times, Names: names, Values: p.vals, Source: p.path}
	if p.scan != nil {
		p.scan.values = p.vals
		s.scan = p.scan
	}
	if note != "" {
		s.Notes = append(s.Notes, note)
	}
	if note := headerOrderNote(p.times); note != "" {
		s.Notes = append(s.Notes, note)
	}
	s.sortByTime()
	return s, nil
}

// headerOrderNote says that a matrix header's times are not in ascending
// order, which sortByTime puts them in: every result is in time order, and
// a header typed by hand with two times swapped (150, 120) would otherwise
// be taken silently for two spectra recorded out of turn. "" when they
// ascend.
func headerOrderNote(times []float64) string {
	down := len(times) > 1
	first := -1
	for i := 1; i < len(times); i++ {
		if times[i] < times[i-1] {
			if first < 0 {
				first = i
			}
		} else {
			down = false
		}
	}
	switch {
	case first < 0:
		return ""
	case down:
		return fmt.Sprintf("the header's times run downwards, from %g s to %g s: the spectra are taken in ascending time order, last column first", times[0], times[len(times)-1])
	}
	return fmt.Sprintf("the header's times are not in ascending order (column %d is %g s, column %d %g s): the spectra are taken in time order, not in the order of the columns; check the header if that is not how they were recorded",
		first+1, times[first-1], first+2, times[first])
}

// matrixAxisName is the axis name of a matrix CSV from its header cell
// (lower case), recognised as a per-file column title is (cleanAxisName):
// "wavenumber (cm-1)" is the wavenumber in cm⁻¹ every output writes as such
// (JCAMP-DX ##XUNITS=1/CM). A wavelength in µm is put in nm, the unit
// "wavelength" has in every output, by ×1000 in place, and the note says
// so; a header naming neither is kept as written (a chemical shift, a
// channel number). A blank one is guessed from the values.
func matrixAxisName(header string, axis []float64) (name, note string) {
	if header == "" {
		return guessAxisName(axis), ""
	}
	name = cleanAxisName(header, axis)
	if name != "wavenumber" && micrometres(header) {
		return "wavelength", micrometresToNanometres(axis, header)
	}
	if name != "wavenumber" && name != "wavelength" {
		return header, unknownAxisNote(header)
	}
	return name, ""
}

// unknownAxisNote says that a matrix header's axis name is none the
// readers know: the values are kept as written, and the one check that
// needs a unit, the water-vapour lines' ranges, reads any axis but a
// wavelength as wavenumbers in cm⁻¹ (pipeline's linesAxisOf).
func unknownAxisNote(header string) string {
	return fmt.Sprintf("the axis header %s names no known axis: its values are kept as written, and read as wavenumbers in cm⁻¹ where a unit matters (the water-vapour check's line ranges); write wavenumber (cm-1) or wavelength (nm) as the first header cell if it is either",
		quoteCell([]byte(header)))
}

// micrometresToNanometres puts an axis given in µm in nm, ×1000 in place
// (SI prefixes: 1 µm = 1000 nm), the unit "wavelength" has in every
// output, and returns the note that says so, naming the axis as written
// (a matrix header, a file's column title, a JCAMP-DX ##XUNITS): one
// wording for every format.
func micrometresToNanometres(axis []float64, written string) string {
	for i := range axis {
		axis[i] *= 1000
	}
	return fmt.Sprintf("the axis %q is a wavelength in µm: read as nm (×1000)", written) + nmIsOutputUnit
}

// nmIsOutputUnit ends the note of an axis read from µm when nm is the
// unit of the outputs; a single spectrum put on a data axis in cm⁻¹
// (InUnitOf) says what became of its nm instead.
const nmIsOutputUnit = ", the unit of every output and of --exclude and other ranges"

// micrometres says a column title gives its unit as µm: "wavelength (um)",
// "λ [µm]", "micrometers" (JCAMP-DX 4.24 ##XUNITS=MICROMETERS).
func micrometres(title string) bool {
	words := strings.FieldsFunc(strings.ToLower(title), func(r rune) bool {
		return !unicode.IsLetter(r)
	})
	for _, w := range words {
		switch w {
		case "um", "µm", "μm", "micrometer", "micrometers", "micrometre", "micrometres", "micron", "microns":
			return true
		}
	}
	return false
}

// spectrumNotes are the distinct notes of the spectra of a series on how
// their axes were read, in the order of the rows: one for a folder whose
// files all give µm, not one per file.
func spectrumNotes(sps []*Spectrum, order []int) []string {
	var notes []string
	for _, i := range order {
		if n := sps[i].Note; n != "" && !slices.Contains(notes, n) {
			notes = append(notes, n)
		}
	}
	return notes
}

// checkAxis requires a strictly monotonic axis of at least two points.
func checkAxis(path string, axis []float64, lineOf func(int) int) error {
	if len(axis) < 2 {
		return inputErr(path, 0, "a spectrum needs at least two axis points: is it a peak list or a single reading rather than a spectrum?", "has only %d axis point(s)", len(axis))
	}
	up := axis[1] > axis[0]
	for i := 1; i < len(axis); i++ {
		if axis[i] == axis[i-1] {
			return inputErr(path, lineOf(i), "remove the repeated point", "axis value %g repeats the previous row", axis[i])
		}
		if (axis[i] > axis[i-1]) != up {
			return inputErr(path, lineOf(i), "the axis must run steadily up or steadily down; sort the rows", "axis value %g breaks the order of the rows before it", axis[i])
		}
	}
	return nil
}

// sortByTime orders rows by acquisition time (never by name).
func (s *Series) sortByTime() {
	n := len(s.Times)
	idx := make([]int, n)
	sorted := true
	for i := range idx {
		idx[i] = i
		if i > 0 && s.Times[i] < s.Times[i-1] {
			sorted = false
		}
	}
	if sorted {
		return
	}
	// Stable, so spectra recorded at the same time keep their file order;
	// O(n log n) (an insertion sort took minutes on 3·10⁵ descending times).
	slices.SortStableFunc(idx, func(a, b int) int { return cmp.Compare(s.Times[a], s.Times[b]) })
	_, m := s.Values.Dims()
	v := fresh.Overwritten(n, m) // every row is set below
	t := make([]float64, n)
	nm := make([]string, n)
	for r, i := range idx {
		v.SetRow(r, s.Values.RawRowView(i))
		t[r], nm[r] = s.Times[i], s.Names[i]
	}
	s.Values, s.Times, s.Names = v, t, nm
}

// ReadSpectrumFile reads a one-spectrum export: two numeric columns (axis,
// value) after up to a few title or column-name lines.
func ReadSpectrumFile(path string) (*Spectrum, error) {
	raw, err := readAll(path)
	if err != nil {
		return nil, err
	}
	lines := splitLines(raw)
	if len(lines) == 0 {
		return nil, inputErr(path, 0, "export the spectrum as two columns: axis, value", "is empty")
	}
	start, title := findSpectrumData(lines)
	if start < 0 {
		return nil, inputErr(path, lines[0].n, "a spectrum file holds two numeric columns (axis, value), after at most a few title lines", "no numeric data in the first lines")
	}
	sep := detectSeparator(lines[start].text)
	m, err := fileMarks(path, lines[start:], sep, -1)
	if err != nil {
		return nil, err
	}
	axis, vals, err := readSpectrumRows(path, lines[start:], m)
	if err != nil {
		return nil, err
	}
	lineOf := func(i int) int { return lines[start+i].n }
	if err := checkAxis(path, axis, lineOf); err != nil {
		return nil, err
	}
	name, note, guessed := title.axisName(sep, axis)
	return &Spectrum{AxisName: name, Axis: axis, Values: vals, Source: path, Note: note, AxisGuessed: guessed}, nil
}

// spectrumTitle is the last non-numeric line before a spectrum's data
// that could be its column titles: its first cell in lower case, its
// separator and its number of cells.
type spectrumTitle struct {
	first string
	sep   byte
	cells int
}

// findSpectrumData finds the first of the first 20 lines whose cells are
// all numbers (-1 if none) and the column titles before it. The column
// titles are the last non-numeric line before the data; earlier lines are
// free-text titles. A quoted number with a comma in a comma-separated line
// counts as one here; which it is, the file's numbers decide (fileMarks).
func findSpectrumData(lines []line) (start int, title spectrumTitle) {
	var buf [][]byte
	for i, l := range lines {
		if i >= 20 {
			break
		}
		sep := detectSeparator(l.text)
		buf = fields(l.text, sep, buf)
		allNum := len(buf) > 0
		for _, f := range buf {
			if _, err := parseCell(f, sep); err != nil && (sep != ',' || commaMark(f) == markNone) {
				allNum = false
				break
			}
		}
		if allNum {
			return i, title
		}
		if len(buf) >= 1 && len(buf) <= 3 && len(buf[0]) > 0 {
			title = spectrumTitle{first: strings.ToLower(string(buf[0])), sep: sep, cells: len(buf)}
		}
	}
	return -1, title
}

// readSpectrumRows reads the axis and value columns of the data lines,
// refusing the first row that is not two numbers, with a hint for the
// decimal commas that split a comma-separated row into four cells.
func readSpectrumRows(path string, rows []line, m marks) (axis, vals []float64, err error) {
	sep := m.sep
	axis = make([]float64, 0, len(rows))
	vals = make([]float64, 0, len(rows))
	var buf [][]byte
	for _, l := range rows {
		buf = fields(l.text, sep, buf)
		if len(buf) != 2 {
			if len(buf) == 1 && sep == ' ' {
				return nil, nil, inputErr(path, l.n, "give two columns: axis, value", "row has one column")
			}
			hint := "a spectrum file holds exactly two columns: axis, value"
			if len(buf) == 4 && splitAtDecimalComma(buf, sep, 0) {
				hint = "the file seems to use decimal commas: use a semicolon or tab separator, or decimal points"
			}
			return nil, nil, inputErr(path, l.n, hint, "row has %d columns", len(buf))
		}
		x, err := m.cell(buf[0])
		if err != nil {
			return nil, nil, inputErr(path, l.n, m.hint(buf[0], "the first column must be the axis value"), "axis cell: %v", err)
		}
		y, err := m.cell(buf[1])
		if err != nil {
			return nil, nil, inputErr(path, l.n, m.hint(buf[1], "replace it with a number, or remove the row"), "value cell: %v", err)
		}
		axis = append(axis, x)
		vals = append(vals, y)
	}
	return axis, vals, nil
}

// axisName names the axis from the column titles, or guesses it from the
// values. A line that names no known axis is a column title only if it is
// laid out like the data (two cells, the data's separator sep) and has no
// digits: "x,y" is, "Run 7" is not; "Wavenumber (cm-1)" is, digits and all.
// A column title giving µm, "Wavelength (um)", puts the axis in nm in
// place, with the note that says so, as a matrix header does
// (matrixAxisName). guessed says no title named it.
func (t spectrumTitle) axisName(sep byte, axis []float64) (name, note string, guessed bool) {
	name = cleanAxisName(t.first, axis)
	title := name == "wavenumber" || name == "wavelength" ||
		!(strings.ContainsAny(t.first, "0123456789") || t.sep != sep || t.cells != 2)
	switch {
	case !title:
		return guessAxisName(axis), "", true
	case name != "wavenumber" && micrometres(t.first):
		return "wavelength", micrometresToNanometres(axis, t.first), false
	}
	return name, "", len(strings.Fields(t.first)) == 0
}

// cleanAxisName maps a column title such as "Wavenumber (cm-1)" to the
// trade's plain axis name.
func cleanAxisName(name string, axis []float64) string {
	n := strings.ToLower(name)
	switch {
	case strings.Contains(n, "wavenumber") || strings.Contains(n, "wellenzahl") || strings.Contains(n, "nombre d'onde") ||
		strings.Contains(n, "cm-1") || strings.Contains(n, "cm^-1"):
		return "wavenumber"
	case strings.Contains(n, "wavelength") || strings.Contains(n, "wellenlänge") || strings.Contains(n, "longueur d'onde") || strings.Contains(n, "nm"):
		return "wavelength"
	}
	f := strings.Fields(n)
	if len(f) == 0 {
		// Empty, or only spaces (a title of blanks, a lone quote trimmed).
		return guessAxisName(axis)
	}
	return f[0]
}

// guessAxisName: infrared exports without a title are most often in cm⁻¹
// (common practice); UV-visible ones in nm between 190 and 1100.
func guessAxisName(axis []float64) string {
	lo, hi := math.Min(axis[0], axis[len(axis)-1]), math.Max(axis[0], axis[len(axis)-1])
	if lo >= 150 && hi <= 1100 && hi-lo < 1000 {
		return "wavelength"
	}
	return "wavenumber"
}

// ReadSpectrum reads one spectrum (a blank or a reference) from a two-column
// file, a one-spectrum matrix CSV, or a JCAMP-DX file.
func ReadSpectrum(path string) (*Spectrum, error) {
	if isJCAMP(path) {
		ss, err := readJCAMPSeries(path)
		if err != nil {
			return nil, err
		}
		if len(ss) != 1 {
			return nil, inputErr(path, 0, "give a file with a single spectrum", "holds %d spectra", len(ss))
		}
		return ss[0], nil
	}
	sp, err := ReadSpectrumFile(path)
	if err == nil {
		return sp, nil
	}
	// A matrix CSV with exactly one spectrum column is a spectrum too.
	if s, err2 := ReadMatrixCSV(path); err2 == nil && len(s.Times) == 1 {
		sp := &Spectrum{AxisName: s.AxisName, AxisGuessed: s.AxisGuessed, Axis: s.Axis, Values: s.Values.RawRowView(0), Source: path}
		if len(s.Notes) > 0 {
			sp.Note = s.Notes[0] // the header's µm, the only note a matrix read gives
		}
		return sp, nil
	}
	return nil, err
}
