package kinetics

import (
	"errors"
	"reflect"
	"testing"
)

func TestParseScheme(t *testing.T) {
	// Expected structures follow from the definition of the notation (chemist's reaction
	// equations with stoichiometric coefficients; a chain is consecutive steps).
	tests := []struct {
		text    string
		species []string
		steps   []string
		orders  []int
		first   bool
	}{
		{"A -> B -> C", []string{"A", "B", "C"}, []string{"A -> B", "B -> C"}, []int{1, 1}, true},
		{"A -> B; A -> C", []string{"A", "B", "C"}, []string{"A -> B", "A -> C"}, []int{1, 1}, true},
		{"A + B -> C", []string{"A", "B", "C"}, []string{"A + B -> C"}, []int{2}, false},
		{"2 A -> B", []string{"A", "B"}, []string{"2 A -> B"}, []int{2}, false},
		{"2A->P", []string{"A", "P"}, []string{"2 A -> P"}, []int{2}, false},
		{"A + A -> P", []string{"A", "P"}, []string{"2 A -> P"}, []int{2}, false},
		{"A -> 2 B", []string{"A", "B"}, []string{"A -> 2 B"}, []int{1}, true},
		{"  X1 → Y' ;; Y' -> Z_2; ", []string{"X1", "Y'", "Z_2"}, []string{"X1 -> Y'", "Y' -> Z_2"}, []int{1, 1}, true},
		{"A -> B; 2 B -> B + C; B + C -> A + C", []string{"A", "B", "C"}, []string{"A -> B", "2 B -> B + C", "B + C -> A + C"}, []int{1, 2, 2}, false},
	}
	for _, tc := range tests {
		s, err := ParseScheme(tc.text)
		if err != nil {
			t.Errorf("%q: %v", tc.text, err)
			continue
		}
		var steps []string
		var orders []int
		for _, st := range s.Steps {
			steps = append(steps, st.Text)
			orders = append(orders, st.Order)
		}
		if !reflect.DeepEqual(s.Species, tc.species) || !reflect.DeepEqual(steps, tc.steps) || !reflect.DeepEqual(orders, tc.orders) {
			t.Errorf("%q: species %v steps %v orders %v; want %v %v %v", tc.text, s.Species, steps, orders, tc.species, tc.steps, tc.orders)
		}
		if s.FirstOrder() != tc.first {
			t.Errorf("%q: FirstOrder = %v", tc.text, s.FirstOrder())
		}
	}
}

func TestStoichiometry(t *testing.T) {
	// Definition: N[i][j] = product − reactant coefficient.
	s, err := ParseScheme("2 A + B -> C; C -> A")
	if err != nil {
		t.Fatal(err)
	}
	want := [][]float64{{-2, 1}, {-1, 0}, {1, -1}}
	if got := s.Stoichiometry(); !reflect.DeepEqual(got, want) {
		t.Errorf("N = %v, want %v", got, want)
	}
}

func TestParseSchemeErrors(t *testing.T) {
	// Columns are 1-based character positions of the offending token (by definition of the API).
	tests := []struct {
		text string
		col  int
	}{
		{"", 1},
		{"A", 2},               // end where '->' was expected
		{"A -> ", 6},           // missing product
		{"A -> B +", 9},        // dangling '+'
		{"A -> B C", 8},        // two names in a row
		{"A -> + B", 6},        // '+' where a name is expected
		{"A - B", 3},           // lone '-'
		{"A <-> B", 3},         // reversible arrow
		{"A = B", 3},           // '=' is not an arrow
		{"0 A -> B", 1},        // zero coefficient
		{"A -> A", 6},          // no change
		{"A -> B; 2 -> C", 11}, // coefficient without a species
		{"A → B; C -> #", 13},  // column counts characters, not bytes
		{"A -> 1.2.3 B", 6},    // malformed number
	}
	for _, tc := range tests {
		_, err := ParseScheme(tc.text)
		var pe *ParseError
		if !errors.As(err, &pe) {
			t.Errorf("%q: error %v, want a *ParseError", tc.text, err)
			continue
		}
		if !errors.Is(err, ErrScheme) {
			t.Errorf("%q: error does not wrap ErrScheme", tc.text)
		}
		if pe.Column != tc.col {
			t.Errorf("%q: column %d (%v), want %d", tc.text, pe.Column, err, tc.col)
		}
	}
}

func FuzzParseScheme(f *testing.F) {
	// Any input gives a scheme or a *ParseError with a column inside the text (+1 for "end"),
	// never a panic; a parsed scheme re-parses from its canonical step texts to the same steps.
	for _, s := range []string{"A -> B -> C", "2 A + B -> C; C -> A", "A →", "1.5 X -> Y'", "-> ->", "A -> B;;", "1000000A->A"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, text string) {
		s, err := ParseScheme(text)
		if err != nil {
			var pe *ParseError
			if !errors.As(err, &pe) || pe.Column < 1 || pe.Column > len([]rune(text))+1 {
				t.Fatalf("%q: %v", text, err)
			}
			return
		}
		var canon string
		for i, st := range s.Steps {
			if i > 0 {
				canon += "; "
			}
			canon += st.Text
		}
		s2, err := ParseScheme(canon)
		if err != nil || len(s2.Steps) != len(s.Steps) {
			t.Fatalf("%q: canonical %q does not re-parse: %v", text, canon, err)
		}
		for i := range s.Steps {
			if s2.Steps[i].Text != s.Steps[i].Text {
				t.Fatalf("%q: step %d %q vs %q", text, i, s2.Steps[i].Text, s.Steps[i].Text)
			}
		}
	})
}
