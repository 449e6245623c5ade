package kinetics

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// Scheme is a reaction network in the chemist's notation, e.g. "A -> B -> C" or "A + B -> C; C -> D".
type Scheme struct {
	// Text is the notation as given.
	Text string
	// Species in order of first appearance in Text.
	Species []string
	// Steps in the order written; a chain "A -> B -> C" gives the steps "A -> B" and "B -> C".
	Steps []Step
}

// Step is one elementary reaction with a mass-action rate law r = k Π c_i^ν_i over its reactants.
type Step struct {
	// Text is the step in canonical spacing, e.g. "A -> B" or "2 A -> P".
	Text string
	// Reactants and Products with their stoichiometric coefficients; a species appears at most
	// once on each side ("A + A" is merged into "2 A").
	Reactants, Products []Term
	// Order is the sum of the reactant coefficients rounded to the nearest integer
	// (the overall order of the mass-action rate law when the coefficients are integers).
	Order int
}

// Term is a species index into Scheme.Species with its stoichiometric coefficient.
type Term struct {
	Species int
	Coef    float64
}

// ErrScheme marks every error returned by ParseScheme.
var ErrScheme = errors.New("kinetics: reaction scheme")

// ParseError reports the 1-based column (in characters) of the offending token.
type ParseError struct {
	Column int
	Msg    string
}

func (e *ParseError) Error() string {
	return fmt.Sprintf("kinetics: reaction scheme: column %d: %s", e.Column, e.Msg)
}

// Unwrap lets errors.Is(err, ErrScheme) succeed.
func (e *ParseError) Unwrap() error { return ErrScheme }

type tokKind int

const (
	tokName tokKind = iota
	tokNumber
	tokPlus
	tokArrow
	tokSemi
	tokEnd
)

func (k tokKind) String() string {
	switch k {
	case tokName:
		return "species name"
	case tokNumber:
		return "coefficient"
	case tokPlus:
		return "'+'"
	case tokArrow:
		return "'->'"
	case tokSemi:
		return "';'"
	}
	return "end of scheme"
}

type token struct {
	kind tokKind
	text string
	col  int // 1-based character column
	num  float64
}

// isNameStart and isNameRune define species names: a letter first, then letters, digits and the
// marks chemists put on names (A', B*, X_2, [Fe]).
func isNameStart(r rune) bool { return unicode.IsLetter(r) || r == '[' }
func isNameRune(r rune) bool {
	return unicode.IsLetter(r) || unicode.IsDigit(r) || strings.ContainsRune("_'*[]()^·", r)
}

func lex(text string) ([]token, error) {
	var toks []token
	col := 0
	for i := 0; i < len(text); {
		r, w := utf8.DecodeRuneInString(text[i:])
		col++
		start, startCol := i, col
		switch {
		case r == utf8.RuneError && w == 1:
			return nil, &ParseError{col, "invalid UTF-8"}
		case unicode.IsSpace(r):
			i += w
		case r == '+':
			toks = append(toks, token{kind: tokPlus, text: "+", col: startCol})
			i += w
		case r == ';':
			toks = append(toks, token{kind: tokSemi, text: ";", col: startCol})
			i += w
		case r == '→':
			toks = append(toks, token{kind: tokArrow, text: "->", col: startCol})
			i += w
		case r == '-' || r == '=':
			if i+1 < len(text) && text[i+1] == '>' {
				toks = append(toks, token{kind: tokArrow, text: "->", col: startCol})
				i += 2
				col++
				break
			}
			if r == '=' {
				return nil, &ParseError{startCol, "'=' is not a reaction arrow; reversible steps are written as two steps, 'A -> B; B -> A'"}
			}
			return nil, &ParseError{startCol, "'-' must be followed by '>' to form the arrow '->'"}
		case r == '<':
			return nil, &ParseError{startCol, "reversible arrows are not supported; write 'A -> B; B -> A'"}
		case unicode.IsDigit(r) || r == '.':
			j := i
			for j < len(text) && (text[j] >= '0' && text[j] <= '9' || text[j] == '.') {
				j++
			}
			s := text[start:j]
			v, err := strconv.ParseFloat(s, 64)
			if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
				return nil, &ParseError{startCol, fmt.Sprintf("bad coefficient %q", s)}
			}
			toks = append(toks, token{kind: tokNumber, text: s, col: startCol, num: v})
			col += utf8.RuneCountInString(s) - 1
			i = j
		case isNameStart(r):
			j := i + w
			for j < len(text) {
				r2, w2 := utf8.DecodeRuneInString(text[j:])
				if !isNameRune(r2) {
					break
				}
				j += w2
			}
			s := text[start:j]
			toks = append(toks, token{kind: tokName, text: s, col: startCol})
			col += utf8.RuneCountInString(s) - 1
			i = j
		default:
			return nil, &ParseError{startCol, fmt.Sprintf("unexpected character %q", r)}
		}
	}
	toks = append(toks, token{kind: tokEnd, col: col + 1})
	return toks, nil
}

type side struct {
	terms []Term
	col   int
}

// ParseScheme reads the chemist's notation. Steps are separated by ';', a chain
// "A -> B -> C" is the two steps "A -> B" and "B -> C", a side is a sum "2 A + B" of species with
// optional positive coefficients (default 1); '→' and '=>' are accepted as arrows. Rate laws are mass action. Errors are *ParseError
// values naming the column of the offending token.
func ParseScheme(text string) (*Scheme, error) {
	toks, err := lex(text)
	if err != nil {
		return nil, err
	}
	s := &Scheme{Text: text}
	index := map[string]int{}
	p := 0
	peek := func() token { return toks[p] }

	// parseSide reads "coef? name (+ coef? name)*".
	parseSide := func() (side, error) {
		sd := side{col: peek().col}
		for {
			t := peek()
			coef := 1.0
			if t.kind == tokNumber {
				if !(t.num > 0) {
					return sd, &ParseError{t.col, fmt.Sprintf("coefficient %s must be positive", t.text)}
				}
				coef = t.num
				p++
				t = peek()
			}
			if t.kind != tokName {
				return sd, &ParseError{t.col, fmt.Sprintf("expected a species name, found %s", t.kind)}
			}
			p++
			id, ok := index[t.text]
			if !ok {
				id = len(s.Species)
				index[t.text] = id
				s.Species = append(s.Species, t.text)
			}
			merged := false
			for i := range sd.terms {
				if sd.terms[i].Species == id {
					sd.terms[i].Coef += coef
					merged = true
				}
			}
			if !merged {
				sd.terms = append(sd.terms, Term{Species: id, Coef: coef})
			}
			if peek().kind != tokPlus {
				return sd, nil
			}
			p++
		}
	}

	for {
		// One statement: side (-> side)+ ; empty statements (";;" or a trailing ';') are skipped.
		for peek().kind == tokSemi {
			p++
		}
		if peek().kind == tokEnd {
			break
		}
		left, err := parseSide()
		if err != nil {
			return nil, err
		}
		if t := peek(); t.kind != tokArrow {
			return nil, &ParseError{t.col, fmt.Sprintf("expected '->', found %s", t.kind)}
		}
		for peek().kind == tokArrow {
			p++
			right, err := parseSide()
			if err != nil {
				return nil, err
			}
			st, err := makeStep(s, left, right)
			if err != nil {
				return nil, err
			}
			s.Steps = append(s.Steps, st)
			left = right
		}
		if t := peek(); t.kind != tokSemi && t.kind != tokEnd {
			return nil, &ParseError{t.col, fmt.Sprintf("expected ';' or end of scheme, found %s %q", t.kind, t.text)}
		}
	}
	if len(s.Steps) == 0 {
		return nil, &ParseError{1, "no reaction steps"}
	}
	return s, nil
}

func makeStep(s *Scheme, left, right side) (Step, error) {
	st := Step{
		Reactants: append([]Term(nil), left.terms...),
		Products:  append([]Term(nil), right.terms...),
	}
	// A step that changes nothing has a zero stoichiometric column: its rate constant could
	// never be determined, so it is rejected rather than fitted.
	if sameTerms(st.Reactants, st.Products) {
		return st, &ParseError{right.col, "step has identical reactants and products"}
	}
	var order float64
	for _, t := range st.Reactants {
		order += t.Coef
	}
	st.Order = int(math.Round(order))
	st.Text = sideText(s, st.Reactants) + " -> " + sideText(s, st.Products)
	return st, nil
}

func sameTerms(a, b []Term) bool {
	if len(a) != len(b) {
		return false
	}
	for _, x := range a {
		found := false
		for _, y := range b {
			if x.Species == y.Species && x.Coef == y.Coef {
				found = true
			}
		}
		if !found {
			return false
		}
	}
	return true
}

func sideText(s *Scheme, terms []Term) string {
	parts := make([]string, len(terms))
	for i, t := range terms {
		if t.Coef == 1 {
			parts[i] = s.Species[t.Species]
		} else {
			parts[i] = strconv.FormatFloat(t.Coef, 'f', -1, 64) + " " + s.Species[t.Species] // 'f': the lexer reads no exponents
		}
	}
	return strings.Join(parts, " + ")
}

// FirstOrder reports whether every step has a single reactant with coefficient 1, so that
// dc/dt = K c is linear and is solved exactly by the matrix exponential.
func (s *Scheme) FirstOrder() bool {
	for _, st := range s.Steps {
		if len(st.Reactants) != 1 || st.Reactants[0].Coef != 1 {
			return false
		}
	}
	return true
}

// Stoichiometry returns N (species × steps): N[i][j] = products − reactants coefficient of
// species i in step j, so that dc/dt = N r(c).
func (s *Scheme) Stoichiometry() [][]float64 {
	n := make([][]float64, len(s.Species))
	for i := range n {
		n[i] = make([]float64, len(s.Steps))
	}
	for j, st := range s.Steps {
		for _, t := range st.Reactants {
			n[t.Species][j] -= t.Coef
		}
		for _, t := range st.Products {
			n[t.Species][j] += t.Coef
		}
	}
	return n
}

// SpeciesIndex returns the index of a species name, or -1.
func (s *Scheme) SpeciesIndex(name string) int {
	for i, n := range s.Species {
		if n == name {
			return i
		}
	}
	return -1
}
