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
	ps := &schemeParser{toks: toks, s: &Scheme{Text: text}, index: map[string]int{}}
	for {
		// Empty statements (";;" or a trailing ';') are skipped.
		for ps.peek().kind == tokSemi {
			ps.p++
		}
		if ps.peek().kind == tokEnd {
			break
		}
		if err := ps.statement(); err != nil {
			return nil, err
		}
	}
	if len(ps.s.Steps) == 0 {
		return nil, &ParseError{1, "no reaction steps"}
	}
	return ps.s, nil
}

// schemeParser walks the tokens of one scheme, p the next one, building s;
// index numbers the species in the order they first appear.
type schemeParser struct {
	toks  []token
	p     int
	s     *Scheme
	index map[string]int
}

func (ps *schemeParser) peek() token { return ps.toks[ps.p] }

// statement reads "side (-> side)+" up to a ';' or the end: a chain gives
// one step per arrow, each right side the next step's left.
func (ps *schemeParser) statement() error {
	left, err := ps.side()
	if err != nil {
		return err
	}
	if t := ps.peek(); t.kind != tokArrow {
		return &ParseError{t.col, fmt.Sprintf("expected '->', found %s", t.kind)}
	}
	for ps.peek().kind == tokArrow {
		ps.p++
		right, err := ps.side()
		if err != nil {
			return err
		}
		st, err := makeStep(ps.s, left, right)
		if err != nil {
			return err
		}
		ps.s.Steps = append(ps.s.Steps, st)
		left = right
	}
	if t := ps.peek(); t.kind != tokSemi && t.kind != tokEnd {
		return &ParseError{t.col, fmt.Sprintf("expected ';' or end of scheme, found %s %q", t.kind, t.text)}
	}
	return nil
}

// side reads "coef? name (+ coef? name)*"; a species named twice on one
// side ("A + A") is one term with the coefficients summed.
func (ps *schemeParser) side() (side, error) {
	sd := side{col: ps.peek().col}
	for {
		term, err := ps.term()
		if err != nil {
			return sd, err
		}
		merged := false
		for i := range sd.terms {
			if sd.terms[i].Species == term.Species {
				sd.terms[i].Coef += term.Coef
				merged = true
			}
		}
		if !merged {
			sd.terms = append(sd.terms, term)
		}
		if ps.peek().kind != tokPlus {
			return sd, nil
		}
		ps.p++
	}
}

// term reads "coef? name": a positive coefficient, 1 when none is written.
func (ps *schemeParser) term() (Term, error) {
	t := ps.peek()
	coef := 1.0
	if t.kind == tokNumber {
		if !(t.num > 0) {
			return Term{}, &ParseError{t.col, fmt.Sprintf("coefficient %s must be positive", t.text)}
		}
		coef = t.num
		ps.p++
		t = ps.peek()
	}
	if t.kind != tokName {
		return Term{}, &ParseError{t.col, fmt.Sprintf("expected a species name, found %s", t.kind)}
	}
	ps.p++
	return Term{Species: ps.species(t.text), Coef: coef}, nil
}

// species gives the index of a species by name, adding it to the scheme
// at its first appearance.
func (ps *schemeParser) species(name string) int {
	id, ok := ps.index[name]
	if !ok {
		id = len(ps.s.Species)
		ps.index[name] = id
		ps.s.Species = append(ps.s.Species, name)
	}
	return id
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
