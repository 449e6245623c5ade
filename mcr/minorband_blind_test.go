package mcr

import (
	"testing"

	"gonum.org/v1/gonum/mat"
)

// A band is where a spectrum reaches a tenth of its largest magnitude (common practice);
// the largest is that of the channels with weight. A channel of weight zero (an opaque
// band, blind in every spectrum) holds what the fit put there, 4 here: taken as the
// largest it would make the measured band of 0.3 at channel 1 "no band" (0.3 < 0.4).
func TestInBandsLeaveOutBlindChannels(t *testing.T) {
	s := mat.NewDense(4, 1, []float64{0.01, 0.3, 4, 0.02})
	col := []float64{1, 1, 0, 1}
	in := inBands(s, col)
	if !in[1] {
		t.Errorf("channel 1 (0.3, the largest measured value) not in a band: %v", in)
	}
	if in[0] || in[3] {
		t.Errorf("channels 0 and 3 (under a tenth of 0.3) in a band: %v", in)
	}
	if all := inBands(s, nil); all[1] || !all[2] {
		t.Errorf("without weights every channel counts: 4 is the largest, and 0.3 is under a tenth of it: %v", all)
	}
}
