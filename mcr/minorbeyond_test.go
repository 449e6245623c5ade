package mcr

import "testing"

// OwnBandBeyond with nothing set apart asks ownBand's question (its definition):
// the same share, peak and significance. With the minor species' band at 175
// (Gaussian σ 6: 99.99 % of it within 175 ± 24, analytic) set apart as a nuisance's
// lines, what is left outside the bands is recomputed here from ChannelDrop by the
// definitions (share of the whole drop; 5-point mean peak over the largest) and is
// no band of its own.
func TestOwnBandBeyondSetsApartTheNuisanceChannels(t *testing.T) {
	d, col, _ := minorCase(4, 0, 0.017)
	mt := minorRefit(t, d, col)
	none := mt.OwnBandBeyond(make([]bool, len(mt.ChannelDrop)), 0.05)
	if !nearlyEqual(none.Share, mt.OutBandShare(), 1e-12) || none.Peak != mt.OutBandPeak || !nearlyEqual(none.Significance, mt.OutBandSignificance, 1e-9) || none.Own != mt.ownBand(0.05) || none.Channels != mt.OutBandChannels {
		t.Errorf("nothing set apart: %+v; ownBand's figures: share %g peak %g p %g own %v on %d channels", none, mt.OutBandShare(), mt.OutBandPeak, mt.OutBandSignificance, mt.ownBand(0.05), mt.OutBandChannels)
	}
	skip := make([]bool, len(mt.ChannelDrop))
	var drop, top, out float64
	sm := smooth5(mt.ChannelDrop)
	for j := range skip {
		skip[j] = j >= 151 && j <= 199
		top = max(top, sm[j])
		if !skip[j] && !mt.InBand[j] {
			drop += mt.ChannelDrop[j]
			out = max(out, sm[j])
		}
	}
	b := mt.OwnBandBeyond(skip, 0.05)
	if !nearlyEqual(b.Share, drop/mt.Drop(), 1e-12) || !nearlyEqual(b.Peak, out/top, 1e-12) {
		t.Errorf("band set apart: share %g peak %g; by definition %g and %g", b.Share, b.Peak, drop/mt.Drop(), out/top)
	}
	if b.Own {
		t.Errorf("the species' band set apart, a band of its own is still found: %+v", b)
	}
	if !none.Own {
		t.Errorf("nothing set apart, the species' band is not found: %+v", none)
	}
}

func nearlyEqual(a, b, rel float64) bool {
	return abs(a-b) <= rel*max(abs(a), abs(b))
}
