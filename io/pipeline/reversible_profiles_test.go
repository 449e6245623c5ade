package pipeline

import (
	"bytes"
	"math"
	"strings"
	"testing"
)

// TestReversibleProfileFitInheritsSum: A -> B, B -> A from [A]0 = 1 has
// [A] = (k2 + k1 e^{−(k1+k2)t})/(k1 + k2) (the reversible first-order
// solution; common practice), so with free spectra the data fix k1 + k2
// alone. Built with k1 = 2e-3, k2 = 1e-3 s⁻¹ (sum 3e-3) as single beams with
// noise constant in counts, the profiles fit printed k(A→B) = 0.003 ±
// 9.3e-07 and k(B→A) = 2.2e-06 ± 1.9e-07 s⁻¹ as determined, with no warning,
// beside the data fit's correct "k1 + k2 only". The profile fit must now
// mark both not determined, give the sum, and the sum must be the true 3e-3
// within 2 % (the profiles' own errors understate the rotational ambiguity,
// so the check is in per cent, not in their standard errors).
func TestReversibleProfileFitInheritsSum(t *testing.T) {
	const k1, k2 = 2e-3, 1e-3
	s := makeBateman(t, 6e-3, 2e-3, 0, 1, 2)
	for i, tm := range s.times {
		x := math.Max(0, tm-60)
		a := (k2 + k1*math.Exp(-(k1+k2)*x)) / (k1 + k2)
		s.profiles.SetRow(i, []float64{a, 1 - a})
	}
	countsNoise(s, 30, 3, nil)
	series, blank := s.write(t)
	set := NewSettings()
	set.Data, set.Kind, set.Blanks, set.Pre = []string{series}, "single-beam", []string{blank}, 3
	set.Model, set.Report, set.Out = "A -> B; B -> A", "off", t.TempDir()+"/out"
	var out bytes.Buffer
	r, err := Execute(set, Streams{Out: &out, Err: &out})
	if err != nil {
		t.Fatal(err)
	}
	kn := r.Kinetics
	var prof, data *KineticFit
	for _, f := range kn.Fits {
		switch {
		case f.Observed != nil:
			prof = f
		case f.Method == "data":
			data = f
		}
	}
	if prof == nil || data == nil {
		t.Fatalf("fits %d: no profile fit or no data fit", len(kn.Fits))
	}
	if determinedSum(data.Fit) != "k1 + k2" {
		t.Fatalf("the data fit determines %q, want k1 + k2 only:\n%s", determinedSum(data.Fit), out.String())
	}
	p := prof.Fit
	t.Logf("profiles k %v ± %v, sum %.5g ± %.2g; data sum %.5g ± %.2g", p.K, p.KStdErr, p.SumK, p.SumKStdErr, data.Fit.SumK, data.Fit.SumKStdErr)
	for j := range 2 {
		if !notDetermined(p, j) || p.KStdErr[j] != 0 {
			t.Errorf("profile fit: k%d = %.4g ± %.3g reported as determined", j+1, p.K[j], p.KStdErr[j])
		}
	}
	if determinedSum(p) != "k1 + k2" || math.Abs(p.SumK/(k1+k2)-1) > 0.02 || !(p.SumKStdErr > 0) {
		t.Errorf("profile fit: sum %q = %.5g ± %.2g, want k1 + k2 = %.5g", determinedSum(p), p.SumK, p.SumKStdErr, k1+k2)
	}
	text := out.String()
	if strings.Contains(text, "profiles      A -> B     k = ") {
		t.Errorf("the terminal gives the profile fit's k1 as determined:\n%s", text)
	}
	if !strings.Contains(text, "kinetics (profiles fit): the data fit finds") {
		t.Errorf("no warning says the profile fit inherits the data fit's verdict:\n%s", text)
	}
}
