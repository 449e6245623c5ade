package pipeline

import (
	"math"
	"path/filepath"
	"regexp"
	"strconv"
	"testing"

	"github.com/bandsolve/bandsolve/svd"
)

// runTrimmedUrethane resolves the vendored trim of the real catalyst-1.00 series
// (source as urethaneDir) as a user would: absorbance, times from the file names.
func runTrimmedUrethane(t *testing.T) *Result {
	t.Helper()
	s := NewSettings()
	s.Data, s.Kind, s.TimesFromName = []string{filepath.Join(urethaneDir, "catalyst-1.00")}, "absorbance", true
	s.Bands, s.Checks = "off", "off" // not what is tested here; they only add time
	r, err := Run(s, nil)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// residualWords finds "the N factors before it, C counted as components and X not,
// leave an SVD residual of R × the noise" (or "the N counted component(s) before it
// leave …") in a minor factor's description.
var residualWords = regexp.MustCompile(`the (\d+) (?:factors before it, (\d+) counted as components and (\d+) not,|counted component\(s\) before it) leave an SVD residual of ([0-9.e+-]+) × the noise`)

// A minor factor's description names what its residual figure is the residual of: every
// factor before it, counted or not. On the trimmed urethane series factor 5 comes after
// the 2 components (one reaction, two species in absorbance: the data set's README) and
// two factors set aside; its figure once read "the 2 component(s) before it (without it
// their SVD residual … is 1.23 × the noise)", while those two components leave 1.57 ×.
// The figure must be the residual after N factors by its definition, √(Σ_{j>N} s_j² /
// ((n−N)(m−N) σ²)), here recovered from Malinowski's real error of rank.csv, RE(N) =
// √(Σ_{j>N} s_j² / (r (c−N))) with r, c the larger and smaller dimension (Malinowski,
// Anal. Chem. 1977).
func TestMinorResidualNamesItsFactors(t *testing.T) {
	r := runTrimmedUrethane(t)
	n, m := r.D.Dims()
	rr, c := float64(max(n, m)), float64(min(n, m))
	sigma := r.Chemical.Sigma
	checked := 0
	for _, nf := range r.Chemical.Nuisance {
		if nf.Kind != svd.NuisanceMinor {
			continue
		}
		w := residualWords.FindStringSubmatch(nf.Looks)
		if w == nil {
			t.Errorf("factor %d: no residual named by its factors in %q", nf.Factor, nf.Looks)
			continue
		}
		before, _ := strconv.Atoi(w[1])
		// Definition: the factors before factor f are f − 1.
		if before != nf.Factor-1 {
			t.Errorf("factor %d: the residual is said to be of %d factors, want %d", nf.Factor, before, nf.Factor-1)
		}
		// Counted: the run's count of components (README: 2).
		if w[2] != "" {
			chem, _ := strconv.Atoi(w[2])
			other, _ := strconv.Atoi(w[3])
			if chem != r.Rank.Estimate || chem+other != before {
				t.Errorf("factor %d: %d counted and %d not, want %d counted of %d", nf.Factor, chem, other, r.Rank.Estimate, before)
			}
		}
		got, _ := strconv.ParseFloat(w[4], 64)
		re := r.Rank.Table[before-1].RE
		k := float64(before)
		want := re * math.Sqrt(rr*(c-k)/((float64(n)-k)*(float64(m)-k))) / sigma
		if math.Abs(got-want) > 0.005*want { // %.3g keeps three digits
			t.Errorf("factor %d: residual %g × the noise, want %.4g (from RE(%d) = %g)", nf.Factor, got, want, before, re)
		}
		checked++
	}
	if checked < 2 {
		t.Fatalf("%d minor factors checked, want the 2 the series shows (factors 3 and 5)", checked)
	}
}
