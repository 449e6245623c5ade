package spectra

import (
	"bytes"
	"errors"
	"fmt"
	"iter"
	"strconv"

	"github.com/bandsolve/bandsolve/internal/decimal"
)

// Decimal marks in comma-separated files. A double-quoted field may hold
// the separator (RFC 4180, §2 rules 5 and 6), so a spreadsheet set to a
// decimal comma exports "1234,5","0,0123": two fields, each one number
// with a decimal comma, the numbers a ';'-separated export writes
// 1234,5;0,0123. The same quoted cell "1,234" may also be an English
// export's digit grouping (one thousand two hundred and thirty-four), so
// the file decides, by the first of its numbers that reads one way only:
// "0,0123", "1234,5" or "6,5e+002" (no group of digit grouping has a
// leading zero, four digits before the comma or an exponent) say decimal
// comma, "0.0123" says decimal point. A file whose quoted numbers could
// all be either is refused, naming the first: neither reading is safer.
//
// A file separated by ';', tabs or blanks reads a decimal comma in any
// cell ("1234,5;0,0123"), and its first number with a decimal mark
// decides the mark of the rest as well: a decimal point among decimal
// commas ("50.901" where the rest write 50901,519) is most likely digit
// grouping, 50 901, and read as 50.901 it would be a value a thousand
// times too small; a decimal comma among decimal points likewise. Both
// are refused naming the cell and the one that decided (one decimal mark
// per file: the locale's, common practice of spreadsheet exports).

// markKind is what one cell says of how its file writes decimals.
type markKind int

const (
	markNone    markKind = iota // nothing: an integer, a word, an empty cell
	markPoint                   // a number with a decimal point: "0.0123"
	markComma                   // a number only with a decimal comma: "1234,5", "0,0123"
	markEither                  // a decimal comma or digit grouping: "1,234" (1.234 or 1234)
	markGrouped                 // digit grouping only, so decimal points: "1,234.5", "1,234,567"
)

// cellMark classifies one cell of a comma-separated file.
func cellMark(b []byte) markKind {
	if bytes.IndexByte(b, ',') >= 0 {
		return commaMark(b)
	}
	if bytes.IndexByte(b, '.') >= 0 {
		if _, err := parseNumber(b); err == nil {
			return markPoint
		}
	}
	return markNone
}

// commaMark classifies a cell holding a comma: a sign, digits, one comma,
// digits and an optional exponent are a number with a decimal comma
// (markComma), or digit grouping too when the digits could be groups of
// it: one to three before the comma, not starting with 0, and exactly
// three after it, no exponent (markEither). More groups, or a decimal
// point after them, are digit grouping only (markGrouped: "1,234,567",
// "1,234.5"). Anything else is no number either way (markNone).
func commaMark(b []byte) markKind {
	if len(b) > 64 {
		return markNone // longer than any number parseCell reads
	}
	s := b
	if len(s) > 0 && (s[0] == '-' || s[0] == '+') {
		s = s[1:]
	}
	whole, frac, ok := bytes.Cut(s, []byte{','})
	if !ok {
		return markNone
	}
	if grouped(whole, frac) {
		return markGrouped
	}
	frac, exp := cutExponent(frac)
	if !digitsOnly(whole) || !digitsOnly(frac) || (exp != nil && !exponentOK(exp)) {
		return markNone
	}
	if exp == nil && len(frac) == 3 && len(whole) <= 3 && whole[0] != '0' {
		return markEither
	}
	return markComma
}

// grouped says whole,rest is a number written with digit grouping that a
// decimal comma cannot read: a first group of one to three digits, then
// groups of three, of which more than one, or a decimal point after them.
func grouped(whole, rest []byte) bool {
	if len(whole) == 0 || len(whole) > 3 || !digitsOnly(whole) || whole[0] == '0' {
		return false
	}
	rest, point, hasPoint := bytes.Cut(rest, []byte{'.'})
	groups := bytes.Split(rest, []byte{','})
	for _, g := range groups {
		if len(g) != 3 || !digitsOnly(g) {
			return false
		}
	}
	if hasPoint {
		mant, exp := cutExponent(point)
		return digitsOnly(mant) && (exp == nil || exponentOK(exp))
	}
	return len(groups) > 1
}

// cutExponent splits "5e+002" into "5" and "e+002" (nil when none).
func cutExponent(b []byte) (mant, exp []byte) {
	if i := bytes.IndexAny(b, "eE"); i >= 0 {
		return b[:i], b[i:]
	}
	return b, nil
}

// exponentOK says e is "e", an optional sign and digits.
func exponentOK(e []byte) bool {
	e = e[1:]
	if len(e) > 0 && (e[0] == '-' || e[0] == '+') {
		e = e[1:]
	}
	return digitsOnly(e)
}

// digitsOnly says b is one or more ASCII digits.
func digitsOnly(b []byte) bool {
	for _, c := range b {
		if c < '0' || c > '9' {
			return false
		}
	}
	return len(b) > 0
}

// marks is how a file writes its numbers: its field separator and, in a
// comma-separated file, whether its quoted numbers carry decimal commas;
// by is the cell that decided it, quoted in messages.
type marks struct {
	sep   byte
	comma bool
	by    cellAt
}

// cellAt is one cell of a file and its line number (0: none).
type cellAt struct {
	line int
	cell string
}

// fileMarks decides how a file whose field separator is sep writes its
// decimals, from the numbers of lines in file order (of column col only,
// when col ≥ 0): the first that reads one way only decides (see the top
// of this file). Files separated by ';', tabs or blanks read a decimal
// comma in any cell, as parseCell does.
func fileMarks(path string, lines []line, sep byte, col int) (marks, error) {
	if sep != ',' {
		return otherMarks(lines, sep, col), nil
	}
	var either cellAt
	// Without a quote no cell of a comma-separated line holds a comma.
	for c, mark := range markedCells(lines, sep, col, '"') {
		switch mark {
		case markPoint, markGrouped:
			return marks{sep: sep, by: c.at()}, nil
		case markComma:
			return marks{sep: sep, comma: true, by: c.at()}, nil
		case markEither:
			if either.line == 0 {
				either = c.at()
			}
		}
	}
	if either.line > 0 {
		return marks{}, inputErr(path, either.line,
			"write the numbers without digit grouping, or separate the columns with ';' and keep the decimal commas",
			"the quoted number %s is a decimal comma or digit grouping, and no number in the file tells which", either.cell)
	}
	return marks{sep: sep}, nil
}

// otherMarks decides the decimal mark of a file separated by sep, not a
// comma: its first number with a decimal point, or with a decimal comma
// (which such a file reads in any cell, parseCell), decides; a file of
// integers decides nothing, and by stays empty.
func otherMarks(lines []line, sep byte, col int) marks {
	for c, mark := range markedCells(lines, sep, col, ',') {
		switch mark {
		case markPoint, markGrouped:
			return marks{sep: sep, by: c.at()}
		case markComma, markEither:
			return marks{sep: sep, comma: true, by: c.at()}
		}
	}
	return marks{sep: sep}
}

// rawCell is a cell's bytes and its line, quoted for a message only when
// it decides (at).
type rawCell struct {
	line int
	text []byte
}

func (r rawCell) at() cellAt { return cellAt{r.line, quoteCell(r.text)} }

// markedCells yields, in file order, each cell of the lines (of column col
// only, when col ≥ 0) with its decimal mark (cellMark), passing over the
// lines that hold neither a point nor comma, the byte that can carry the
// other mark in a file separated by sep.
func markedCells(lines []line, sep byte, col int, comma byte) iter.Seq2[rawCell, markKind] {
	return func(yield func(rawCell, markKind) bool) {
		var buf [][]byte
		for _, l := range lines {
			if bytes.IndexByte(l.text, comma) < 0 && bytes.IndexByte(l.text, '.') < 0 {
				continue
			}
			buf = fields(l.text, sep, buf)
			for j, c := range buf {
				if col >= 0 && j != col {
					continue
				}
				if !yield(rawCell{l.n, c}, cellMark(c)) {
					return
				}
			}
		}
	}
}

// cell reads one number of the file. A decimal comma is read in a file
// not separated by commas (parseCell), and in a comma-separated one whose
// numbers write it (fileMarks); there a decimal point is refused, as a
// comma is in a file of decimal points.
func (m marks) cell(b []byte) (float64, error) {
	if !m.comma {
		v, err := parseNumber(b)
		if err == nil || m.sep == ',' {
			return v, err
		}
		w, err2 := parseCell(b, m.sep)
		if err2 == nil && m.by.line > 0 {
			return 0, fmt.Errorf("%s has a decimal comma among numbers with decimal points", quoteCell(b))
		}
		return w, err2
	}
	if bytes.IndexByte(b, '.') >= 0 {
		if _, err := parseNumber(b); err == nil {
			return 0, fmt.Errorf("%s has a decimal point among numbers with decimal commas", quoteCell(b))
		}
	}
	return parseCell(b, ';')
}

// hint is the advice for a cell that cell refused, dflt when its marks
// say nothing.
func (m marks) hint(b []byte, dflt string) string {
	switch {
	case goLiteral(b):
		return "write it as a plain decimal number: digits with one decimal mark, an optional sign and exponent (50901.5, 5.09015e4), without hexadecimal or '_' between digits"
	case cellMark(b) == markGrouped:
		return "write the numbers without digit grouping (1234.5, not 1,234.5)"
	case m.comma && bytes.IndexByte(b, '.') >= 0:
		return fmt.Sprintf("the file writes decimal commas (line %d has %s)%s: write every number of the file with one decimal mark, without digit grouping", m.by.line, m.by.cell, pointGrouping(b))
	case !m.comma && m.by.line > 0 && bytes.IndexByte(b, ',') >= 0:
		return fmt.Sprintf("the file writes decimal points (line %d has %s): write every number with one decimal mark, without digit grouping", m.by.line, m.by.cell)
	case looksLikeDecimalComma(b):
		return "the file seems to use decimal commas: export with decimal points"
	}
	return dflt
}

// goLiteral says b is a number only in Go's syntax, which strconv reads
// and parseNumber refuses: hexadecimal ("0x1.8dp+15"), digits separated
// by '_' ("50_901.5").
func goLiteral(b []byte) bool {
	if len(b) == 0 || len(b) > 64 || decimal.Plain(b) || nonFinite(b) {
		return false
	}
	_, err := strconv.ParseFloat(string(b), 64)
	return err == nil || errors.Is(err, strconv.ErrRange)
}

// pointGrouping says how a cell with a decimal point among decimal commas
// reads as digit grouping, when it can: "50.901" as 50901 (a first group
// of one to three digits not led by 0, then groups of three, as commaMark
// tells grouping by a comma), "" otherwise.
func pointGrouping(b []byte) string {
	s := b
	if len(s) > 0 && (s[0] == '-' || s[0] == '+') {
		s = s[1:]
	}
	whole, rest, _ := bytes.Cut(s, []byte{','})
	groups := bytes.Split(whole, []byte{'.'})
	if len(groups) < 2 || len(groups[0]) == 0 || len(groups[0]) > 3 || groups[0][0] == '0' || !digitsOnly(groups[0]) {
		return ""
	}
	for _, g := range groups[1:] {
		if len(g) != 3 || !digitsOnly(g) {
			return ""
		}
	}
	read := string(b[:len(b)-len(s)]) + string(bytes.Join(groups, nil))
	if len(rest) > 0 || bytes.IndexByte(s, ',') >= 0 {
		read += "," + string(rest)
	}
	return fmt.Sprintf(", so the point may be digit grouping (%s for %s)", quoteCell(b), read)
}

// splitAtDecimalComma says cells i and i+1 of a comma-separated row are
// one number cut at its decimal comma: "12" and "5" from 12,5, which
// the separator split (looksLikeDecimalComma of the two joined).
func splitAtDecimalComma(cells [][]byte, sep byte, i int) bool {
	if sep != ',' || i < 0 || i+1 >= len(cells) {
		return false
	}
	joined := append(append(append([]byte{}, cells[i]...), ','), cells[i+1]...)
	return looksLikeDecimalComma(joined)
}

// extraCells refuses a row of more cells than the header's want, naming
// the row: when its cell at col and the next read as one number with a
// decimal comma, the advice is how a comma-separated file writes one
// (quoted, fileMarks; or with a decimal point, or ';' separators).
func extraCells(path string, l line, cells [][]byte, want int, sep byte, col int) error {
	hint := "give each row the header's cells; quote a cell that holds the separator (\"run 7, b.csv\")"
	if splitAtDecimalComma(cells, sep, col) {
		num := string(cells[col]) + "," + string(cells[col+1])
		hint = fmt.Sprintf("%s has a decimal comma, which a comma-separated file reads as a separator: quote it (\"%s\"), write a decimal point (%s), or separate the columns with ';'",
			num, num, string(cells[col])+"."+string(cells[col+1]))
	}
	return inputErr(path, l.n, hint, "row %s has %d cells, the header has %d", quoteCell(l.text), len(cells), want)
}
