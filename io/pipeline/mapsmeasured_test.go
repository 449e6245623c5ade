package pipeline

import (
	"math"
	"testing"
)

// maps.csv's "data" rows say the data: with a fitted baseline they must be the
// absorbance as measured, A = −log10(I/I_blank) (Beer–Lambert absorbance from
// the written single beams, common practice), not that less the baseline the
// resolution took off in place. The drifting A → B series (Bateman 1910, an
// offset and a slope per spectrum growing to 0.05) makes the two differ.
func TestMapsDataAreTheMeasuredAbsorbance(t *testing.T) {
	s := driftingBateman(t, 2)
	series, blank := s.write(t)
	st := NewSettings()
	st.Data, st.Kind, st.Blanks, st.Pre = []string{series}, "single-beam", []string{blank}, 3
	st.Bands, st.Checks = "off", "off"
	r, err := Run(st, nil)
	if err != nil {
		t.Fatal(err)
	}
	if r.BaselineProfiles == nil {
		t.Fatal("no baseline fitted: the case needs one")
	}
	at := measuredAt(r)
	n, m := r.D.Dims()
	worstMeasured, worstLess := 0.0, 0.0
	for i := 0; i < n; i += 7 {
		for j := 0; j < m; j += 5 {
			a := -math.Log10(s.beams.At(i, j) / s.blank[j])
			worstMeasured = math.Max(worstMeasured, math.Abs(at(i, j)-a))
			worstLess = math.Max(worstLess, math.Abs(r.D.At(i, j)-a))
		}
	}
	t.Logf("largest difference from −log10(I/I_blank): shown %.3g, less the baseline %.3g", worstMeasured, worstLess)
	if worstMeasured > 1e-8 || !(worstLess > 1e-3) {
		t.Errorf("the data shown differ from the measured absorbance by up to %.3g (less the baseline: %.3g)", worstMeasured, worstLess)
	}
}
