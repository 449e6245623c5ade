package pipeline

import (
	"regexp"
	"strings"
	"testing"
)

// On the demo (A -> B -> C, free spectra) the exchanged rate constants give
// model columns spanning the same space, span{1, e^(−k1 t), e^(−k2 t)}
// (Bateman solution), so variable projection (Golub & Pereyra 1973) leaves
// the same residual: the difference in noise variances is zero, and a
// figure like "-7.6e-11 noise variances" is rounding that reads as a
// negative variance. It must be said as 0.
func TestExchangedOrderTieSaidAsZero(t *testing.T) {
	_, r := demoSpecies(t)
	text := strings.Join(append(append([]string(nil), r.Notes...), r.Warnings...), "\n")
	if !strings.Contains(text, "noise variances with free spectra") {
		t.Fatalf("the demo has no note on the exchanged order:\n%s", text)
	}
	if m := regexp.MustCompile(`-?[0-9.]+e-[0-9]+ noise variances`).FindString(text); m != "" {
		t.Errorf("a rounding-level difference is printed as %q:\n%s", m, text)
	}
	if !strings.Contains(text, ": 0 noise variances with free spectra") {
		t.Errorf("the tie is not said as 0 noise variances:\n%s", text)
	}
}
