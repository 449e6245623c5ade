package pipeline

import (
	"strings"
	"testing"
)

// The fitted-baseline warning's advice must not recommend a known spectrum
// for a species that has one (a user gave --known-spectrum 1=FILE and was
// told to give --known-spectrum); a species without one may still be
// pointed to it, and a zero region is offered in every case.
func TestLiftAdviceDoesNotRecommendWhatWasGiven(t *testing.T) {
	names := []string{"species_1", "species_2"}
	for _, c := range []struct {
		given       []bool
		recommended string // the species a known spectrum is recommended for, "" none, "any" unnamed
	}{
		{nil, "any"},
		{[]bool{true, false}, "species_2"},
		{[]bool{false, true}, "species_1"},
		{[]bool{true, true}, ""},
	} {
		a := liftAdvice(names, c.given)
		if !strings.Contains(a, "--zero-region") {
			t.Errorf("given %v: %q offers no zero region", c.given, a)
		}
		switch c.recommended {
		case "any":
			if !strings.Contains(a, "a known spectrum (--known-spectrum)") {
				t.Errorf("nothing given: %q does not offer a known spectrum", a)
			}
		case "":
			if strings.Contains(a, "a known spectrum") {
				t.Errorf("every spectrum given: %q recommends one again", a)
			}
		default:
			if !strings.Contains(a, "a known spectrum of "+c.recommended+" as well") {
				t.Errorf("given %v: %q, want a known spectrum recommended for %s only", c.given, a, c.recommended)
			}
			for j, g := range c.given {
				if g && strings.Contains(a, "a known spectrum of "+names[j]) {
					t.Errorf("given %v: %q recommends %s's, which was given", c.given, a, names[j])
				}
			}
		}
	}
}
