package pipeline

import (
	"io"
	"testing"
)

// Two experiments of A → B → C (Bateman 1910), the second with 1.6 times the
// path, stacked as difference spectra, each against its own first spectrum:
// two reactions in each, so two in the stack (scaling the path scales the
// reaction spectra, adding no rank). Each experiment's reference spectrum
// leaves its own noise, one fixed pattern white along the axis in every
// difference spectrum of its experiment (common practice); the rank test
// names only one reference row, and the second pattern was counted as a
// third reaction. A factor not white in time but white along the axis, where
// a reaction's spectrum has bands some points wide, is noise (svd
// factorClassifier.whiteSpectrum).
func TestStackedDifferenceExperimentsKeepTheirReactions(t *testing.T) {
	var files []string
	for q, path := range []float64{1, 1.6} {
		s := makeBateman(t, 6e-3, 2e-3, 0, uint64(11+q), 3)
		s.spectra.Scale(path, s.spectra)
		countsNoise(s, 40, uint64(21+q), nil)
		series, _ := s.write(t)
		files = append(files, series)
	}
	st := NewSettings()
	st.Data, st.Kind, st.Pre = files, "single-beam", 3
	st.Report, st.Checks, st.Bands = "off", "off", "off"
	r, err := Run(st, io.Discard)
	if err != nil {
		t.Fatal(err)
	}
	if r.Components != 2 {
		t.Errorf("%d reactions in the stack, want the 2 the data were made with (%s)", r.Components, r.Rank.Reason)
	}
}
