package jcamp

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/bandsolve/bandsolve/internal/regular"
)

// Limits that keep memory bounded whatever the input claims.
const (
	// MaxLineLength is the longest line accepted, in bytes. The standard
	// asks for at most 80 characters; real files are sometimes longer.
	MaxLineLength = 1 << 18
	// MaxPoints is the largest number of points accepted in one file, summed
	// over its blocks (a long LINK series of spectra still fits).
	MaxPoints = 1 << 22
	// maxLabels and maxLabelBytes bound the stored labelled data records.
	maxLabels     = 1 << 17
	maxLabelBytes = 16 << 20
)

// Block is one spectrum of a JCAMP-DX file.
type Block struct {
	Title, DataType, XUnits, YUnits string
	// X and Y are the abscissae and ordinates in file order, already
	// multiplied by XFACTOR and YFACTOR.
	X, Y []float64
	// Labels holds every labelled data record of the block in file order,
	// with names normalised (see NormaliseLabel). The value of a tabular
	// record such as XYDATA is its variable list, e.g. "(X++(Y..Y))".
	Labels []Label
	// Line is the line of the block's ##TITLE=.
	Line int
	// Rows are the block's data lines in file order, each with the index
	// of the first point it holds, so that a fault of one point (a
	// repeated X) can name its line (PointLine).
	Rows []Row
}

// Row is one data line: its line number and the index of the first point
// it holds.
type Row struct {
	Line, First int
}

// PointLine is the line that holds point i of the block, the ##TITLE=
// line when the data lines are not known.
func (b Block) PointLine(i int) int {
	k := sort.Search(len(b.Rows), func(k int) bool { return b.Rows[k].First > i })
	if k == 0 {
		return b.Line
	}
	return b.Rows[k-1].Line
}

// Label is one labelled data record "##NAME=value". Values that run on over
// several lines are joined with "\n"; comments are removed.
type Label struct {
	Name, Value string
	Line        int
}

// ParseError reports what is wrong at a line of a named input.
type ParseError struct {
	Name string // file name as given to Parse
	Line int    // 1-based; 0 when the error concerns the whole input
	Msg  string // "what is wrong; what to do"
	Err  error  // underlying cause, if any
}

func (e *ParseError) Error() string {
	if e.Line > 0 {
		return fmt.Sprintf("%s:%d: %s", e.Name, e.Line, e.Msg)
	}
	return fmt.Sprintf("%s: %s", e.Name, e.Msg)
}

func (e *ParseError) Unwrap() error { return e.Err }

// NormaliseLabel upper-cases a label name and drops the spaces, dashes,
// slashes and underscores that the standard says to ignore when comparing
// labels (from memory of JCAMP-DX 4.24 §4; jcampconverter drops " _-" too).
func NormaliseLabel(name string) string {
	var b strings.Builder
	b.Grow(len(name))
	for i := 0; i < len(name); i++ {
		c := name[i]
		switch {
		case c == ' ' || c == '\t' || c == '-' || c == '_' || c == '/':
		case c >= 'a' && c <= 'z':
			b.WriteByte(c - 'a' + 'A')
		default:
			b.WriteByte(c)
		}
	}
	return b.String()
}

// Value returns the value of the first label with the given name, which is
// normalised before comparison.
func (b Block) Value(name string) (string, bool) {
	n := NormaliseLabel(name)
	for _, l := range b.Labels {
		if l.Name == n {
			return l.Value, true
		}
	}
	return "", false
}

// Kind tells from YUNITS what the ordinates are: "absorbance",
// "transmittance", "single-beam" (arbitrary units or counts, as for a
// single-beam intensity) or "" when the units say nothing usable. The
// YUNITS words are those of the IR standard (common practice for COUNTS).
func (b Block) Kind() string {
	u := strings.ToUpper(b.YUnits)
	switch {
	case strings.Contains(u, "ABSORBANCE"):
		return "absorbance"
	case strings.Contains(u, "TRANSMITTANCE"), strings.Contains(u, "TRANSMISSION"):
		return "transmittance"
	case strings.Contains(u, "ARBITRARY"), strings.Contains(u, "COUNTS"),
		strings.Contains(strings.ReplaceAll(u, " ", ""), "SINGLEBEAM"):
		return "single-beam"
	}
	return ""
}

// ReadFile parses the JCAMP-DX file at path; see Parse.
func ReadFile(path string) ([]Block, error) {
	f, _, err := regular.Open(path)
	if err != nil {
		return nil, fmt.Errorf("jcamp: %w", err)
	}
	defer f.Close()
	return Parse(f, path)
}

// Parse reads every spectrum block (##XYDATA or ##XYPOINTS) of a JCAMP-DX
// stream; a LINK file gives several. Blocks that hold only a peak table or
// NTUPLES are skipped, and are an error when the input holds nothing else.
// name is used in error messages, which are *ParseError values of the form
// "name:line: what is wrong; what to do". Reading stops at the first error:
// a file whose checks fail gives no blocks at all.
func Parse(r io.Reader, name string) ([]Block, error) {
	p := &parser{name: name}
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 4096), MaxLineLength)
	sc.Split(splitLines)
	for sc.Scan() {
		p.line++
		if err := p.handle(sc.Text()); err != nil {
			return nil, err
		}
	}
	if err := sc.Err(); err != nil {
		if errors.Is(err, bufio.ErrTooLong) {
			return nil, p.errf(p.line+1, err, "line longer than %d bytes; this is not a JCAMP-DX text file or its lines need breaking", MaxLineLength)
		}
		return nil, &ParseError{Name: name, Line: p.line, Msg: "read failed: " + err.Error(), Err: err}
	}
	return p.finish()
}

// splitLines ends lines at LF, CRLF or a lone CR.
func splitLines(data []byte, atEOF bool) (int, []byte, error) {
	if atEOF && len(data) == 0 {
		return 0, nil, nil
	}
	if i := bytes.IndexAny(data, "\r\n"); i >= 0 {
		if data[i] == '\n' {
			return i + 1, data[:i], nil
		}
		if i+1 < len(data) {
			if data[i+1] == '\n' {
				return i + 2, data[:i], nil
			}
			return i + 1, data[:i], nil
		}
		if atEOF {
			return i + 1, data[:i], nil
		}
		return 0, nil, nil // a LF may follow the CR
	}
	if atEOF {
		return len(data), data, nil
	}
	return 0, nil, nil
}

// record says which tabular record the following lines belong to.
type record uint8

const (
	recText     record = iota // continuation of an ordinary label value
	recXYData                 // ##XYDATA=(X++(Y..Y))
	recXYPoints               // ##XYPOINTS=(XY..XY)
	recSkip                   // peak tables, NTUPLES pages: not read
)

// openBlock is a block between its ##TITLE= and ##END=.
type openBlock struct {
	b        Block
	rec      record
	lastText int      // index in b.Labels of the label that text lines continue; -1 none
	pend     []string // continuation lines of that label, not yet joined
	// data of the block's XYDATA or XYPOINTS record
	hasData  bool
	dataKind record
	dataLine int
	raw      []float64 // XYDATA: ordinates; XYPOINTS: x0,y0,x1,y1,...
	checks   []lineCheck
	prevDIF  bool // last line ended in DIF form: next line starts with a Y check
	lastY    float64
	haveY    bool
	limit    int // most points this record may hold
	npoints  int // NPOINTS declared before the data, -1 if absent
	// what else the block held, for the error when nothing is a spectrum
	peakLine, ntuplesLine int
	children              int
	link                  bool
}

// lineCheck is the abscissa written at the start of an XYDATA line.
type lineCheck struct {
	line  int
	x     float64 // as written, before XFACTOR
	res   float64 // printing resolution of x
	index int     // point whose abscissa x should be
}

type parser struct {
	name       string
	line       int
	stack      []*openBlock
	blocks     []Block
	points     int
	labels     int
	labelBytes int
	toks       []token
	// first non-spectrum block, for the error when no spectrum is found
	peakLine, peakTitleLine int
	peakTitle               string
	ntLine                  int
	ntTitle                 string
}

func (p *parser) errf(line int, cause error, format string, args ...any) error {
	return &ParseError{Name: p.name, Line: line, Msg: fmt.Sprintf(format, args...), Err: cause}
}

func (p *parser) top() *openBlock {
	if len(p.stack) == 0 {
		return nil
	}
	return p.stack[len(p.stack)-1]
}

func (p *parser) handle(line string) error {
	if p.line == 1 {
		if strings.HasPrefix(line, "\xef\xbb\xbf") {
			line = line[3:]
		} else if strings.HasPrefix(line, "\xff\xfe") || strings.HasPrefix(line, "\xfe\xff") {
			return p.errf(1, nil, "file is UTF-16 text; save it as ASCII or UTF-8")
		}
	}
	if i := strings.Index(line, "$$"); i >= 0 {
		line = line[:i]
	}
	t := strings.Trim(line, " \t\x1a")
	if strings.HasPrefix(t, "##") {
		return p.label(t)
	}
	ob := p.top()
	if ob == nil {
		if t == "" {
			return nil
		}
		return p.errf(p.line, nil, "text outside a block: %q; a block starts with ##TITLE= and ends with ##END=", clip(t))
	}
	switch ob.rec {
	case recXYData:
		return p.xyDataLine(ob, t)
	case recXYPoints:
		return p.xyPointsLine(ob, t)
	case recSkip:
		return nil
	}
	if t == "" || ob.lastText < 0 {
		return nil
	}
	return p.appendText(ob, t)
}

func clip(s string) string {
	if len(s) > 40 {
		return s[:40] + "…"
	}
	return s
}

func (p *parser) appendText(ob *openBlock, t string) error {
	p.labelBytes += len(t) + 1
	if p.labelBytes > maxLabelBytes {
		return p.errf(p.line, nil, "label values exceed %d bytes; the file is not a spectrum file or is corrupt", maxLabelBytes)
	}
	ob.pend = append(ob.pend, t)
	return nil
}

// flushText joins the continuation lines gathered for the last label; they
// are kept apart until then so that a long value costs linear time.
func (ob *openBlock) flushText() {
	if len(ob.pend) == 0 {
		return
	}
	l := &ob.b.Labels[ob.lastText]
	if l.Value != "" {
		ob.pend = append([]string{l.Value}, ob.pend...)
	}
	l.Value = strings.Join(ob.pend, "\n")
	ob.pend = ob.pend[:0]
}

func (p *parser) label(t string) error {
	eq := strings.IndexByte(t, '=')
	if eq < 0 {
		return p.errf(p.line, nil, "label %q has no '='; write it as ##NAME=value", clip(t))
	}
	name := NormaliseLabel(t[2:eq])
	value := strings.TrimSpace(t[eq+1:])
	if name == "" {
		return p.errf(p.line, nil, "label with an empty name; write it as ##NAME=value")
	}
	ob := p.top()
	if ob != nil {
		ob.flushText()
	}
	switch {
	case name == "TITLE":
		if ob != nil && !ob.link {
			return p.errf(p.line, nil, "##TITLE= inside the block started at line %d, which is not a LINK block; add the missing ##END= before this line", ob.b.Line)
		}
		if len(p.stack) >= 8 {
			return p.errf(p.line, nil, "blocks nested more than 8 deep; the file is corrupt")
		}
		if ob != nil {
			ob.rec = recText // a nested block ends any record of the LINK block
		}
		ob = &openBlock{b: Block{Title: value, Line: p.line}, lastText: -1, npoints: -1}
		p.stack = append(p.stack, ob)
	case ob == nil:
		return p.errf(p.line, nil, "##%s= before any ##TITLE=; a block starts with ##TITLE=", name)
	}
	p.labels++
	p.labelBytes += len(name) + len(value)
	if p.labels > maxLabels || p.labelBytes > maxLabelBytes {
		return p.errf(p.line, nil, "more than %d labels or %d bytes of label values; the file is not a spectrum file or is corrupt", maxLabels, maxLabelBytes)
	}
	ob.b.Labels = append(ob.b.Labels, Label{Name: name, Value: value, Line: p.line})
	ob.lastText = len(ob.b.Labels) - 1
	ob.rec = recText
	switch name {
	case "DATATYPE":
		if strings.EqualFold(strings.TrimSpace(value), "LINK") {
			ob.link = true
		}
	case "BLOCKS":
		ob.link = true
	case "XYDATA", "XYPOINTS":
		ob.lastText = -1
		return p.startData(ob, name, value)
	case "PEAKTABLE", "PEAKASSIGNMENTS":
		ob.lastText = -1
		ob.rec = recSkip
		if ob.peakLine == 0 {
			ob.peakLine = p.line
		}
	case "NTUPLES":
		ob.lastText = -1
		ob.rec = recSkip
		if ob.ntuplesLine == 0 {
			ob.ntuplesLine = p.line
		}
	case "DATATABLE":
		ob.lastText = -1
		ob.rec = recSkip
	case "END":
		return p.endBlock(ob)
	}
	return nil
}

func squash(s string) string {
	return strings.ToUpper(strings.Join(strings.Fields(s), ""))
}

func (p *parser) startData(ob *openBlock, name, value string) error {
	if ob.hasData {
		return p.errf(p.line, nil, "second spectrum record ##%s= in the block started at line %d (first at line %d); put each spectrum in its own block", name, ob.b.Line, ob.dataLine)
	}
	if ob.ntuplesLine > 0 {
		return p.errf(p.line, nil, "##%s= inside ##NTUPLES, which this reader does not support; export the spectrum as a plain ##XYDATA=(X++(Y..Y)) block", name)
	}
	vars := squash(value)
	switch {
	case vars == "(X++(Y..Y))" && name == "XYDATA":
		ob.dataKind = recXYData
	case vars == "(XY..XY)":
		ob.dataKind = recXYPoints
	default:
		return p.errf(p.line, nil, "##%s=%s: variable list not supported; use (X++(Y..Y)) or (XY..XY)", name, value)
	}
	ob.hasData = true
	ob.dataLine = p.line
	ob.rec = ob.dataKind
	ob.limit = MaxPoints - p.points
	if v, ok, err := p.number(ob, "NPOINTS"); err != nil {
		return err
	} else if ok {
		if v < 0 || v != math.Trunc(v) {
			return p.errf(p.line, nil, "NPOINTS=%v is not a count; correct ##NPOINTS=", v)
		}
		if v > float64(ob.limit) {
			return p.errf(p.line, nil, "NPOINTS=%v exceeds the limit of %d points per file; split the data or check NPOINTS", v, MaxPoints)
		}
		ob.npoints = int(v)
		ob.limit = ob.npoints
	}
	n := ob.limit
	if ob.dataKind == recXYPoints {
		n *= 2
	}
	ob.raw = make([]float64, 0, min(n, 1<<14))
	return nil
}

// number returns the numeric value of a label of the open block. A label
// given twice must agree with itself (some writers repeat XFACTOR).
func (p *parser) number(ob *openBlock, name string) (float64, bool, error) {
	v, _, ok, err := p.numberRes(ob, name)
	return v, ok, err
}

// numberRes also returns the printing resolution of the value.
func (p *parser) numberRes(ob *openBlock, name string) (v, res float64, ok bool, err error) {
	for _, l := range ob.b.Labels {
		if l.Name != name {
			continue
		}
		lv, lres, good := labelNumber(l.Value)
		if !good {
			return 0, 0, false, p.errf(l.Line, nil, "##%s=%s is not a number; write a plain decimal number", name, clip(l.Value))
		}
		if ok && lv != v {
			return 0, 0, false, p.errf(l.Line, nil, "##%s= given twice with different values (%v and %v); keep one", name, v, lv)
		}
		v, res, ok = lv, lres, true
	}
	return v, res, ok, nil
}

// labelNumber reads the value of a numeric label: one decimal number, with
// an exponent signed or not (no SQZ ambiguity here), and its resolution.
func labelNumber(s string) (v, res float64, ok bool) {
	s = strings.TrimSpace(s)
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		i++
	}
	end, dec := scanDigits(s, i)
	if end == i || (end == i+1 && s[i] == '.') {
		return 0, 0, false
	}
	exp := 0
	if end < len(s) && (s[end] == 'E' || s[end] == 'e') {
		j := end + 1
		if j < len(s) && (s[j] == '+' || s[j] == '-') {
			j++
		}
		k := j
		for k < len(s) && isDigit(s[k]) {
			k++
		}
		if k == j || k != len(s) {
			return 0, 0, false
		}
		e, err := strconv.Atoi(s[end+1 : k])
		if err != nil || e > 400 || e < -400 {
			return 0, 0, false
		}
		exp, end = e, k
	}
	if end != len(s) {
		return 0, 0, false
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, 0, false
	}
	return v, math.Pow10(exp - dec), true
}

func (p *parser) xyDataLine(ob *openBlock, t string) error {
	if t == "" {
		return nil
	}
	toks, err := tokenize(t, p.toks)
	p.toks = toks
	if err != nil {
		return p.errf(p.line, err, "bad XYDATA line: %v; fix or re-export the file", err)
	}
	if len(toks) == 0 {
		return nil // only delimiters
	}
	if toks[0].kind != tokAFFN {
		return p.errf(p.line, nil, "XYDATA line does not start with its X value; each line begins with the abscissa of its first ordinate")
	}
	x := toks[0]
	ys := toks[1:]
	if len(ys) == 0 {
		return nil
	}
	index := len(ob.raw)
	if ob.prevDIF {
		// Y check: the line repeats the last ordinate of the previous line.
		c := ys[0]
		if c.kind != tokAFFN && c.kind != tokSQZ {
			return p.errf(p.line, nil, "line after a DIF line must begin with the Y check value (the last Y of the previous line), not a difference; re-export the file")
		}
		if !sameValue(c.v, ob.lastY) {
			return p.errf(p.line, nil, "Y check failed: line starts with Y=%v but the previous line ended at Y=%v; the file is corrupt or a line is missing", c.v, ob.lastY)
		}
		index--
	}
	ob.checks = append(ob.checks, lineCheck{line: p.line, x: x.v, res: x.resolution(), index: index})
	lastKind := tokAFFN
	var lastDelta float64
	for k, tk := range ys {
		switch tk.kind {
		case tokAFFN, tokSQZ:
			lastKind = tokSQZ
			ob.lastY, ob.haveY = tk.v, true
			if k == 0 && ob.prevDIF {
				continue // the Y check, already verified
			}
			if err := p.push(ob, tk.v); err != nil {
				return err
			}
		case tokDIF:
			if !ob.haveY {
				return p.errf(p.line, nil, "difference (DIF) with no ordinate before it; the first Y must be a value")
			}
			lastKind, lastDelta = tokDIF, tk.v
			ob.lastY += tk.v
			if err := p.push(ob, ob.lastY); err != nil {
				return err
			}
		case tokDUP:
			if k == 0 || ys[k-1].kind == tokDUP {
				return p.errf(p.line, nil, "repeat count (DUP) must follow a value or difference; fix or re-export the file")
			}
			if tk.n-1 > ob.limit-len(ob.raw) {
				return p.tooMany(ob)
			}
			for range tk.n - 1 {
				if lastKind == tokDIF {
					ob.lastY += lastDelta
				}
				if err := p.push(ob, ob.lastY); err != nil {
					return err
				}
			}
		}
		if math.IsInf(ob.lastY, 0) {
			return p.errf(p.line, nil, "ordinates overflow; the file is corrupt")
		}
	}
	ob.prevDIF = lastKind == tokDIF
	return nil
}

func (p *parser) push(ob *openBlock, v float64) error {
	if len(ob.raw) >= ob.limit {
		return p.tooMany(ob)
	}
	ob.raw = append(ob.raw, v)
	return nil
}

func (p *parser) tooMany(ob *openBlock) error {
	if ob.npoints >= 0 {
		return p.errf(p.line, nil, "more points than NPOINTS=%d; correct ##NPOINTS= or remove the extra data", ob.npoints)
	}
	return p.errf(p.line, nil, "more than %d points in the file; split the data", MaxPoints)
}

// sameValue compares a Y check with the running ordinate. Both come from the
// same integers in practice; the slack only absorbs decimal fractions.
func sameValue(a, b float64) bool {
	return math.Abs(a-b) <= 1e-9*math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
}

func (p *parser) xyPointsLine(ob *openBlock, t string) error {
	if t == "" {
		return nil
	}
	toks, err := tokenize(t, p.toks)
	p.toks = toks
	if err != nil {
		return p.errf(p.line, err, "bad XYPOINTS line: %v; fix or re-export the file", err)
	}
	if len(toks)%2 != 0 {
		return p.errf(p.line, nil, "XYPOINTS line holds %d numbers, not whole X,Y pairs; each line holds complete pairs", len(toks))
	}
	for _, tk := range toks {
		if tk.kind != tokAFFN && tk.kind != tokSQZ {
			return p.errf(p.line, nil, "XYPOINTS holds a DIF or DUP token; (XY..XY) data are plain X,Y pairs")
		}
	}
	if len(ob.raw)/2+len(toks)/2 > ob.limit {
		return p.tooMany(ob)
	}
	if len(toks) > 0 {
		ob.b.Rows = append(ob.b.Rows, Row{Line: p.line, First: len(ob.raw) / 2})
	}
	for _, tk := range toks {
		ob.raw = append(ob.raw, tk.v)
	}
	return nil
}

func (p *parser) endBlock(ob *openBlock) error {
	p.stack = p.stack[:len(p.stack)-1]
	if parent := p.top(); parent != nil {
		parent.children++
	}
	if ob.link {
		if v, ok, err := p.number(ob, "BLOCKS"); err != nil {
			return err
		} else if ok && v != float64(ob.children) {
			return p.errf(p.line, nil, "LINK block %q (line %d) declares ##BLOCKS=%v but holds %d blocks; the file is truncated or BLOCKS is wrong", ob.b.Title, ob.b.Line, v, ob.children)
		}
	}
	// Fields take the whole value, continuation lines included.
	for _, f := range []struct {
		name string
		v    *string
	}{{"TITLE", &ob.b.Title}, {"DATATYPE", &ob.b.DataType}, {"XUNITS", &ob.b.XUnits}, {"YUNITS", &ob.b.YUnits}} {
		if v, ok := ob.b.Value(f.name); ok {
			*f.v = v
		}
	}
	if !ob.hasData {
		if ob.peakLine > 0 && p.peakLine == 0 {
			p.peakLine, p.peakTitleLine, p.peakTitle = ob.peakLine, ob.b.Line, ob.b.Title
		}
		if ob.ntuplesLine > 0 && p.ntLine == 0 {
			p.ntLine, p.ntTitle = ob.ntuplesLine, ob.b.Title
		}
		return nil
	}
	var err error
	if ob.dataKind == recXYData {
		err = p.finishXYData(ob)
	} else {
		err = p.finishXYPoints(ob)
	}
	if err != nil {
		return err
	}
	p.points += len(ob.b.X)
	p.blocks = append(p.blocks, ob.b)
	return nil
}

// checkCount compares the points read with NPOINTS, which may also come
// after the data.
func (p *parser) checkCount(ob *openBlock, n int, what string) error {
	v, ok, err := p.number(ob, "NPOINTS")
	if err != nil || !ok {
		return err
	}
	if v != float64(n) {
		return p.errf(p.line, nil, "NPOINTS=%v but %d %s were read; the file is truncated or NPOINTS is wrong", v, n, what)
	}
	return nil
}

func (p *parser) factors(ob *openBlock) (xf, yf float64, err error) {
	xf, yf = 1, 1
	for _, f := range []struct {
		name string
		v    *float64
	}{{"XFACTOR", &xf}, {"YFACTOR", &yf}} {
		v, ok, err := p.number(ob, f.name)
		if err != nil {
			return 0, 0, err
		}
		if ok {
			if v == 0 {
				return 0, 0, p.errf(ob.dataLine, nil, "##%s=0 would zero the data; correct the factor", f.name)
			}
			*f.v = v
		}
	}
	return xf, yf, nil
}

func (p *parser) finishXYData(ob *openBlock) error {
	b := &ob.b
	n := len(ob.raw)
	if n == 0 {
		return p.errf(ob.dataLine, nil, "##XYDATA= holds no ordinates; the file is truncated")
	}
	// X follows from the declared NPOINTS, so that the line checks below
	// point at a missing line before the count check reports it.
	nDecl := n
	if v, ok, err := p.number(ob, "NPOINTS"); err != nil {
		return err
	} else if ok && v >= 1 && v <= MaxPoints && v == math.Trunc(v) {
		nDecl = int(v)
	}
	xf, yf, err := p.factors(ob)
	if err != nil {
		return err
	}
	firstX, ok, err := p.number(ob, "FIRSTX")
	if err != nil {
		return err
	}
	if !ok {
		return p.errf(ob.dataLine, nil, "##XYDATA= without ##FIRSTX=; X cannot be computed, add FIRSTX, LASTX and NPOINTS")
	}
	lastX, haveLast, err := p.number(ob, "LASTX")
	if err != nil {
		return err
	}
	deltaX, haveDelta, err := p.number(ob, "DELTAX")
	if err != nil {
		return err
	}
	// The standard computes X from FIRSTX, LASTX and NPOINTS; DELTAX is a
	// rounded convenience and only checked.
	var dx float64
	switch {
	case haveLast && nDecl > 1:
		dx = (lastX - firstX) / float64(nDecl-1)
		if haveDelta && math.Abs(deltaX-dx) > 1e-3*math.Abs(dx) {
			return p.errf(ob.dataLine, nil, "DELTAX=%v disagrees with (LASTX-FIRSTX)/(NPOINTS-1) = %v for %d points; check NPOINTS and LASTX", deltaX, dx, nDecl)
		}
	case haveLast:
		if math.Abs(lastX-firstX) > 1e-9*math.Max(1, math.Abs(firstX)) {
			return p.errf(ob.dataLine, nil, "one point but LASTX=%v differs from FIRSTX=%v; the file is truncated or LASTX is wrong", lastX, firstX)
		}
	case haveDelta:
		dx = deltaX
		lastX = firstX + float64(n-1)*dx
	default:
		return p.errf(ob.dataLine, nil, "##XYDATA= without ##LASTX= or ##DELTAX=; X cannot be computed, add LASTX and NPOINTS")
	}
	if math.IsInf(dx, 0) || math.IsNaN(dx) {
		return p.errf(ob.dataLine, nil, "X range from FIRSTX=%v to LASTX=%v overflows; correct FIRSTX and LASTX", firstX, lastX)
	}
	// Each line abscissa must fall nearer its own point than a neighbour,
	// allowing for the digits it was printed with (some writers round it up
	// to an integer).
	for _, c := range ob.checks {
		want := firstX + float64(c.index)*dx
		got := c.x * xf
		tol := 0.5*math.Abs(dx) + c.res*math.Abs(xf) + 1e-9*math.Max(math.Abs(want), math.Abs(got))
		if !(math.Abs(got-want) <= tol) {
			return p.errf(c.line, nil, "X check failed: line starts at X=%v but FIRSTX + %d*DELTAX = %v; a line may be missing, or FIRSTX, LASTX, NPOINTS or XFACTOR is wrong", got, c.index, want)
		}
	}
	if err := p.checkCount(ob, n, "ordinates"); err != nil {
		return err
	}
	b.X = make([]float64, n)
	for i := range b.X {
		b.X[i] = firstX + float64(i)*dx
	}
	if n > 1 {
		b.X[n-1] = lastX // exact end, so that Write(Parse(f)) keeps LASTX
	}
	for _, c := range ob.checks {
		b.Rows = append(b.Rows, Row{Line: c.line, First: c.index})
	}
	b.Y = ob.raw
	for i, v := range b.Y {
		b.Y[i] = v * yf
		if math.IsInf(b.Y[i], 0) {
			return p.errf(ob.dataLine, nil, "ordinate %d overflows after YFACTOR=%v; correct YFACTOR", i+1, yf)
		}
	}
	return p.checkFirstY(ob, yf)
}

// checkFirstY catches a wrong YFACTOR: FIRSTY is in real units.
func (p *parser) checkFirstY(ob *openBlock, yf float64) error {
	fy, res, ok, err := p.numberRes(ob, "FIRSTY")
	if err != nil || !ok {
		return err
	}
	y0 := ob.b.Y[0]
	tol := math.Abs(yf) + res + 1e-6*math.Max(math.Abs(fy), math.Abs(y0))
	if !(math.Abs(fy-y0) <= tol) {
		return p.errf(ob.dataLine, nil, "FIRSTY=%v but the first ordinate times YFACTOR is %v; YFACTOR or the data are wrong", fy, y0)
	}
	return nil
}

func (p *parser) finishXYPoints(ob *openBlock) error {
	b := &ob.b
	n := len(ob.raw) / 2
	if n == 0 {
		return p.errf(ob.dataLine, nil, "##XYPOINTS= holds no points; the file is truncated")
	}
	if err := p.checkCount(ob, n, "X,Y pairs"); err != nil {
		return err
	}
	xf, yf, err := p.factors(ob)
	if err != nil {
		return err
	}
	b.X = make([]float64, n)
	b.Y = make([]float64, n)
	for i := range n {
		b.X[i] = ob.raw[2*i] * xf
		b.Y[i] = ob.raw[2*i+1] * yf
		if math.IsInf(b.X[i], 0) || math.IsInf(b.Y[i], 0) {
			return p.errf(ob.dataLine, nil, "point %d overflows after XFACTOR/YFACTOR; correct the factors", i+1)
		}
	}
	ob.raw = nil
	for _, e := range []struct {
		name string
		v    float64
	}{{"FIRSTX", b.X[0]}, {"LASTX", b.X[n-1]}} {
		want, res, ok, err := p.numberRes(ob, e.name)
		if err != nil {
			return err
		}
		// Relative slack: the pairs and the label may be printed to
		// different digits.
		if ok && !(math.Abs(want-e.v) <= res+1e-6*math.Max(math.Abs(want), math.Abs(e.v))+1e-12) {
			return p.errf(ob.dataLine, nil, "%s=%v but the data give %v; the file is truncated or %s is wrong", e.name, want, e.v, e.name)
		}
	}
	return p.checkFirstY(ob, yf)
}

func (p *parser) finish() ([]Block, error) {
	if ob := p.top(); ob != nil {
		return nil, p.errf(p.line, nil, "block %q started at line %d has no ##END=; the file is truncated or the ##END= line is missing", ob.b.Title, ob.b.Line)
	}
	if len(p.blocks) > 0 {
		return p.blocks, nil
	}
	switch {
	case p.peakLine > 0:
		return nil, p.errf(p.peakLine, nil, "block %q (line %d) is a peak table (##PEAK TABLE), not a spectrum; export the full spectrum as ##XYDATA=(X++(Y..Y)) or ##XYPOINTS=(XY..XY)", p.peakTitle, p.peakTitleLine)
	case p.ntLine > 0:
		return nil, p.errf(p.ntLine, nil, "block %q uses ##NTUPLES, which this reader does not support; export the spectrum as ##XYDATA=(X++(Y..Y))", p.ntTitle)
	case p.line == 0:
		return nil, p.errf(0, nil, "empty input; expected a JCAMP-DX file starting with ##TITLE=")
	}
	return nil, p.errf(0, nil, "no ##XYDATA or ##XYPOINTS record found; not a JCAMP-DX spectrum file")
}

// formatFloat writes the shortest decimal that parses back to v.
func formatFloat(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
