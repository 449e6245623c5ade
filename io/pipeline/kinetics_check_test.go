package pipeline

import "testing"

// TestExchangeCheckCoversReportedOrder: the exchange check compares the
// reported rate constants with the other orders of them, for five steps of
// one order every exchanged pair (docs/kinetics.md, "After the data fit …").
// Started from a fit in a wrong order (the chain's D -> E and E -> F
// exchanged; newChain, 150 × 401, noise constant in counts), the check must
// end at the order the data choose and then have refitted every exchanged
// pair of that order, not only those of the order it started from; a second
// check of a fit at the same constants (the one after hard–soft) then
// finds every refit made and refits nothing.
func TestExchangeCheckCoversReportedOrder(t *testing.T) {
	_, r := runSmallChain(t)
	kn := r.Kinetics
	if kn == nil || kn.Reported() == nil || kn.Reported().Method != "data" {
		t.Fatalf("no data fit reported; warnings %q", r.Warnings)
	}
	rep := kn.Reported().Fit
	wrongStart := append([]float64(nil), rep.K...)
	wrongStart[3], wrongStart[4] = rep.K[4], rep.K[3]
	kn.refits = nil
	o := kn.dataOptions(r, kn.options(wrongStart))
	wrong, spectra, err := kn.fitData(r, o)
	if err != nil {
		t.Fatal(err)
	}
	if sameK(wrong.K, rep.K) {
		t.Fatalf("the fit from the exchanged start went back to k = %v: no wrong order to correct", rep.K)
	}
	var notes []string
	kn.swapCheck(r, wrong, spectra, o, &notes)
	if !closeStart(wrong.K, rep.K, rep.KStdErr) {
		t.Fatalf("the check ended at k = %v, the run reported %v", wrong.K, rep.K)
	}
	alts := kn.exchanges(wrong.K)
	if len(alts) != 10 {
		t.Fatalf("%d exchanges of five first-order steps, want 10 pairs", len(alts))
	}
	for _, a := range alts {
		found := false
		for _, m := range kn.refits {
			found = found || closeStart(m.start, a, wrong.KStdErr)
		}
		if !found {
			t.Errorf("the exchanged start %.4g of the corrected k = %.4g was not refitted", a, wrong.K)
		}
	}
	made := len(kn.refits)
	again, spectra2, err := kn.fitData(r, kn.dataOptions(r, kn.options(wrong.K)))
	if err != nil {
		t.Fatal(err)
	}
	kn.swapCheck(r, again, spectra2, o, &notes)
	t.Logf("%d refits by the first check, %d by the second", made, len(kn.refits)-made)
	if len(kn.refits) != made {
		t.Errorf("the second check refitted %d exchanged starts the first had refitted", len(kn.refits)-made)
	}
}
