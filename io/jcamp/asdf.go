package jcamp

import (
	"fmt"
	"math"
	"strconv"
)

// tokKind is the form a number takes in a data line.
type tokKind uint8

const (
	tokAFFN tokKind = iota // plain or PAC number, sign optional
	tokSQZ                 // squeezed absolute value
	tokDIF                 // difference from the previous ordinate
	tokDUP                 // repeat count for the previous token
)

// token is one number of a data line. dec is the number of digits after the
// decimal point and exp the decimal exponent as written, which together give
// the resolution the writer printed the number with (see resolution).
type token struct {
	kind tokKind
	v    float64
	n    int // repeat count for tokDUP
	dec  int
	exp  int
}

// resolution is one unit in the last printed digit of t.
func (t token) resolution() float64 { return math.Pow10(t.exp - t.dec) }

// Pseudo-digits of the ASDF forms (JCAMP-DX 4.24, ASCII squeezed
// difference form), the position in each string being the digit value:
//
//	SQZ positive  @ABCDEFGHI     SQZ negative  @abcdefghi
//	DIF positive  %JKLMNOPQR     DIF negative  %jklmnopqr
//	DUP count      STUVWXYZs (1…9)

// pseudo classifies c: kind, leading digit and sign. ok is false for anything
// that is not a pseudo-digit.
func pseudo(c byte) (kind tokKind, digit int, neg bool, ok bool) {
	switch {
	case c == '@':
		return tokSQZ, 0, false, true
	case c >= 'A' && c <= 'I':
		return tokSQZ, int(c-'A') + 1, false, true
	case c >= 'a' && c <= 'i':
		return tokSQZ, int(c-'a') + 1, true, true
	case c == '%':
		return tokDIF, 0, false, true
	case c >= 'J' && c <= 'R':
		return tokDIF, int(c-'J') + 1, false, true
	case c >= 'j' && c <= 'r':
		return tokDIF, int(c-'j') + 1, true, true
	case c >= 'S' && c <= 'Z':
		return tokDUP, int(c-'S') + 1, false, true
	case c == 's':
		return tokDUP, 9, false, true
	}
	return 0, 0, false, false
}

func isDigit(c byte) bool { return c >= '0' && c <= '9' }

// isSep reports the delimiters allowed between AFFN numbers.
func isSep(c byte) bool { return c == ' ' || c == '\t' || c == ',' || c == ';' }

// scanDigits returns the end of a run of digits with an optional fraction
// starting at i, and how many fraction digits it holds.
func scanDigits(s string, i int) (end, dec int) {
	for i < len(s) && isDigit(s[i]) {
		i++
	}
	if i < len(s) && s[i] == '.' {
		i++
		for i < len(s) && isDigit(s[i]) {
			i++
			dec++
		}
	}
	return i, dec
}

// tokenize splits a data line into tokens. It allocates only the returned
// slice, which it appends to buf to let the caller reuse storage.
func tokenize(s string, buf []token) ([]token, error) {
	toks := buf[:0]
	i := 0
	for i < len(s) {
		c := s[i]
		switch {
		case isSep(c):
			i++
		case isDigit(c) || c == '+' || c == '-' || c == '.':
			start := i
			if c == '+' || c == '-' {
				i++
			}
			end, dec := scanDigits(s, i)
			if end == i || (end == i+1 && s[i] == '.') {
				return nil, fmt.Errorf("column %d: %q is not a number", start+1, s[start:min(end+1, len(s))])
			}
			i = end
			exp := 0
			// An exponent needs its sign; without one the letter is a
			// pseudo-digit (E = SQZ +5, e = SQZ -5).
			if i+2 < len(s) && (s[i] == 'E' || s[i] == 'e') && (s[i+1] == '+' || s[i+1] == '-') && isDigit(s[i+2]) {
				j := i + 2
				for j < len(s) && isDigit(s[j]) {
					j++
				}
				e, err := strconv.Atoi(s[i+1 : j])
				if err != nil || e > 400 || e < -400 {
					return nil, fmt.Errorf("column %d: exponent of %q out of range", start+1, s[start:j])
				}
				exp = e
				i = j
			}
			v, err := strconv.ParseFloat(s[start:i], 64)
			if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
				return nil, fmt.Errorf("column %d: %q is not a finite number", start+1, s[start:i])
			}
			toks = append(toks, token{kind: tokAFFN, v: v, dec: dec, exp: exp})
		case c == '?':
			return nil, fmt.Errorf("column %d: '?' marks a missing value, which a spectrum cannot hold", i+1)
		default:
			kind, digit, neg, ok := pseudo(c)
			if !ok {
				return nil, fmt.Errorf("column %d: unexpected character %q", i+1, c)
			}
			start := i
			i++
			if kind == tokDUP {
				j := i
				for j < len(s) && isDigit(s[j]) {
					j++
				}
				n := digit
				for _, d := range s[i:j] {
					if n > MaxPoints {
						break
					}
					n = n*10 + int(d-'0')
				}
				if n > MaxPoints {
					return nil, fmt.Errorf("column %d: repeat count %q exceeds %d points", start+1, s[start:j], MaxPoints)
				}
				toks = append(toks, token{kind: tokDUP, n: n})
				i = j
				continue
			}
			end, dec := scanDigits(s, i)
			// Rebuild the number with its leading digit for an exact parse.
			num := make([]byte, 0, end-i+2)
			if neg {
				num = append(num, '-')
			}
			num = append(num, byte('0'+digit))
			num = append(num, s[i:end]...)
			v, err := strconv.ParseFloat(string(num), 64)
			if err != nil || math.IsInf(v, 0) {
				return nil, fmt.Errorf("column %d: %q is not a finite number", start+1, s[start:end])
			}
			toks = append(toks, token{kind: kind, v: v, dec: dec})
			i = end
		}
	}
	return toks, nil
}
